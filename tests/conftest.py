"""Shared test settings. Hypothesis keeps its example database out of the work tree.

Nothing here needs Django (the engine's tests run without it); the autouse fixtures of the Django tests are in
tests/django_isolation.py, imported by tests/web/conftest.py and tests/browser/conftest.py."""

import os

import pytest
from hypothesis import settings

settings.register_profile("earshot", database=None, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "earshot"))


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
