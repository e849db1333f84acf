"""Shared test settings. Hypothesis keeps its example database out of the work tree."""

import os

import pytest
from hypothesis import settings

settings.register_profile("earshot", database=None, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "earshot"))


@pytest.fixture(autouse=True)
def fast_password_hashing(settings):
    """Real hashing is deliberately slow; tests log people in hundreds of times."""
    settings.PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]


@pytest.fixture(autouse=True)
def media_in_tmp(settings, tmp_path):
    """Uploaded and archived files go to a fresh folder per test, never into the work tree."""
    settings.MEDIA_ROOT = tmp_path / "media"


@pytest.fixture(autouse=True)
def empty_cache():
    """Each test starts with an empty cache and no fragments kept in memory (keys name revisions by id)."""
    from django.core.cache import cache

    from projectapp.fragments import LOCAL

    cache.clear()
    LOCAL.clear()
    yield
    cache.clear()
    LOCAL.clear()


# -- people of the demo team's shape, for tests/web and tests/browser: each of those defines `team` (on a
# plain or a transactional database), and these people join it.
@pytest.fixture
def author(team):
    from projectapp.teams.models import Role
    from tests.web.conftest import make_user

    return make_user("author", team, Role.AUTHOR)


@pytest.fixture
def reviewer(team):
    from projectapp.teams.models import Role
    from tests.web.conftest import make_user

    return make_user("reviewer", team, Role.REVIEWER)
