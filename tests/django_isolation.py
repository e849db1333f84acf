"""Autouse fixtures for the tests that run Django (tests/web, tests/browser): their conftests import these.

They live here rather than in tests/conftest.py so that the engine's tests (tests/rules) run without Django:
`pytest tests/rules -p no:django`.
"""

import pytest


@pytest.fixture(autouse=True)
def fast_password_hashing(settings):
    """Real hashing (Argon2) is deliberately slow; tests log people in hundreds of times."""
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
