"""One throttle for every password check, kept by django-axes in the database.

Every check of a password goes through django.contrib.auth.authenticate() with the request: the log-in page,
the admin's log-in, the password a signature needs (signoff.services.revision_sign) and the old password on
the password-change form (below). Axes' backend, first in AUTHENTICATION_BACKENDS, refuses a check for a
locked (user name, address) pair before any password is hashed; its signal handler counts each failure in
the AccessAttempt table, where no flood of other names can push a count out (a cache drops entries when it
is full). LOGIN_THROTTLE_FAILURES failures lock the pair for LOGIN_THROTTLE_WINDOW_SECONDS from the
failure that reached the limit (settings maps them onto AXES_FAILURE_LIMIT / AXES_COOLOFF_TIME); a
successful log-in clears the count. User names are compared case-folded.

Known limit: axes counts a failure after the password was checked, so guesses already in flight when the
limit is reached are still answered: at most one more per request the server handles at once (4 sync
workers: 3). The old throttle counted first; that race is small beside a count a flood could erase.

Behind a proxy every request comes from the proxy's address and the lock becomes one per user name.
"""

import ipaddress
import math

from django.conf import settings
from django.contrib.auth import authenticate
from django.contrib.auth.forms import PasswordChangeForm
from django.contrib.auth.views import PasswordChangeView
from django.core.exceptions import ValidationError
from django.shortcuts import render
from django.utils import timezone

USERNAME_MAX_LENGTH = 255  # axes' AccessAttempt.username column


def throttle_username(request, credentials) -> str | None:
    """The name a failure is counted under (AXES_USERNAME_CALLABLE): case-folded, so AUTHOR and author share
    one count, and cut to the column's length."""
    source = credentials if credentials else getattr(request, "POST", {})
    name = source.get(settings.AXES_USERNAME_FORM_FIELD) if source else None
    if not isinstance(name, str):
        return None
    return name.casefold().replace("\x00", "")[:USERNAME_MAX_LENGTH]


def client_address(request) -> str | None:
    """The address a failure is counted under (AXES_CLIENT_IP_CALLABLE): the connection's own. X-Forwarded-For
    is whatever a client sends unless a proxy sets it, and a server on a Unix socket has no address (None:
    the database column takes IP addresses only)."""
    address = request.META.get("REMOTE_ADDR", "")
    try:
        return str(ipaddress.ip_address(address))
    except ValueError:
        return None


def password_is_right(request, user, password: str) -> bool:
    """Whether `password` is the signed-in person's own, checked through authenticate() so a wrong one counts
    towards the lock and a locked person gets no answer. An older hash is upgraded on the way."""
    checked = authenticate(request, username=user.get_username(), password=password)
    return checked is not None and checked.pk == user.pk


def is_locked_out(request) -> bool:
    return bool(getattr(request, "axes_locked_out", False))


def _wait_seconds(request, credentials) -> int:
    """Seconds until this (user name, address) may try again, from the failure that started the lock."""
    from axes.handlers.proxy import AxesProxyHandler

    cool_off = settings.AXES_COOLOFF_TIME
    latest = None
    for attempts in AxesProxyHandler.get_implementation().get_user_attempts(request, credentials):
        for attempt_time in attempts.values_list("attempt_time", flat=True):
            latest = attempt_time if latest is None else max(latest, attempt_time)
    if latest is None:
        return int(cool_off.total_seconds())
    return max(1, math.ceil((latest + cool_off - timezone.now()).total_seconds()))


def locked_out(request, original_response=None, credentials=None):
    """Axes' lockout answer (AXES_LOCKOUT_CALLABLE): Earshot's own page, 429, saying how long to wait."""
    minutes = max(1, math.ceil(_wait_seconds(request, credentials) / 60))
    username = throttle_username(request, credentials) or ""
    return render(request, "registration/locked_out.html", {
        "username": username, "minutes": minutes, "failures": settings.LOGIN_THROTTLE_FAILURES,
    }, status=429)


class CheckedPasswordChangeForm(PasswordChangeForm):
    """Django's password-change form, with the old password checked through authenticate()."""

    def __init__(self, user, *args, request, **kwargs):
        self.request = request
        super().__init__(user, *args, **kwargs)

    def clean_old_password(self):
        old_password = self.cleaned_data["old_password"]
        if not password_is_right(self.request, self.user, old_password):
            raise ValidationError(self.error_messages["password_incorrect"], code="password_incorrect")
        return old_password


class CheckedPasswordChangeView(PasswordChangeView):
    form_class = CheckedPasswordChangeForm

    def get_form_kwargs(self):
        return {**super().get_form_kwargs(), "request": self.request}
