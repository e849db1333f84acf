"""Every password check goes through one throttle (django-axes, stored in the database): the log-in page, the
admin's log-in, the password a signature needs and the old password on the password-change form. Five wrong
passwords for one user name from one address lock all four for LOGIN_THROTTLE_WINDOW_SECONDS; the lock page
says how long. Passwords hash with Argon2, and older hashes are upgraded when the person next logs in."""

import datetime
import secrets

import pytest
from django.contrib.auth import get_user_model
from django.contrib.auth.hashers import PBKDF2PasswordHasher
from django.test import Client
from django.urls import reverse

from projectapp.reviews.services import revision_submit
from tests.web.conftest import PASSWORD
from tests.web.test_signoff import settle

WRONG = "not-the-password"
LIMIT = 5  # settings.LOGIN_THROTTLE_FAILURES, the README's default


def _log_in(client, username: str, password: str, address: str = "127.0.0.1", **extra):
    return client.post(reverse("login"), {"username": username, "password": password}, REMOTE_ADDR=address,
                       **extra)


def _admin_log_in(client, username: str, password: str):
    return client.post(reverse("admin:login"), {"username": username, "password": password,
                                                "next": "/admin/"})


def _is_locked_page(response) -> bool:
    text = response.content.decode()
    return response.status_code == 429 and "wrong passwords for" in text and "Traceback" not in text


def _said(response) -> str:
    return " ".join(response.content.decode().split())


def _rewind_lock(seconds: float) -> None:
    """As if the failures counted so far happened `seconds` earlier (the throttle keeps them in the database)."""
    from axes.models import AccessAttempt

    for attempt in AccessAttempt.objects.all():
        AccessAttempt.objects.filter(pk=attempt.pk).update(
            attempt_time=attempt.attempt_time - datetime.timedelta(seconds=seconds))


@pytest.fixture
def admin_user(db):
    return get_user_model().objects.create_superuser("root", "root@example.invalid", PASSWORD)


# -- the log-in page -----------------------------------------------------------------------------------------
def test_five_wrong_passwords_lock_the_user_name_for_fifteen_minutes(client, author):
    for _ in range(LIMIT - 1):
        response = _log_in(client, "author", WRONG)
        assert response.status_code == 200
        assert "correct username and password" in response.content.decode()
    assert _is_locked_page(_log_in(client, "author", WRONG))  # the fifth
    locked = _log_in(client, "author", PASSWORD)  # even the right password, while locked
    assert _is_locked_page(locked)
    assert "Wait 15 minutes and try again" in _said(locked)
    assert "_auth_user_id" not in client.session

    _rewind_lock(14 * 60 + 1)
    assert "Wait 1 minute and try again" in _said(_log_in(client, "author", PASSWORD))
    _rewind_lock(60)  # the window has ended
    response = _log_in(client, "author", PASSWORD)
    assert response.status_code == 302
    assert client.session["_auth_user_id"] == str(author.pk)
    # axes only refuses; the person is signed in by (and read back through) the cached backend
    assert client.session["_auth_user_backend"] == "projectapp.teams.backends.CachedUserBackend"
    assert client.get(reverse("product_list")).status_code == 200


def test_the_lock_is_per_user_name_and_address(client, author, reviewer):
    for _ in range(LIMIT):
        _log_in(client, "author", WRONG, address="192.0.2.10")
    assert _is_locked_page(_log_in(client, "author", PASSWORD, address="192.0.2.10"))
    assert _is_locked_page(_log_in(client, "AUTHOR", PASSWORD, address="192.0.2.10"))  # case folded
    assert _log_in(Client(), "reviewer", PASSWORD, address="192.0.2.10").status_code == 302
    assert _log_in(Client(), "author", PASSWORD, address="198.51.100.7").status_code == 302


def test_a_forwarded_for_header_does_not_give_a_fresh_count(client, author):
    """Without a proxy that sets it, X-Forwarded-For is whatever the client sends."""
    for index in range(LIMIT):
        _log_in(client, "author", WRONG, HTTP_X_FORWARDED_FOR=f"203.0.113.{index}")
    assert _is_locked_page(_log_in(client, "author", PASSWORD, HTTP_X_FORWARDED_FOR="203.0.113.99"))


def test_a_server_without_a_client_address_still_counts_per_user_name(client, author):
    """Behind a proxy on a Unix socket REMOTE_ADDR is empty; the count is then per user name."""
    for _ in range(LIMIT):
        assert _log_in(client, "author", WRONG, address="").status_code in (200, 429)
    assert _is_locked_page(_log_in(client, "author", PASSWORD, address=""))


def test_a_successful_log_in_clears_the_count(client, author):
    for _ in range(LIMIT - 1):
        _log_in(client, "author", WRONG)
    assert _log_in(client, "author", PASSWORD).status_code == 302
    client.logout()
    for _ in range(LIMIT - 1):
        assert _log_in(client, "author", WRONG).status_code == 200
    assert _log_in(client, "author", PASSWORD).status_code == 302


def test_an_incomplete_form_is_not_counted(client, author):
    for _ in range(LIMIT + 3):
        assert client.post(reverse("login"), {"username": "author"}).status_code == 200
    assert _log_in(client, "author", PASSWORD).status_code == 302


def test_a_flood_of_failures_under_random_names_does_not_clear_a_lock(client, author, settings):
    """A cache drops entries when it is full; the throttle must not live where a flood can push it out."""
    settings.CACHES = {"default": {"BACKEND": "django.core.cache.backends.locmem.LocMemCache",
                                   "LOCATION": "flood", "OPTIONS": {"MAX_ENTRIES": 20}}}
    for _ in range(LIMIT):
        _log_in(client, "author", WRONG)
    for _ in range(60):
        _log_in(Client(), "x" + secrets.token_hex(6), WRONG)
    assert _is_locked_page(_log_in(client, "author", PASSWORD))


def test_the_lock_page_is_earshots_own_page(client, author):
    for _ in range(LIMIT):
        response = _log_in(client, "author", WRONG)
    text = response.content.decode()
    assert "<title>Locked for now · Earshot</title>" in text
    assert "wrong passwords for <strong>author</strong>" in text and "Wait 15 minutes" in _said(response)
    assert response.headers["Content-Security-Policy"]


# -- the admin's log-in --------------------------------------------------------------------------------------
def test_wrong_admin_passwords_lock_the_admin_log_in(client, admin_user):
    for _ in range(20):
        _admin_log_in(client, "root", WRONG)
    response = _admin_log_in(client, "root", PASSWORD)
    assert _is_locked_page(response)
    assert "_auth_user_id" not in client.session
    assert client.get("/admin/").status_code == 302


def test_wrong_admin_passwords_count_for_the_sites_log_in_too(client, admin_user):
    for _ in range(LIMIT):
        _admin_log_in(client, "root", WRONG)
    assert _is_locked_page(_log_in(Client(), "root", PASSWORD))


# -- signing -------------------------------------------------------------------------------------------------
@pytest.fixture
def ready_revision(product, author, reviewer, approver):
    revision = revision_submit(revision=product.draft, user=author)
    settle(revision, reviewer, approver)
    return revision


def test_wrong_signing_passwords_are_throttled_like_log_ins(client, ready_revision, author):
    url = reverse("signoff_sign", args=[ready_revision.product_id, ready_revision.number])
    client.force_login(author)
    for _ in range(LIMIT - 1):
        assert client.post(url, {"role": "author", "password": WRONG}).status_code == 302
    assert _is_locked_page(client.post(url, {"role": "author", "password": WRONG}))
    assert _is_locked_page(client.post(url, {"role": "author", "password": PASSWORD}))
    assert ready_revision.signatures.count() == 0
    assert _is_locked_page(_log_in(Client(), "author", PASSWORD))  # one throttle for every password check


def test_a_signature_with_the_right_password_still_works(client, ready_revision, author):
    url = reverse("signoff_sign", args=[ready_revision.product_id, ready_revision.number])
    client.force_login(author)
    client.post(url, {"role": "author", "password": WRONG})
    assert client.post(url, {"role": "author", "password": PASSWORD}).status_code == 302
    assert list(ready_revision.signatures.values_list("role", flat=True)) == ["author"]


# -- changing the password -----------------------------------------------------------------------------------
def _change_password(client, old: str, new: str = "a-new-pass-4Rt!x"):
    return client.post(reverse("password_change"), {"old_password": old, "new_password1": new,
                                                    "new_password2": new})


def test_wrong_old_passwords_on_the_password_change_form_are_throttled(client, author):
    client.force_login(author)
    for _ in range(LIMIT - 1):
        response = _change_password(client, WRONG)
        assert response.status_code == 200 and "old password was entered incorrectly" in response.content.decode()
    assert _is_locked_page(_change_password(client, WRONG))
    assert _is_locked_page(_change_password(client, PASSWORD))
    author.refresh_from_db()
    assert author.check_password(PASSWORD)


def test_the_password_change_form_still_changes_the_password(client, author):
    client.force_login(author)
    response = _change_password(client, PASSWORD)
    assert response.status_code == 302 and response["Location"] == reverse("password_change_done")
    author.refresh_from_db()
    assert author.check_password("a-new-pass-4Rt!x")


# -- hashing ---------------------------------------------------------------------------------------------------
def test_argon2_hashes_new_passwords_and_older_hashers_stay_readable():
    import projectapp.settings as configured

    assert configured.PASSWORD_HASHERS[0] == "django.contrib.auth.hashers.Argon2PasswordHasher"
    assert "django.contrib.auth.hashers.PBKDF2PasswordHasher" in configured.PASSWORD_HASHERS


def test_an_older_hash_is_upgraded_to_argon2_at_log_in(client, author, settings):
    settings.PASSWORD_HASHERS = ["django.contrib.auth.hashers.Argon2PasswordHasher",
                                 "django.contrib.auth.hashers.PBKDF2PasswordHasher"]
    hasher = PBKDF2PasswordHasher()
    # A PBKDF2 hash as an earlier Earshot stored it (fewer iterations here, to keep the test quick).
    author.password = hasher.encode(PASSWORD, hasher.salt(), iterations=1000)
    author.save()
    assert _log_in(client, "author", PASSWORD).status_code == 302
    author.refresh_from_db()
    assert author.password.startswith("argon2$argon2id$")
    client.logout()
    assert _log_in(client, "author", PASSWORD).status_code == 302
