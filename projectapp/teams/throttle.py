"""Log-in throttling: after LOGIN_THROTTLE_FAILURES failed log-ins for one user name from one address
within LOGIN_THROTTLE_WINDOW_SECONDS, further attempts are refused (HTTP 429) until the window ends,
without checking the password, so guessing can't go on at the speed of the server.

Counters live in Django's cache (settings.CACHES; shared by every server process unless the cache is
per process, see EARSHOT_CACHE). An attempt is counted before the password is checked and the count is
cleared by a successful log-in, so parallel guesses can't all slip in while the first is being checked.
The window is fixed: it starts at the first failure and does not grow with later ones.

Behind a proxy every request comes from the proxy's address, and the limit becomes one per user name.
"""

import hashlib
import math
import time
from dataclasses import dataclass

from django.conf import settings
from django.contrib.auth.forms import AuthenticationForm
from django.contrib.auth.views import LoginView
from django.core.cache import cache
from django.core.exceptions import NON_FIELD_ERRORS, ValidationError

THROTTLED = "throttled"


@dataclass(frozen=True)
class LoginThrottle:
    """The failure counter of one (user name, client address) pair."""

    username: str
    address: str

    @classmethod
    def for_request(cls, request, username: str) -> "LoginThrottle":
        return cls(username=username, address=request.META.get("REMOTE_ADDR", ""))

    @property
    def key(self) -> str:
        digest = hashlib.sha256(f"{self.username.casefold()}\x00{self.address}".encode()).hexdigest()
        return f"earshot:login-failures:{digest}"

    @property
    def limit(self) -> int:
        return settings.LOGIN_THROTTLE_FAILURES

    @property
    def window(self) -> int:
        return settings.LOGIN_THROTTLE_WINDOW_SECONDS

    def _state(self, now: float) -> tuple[float, int]:
        """(when the window started, attempts counted in it); a window that has ended counts nothing."""
        stored = cache.get(self.key)
        if not stored:
            return now, 0
        started, count = stored
        if now - started >= self.window:
            return now, 0
        return started, count

    def wait_seconds(self, now: float | None = None) -> int:
        """Seconds until attempts are allowed again; 0 when they are allowed now."""
        now = time.time() if now is None else now
        started, count = self._state(now)
        if count < self.limit:
            return 0
        return max(1, math.ceil(started + self.window - now))

    def count_attempt(self, now: float | None = None) -> int:
        """Counts an attempt (cleared again if it succeeds); returns the count in the window."""
        now = time.time() if now is None else now
        started, count = self._state(now)
        count += 1
        cache.set(self.key, (started, count), timeout=max(1, math.ceil(started + self.window - now)))
        return count

    def clear(self) -> None:
        cache.delete(self.key)


def throttled_message(wait_seconds: int) -> str:
    minutes = max(1, math.ceil(wait_seconds / 60))
    return (f"Too many failed log-ins; wait {minutes} minute{'s' if minutes != 1 else ''} and try again, "
            "or ask a team administrator to reset your password.")


class ThrottledAuthenticationForm(AuthenticationForm):
    """Django's log-in form, refusing an attempt over the limit before the password is checked."""

    error_messages = {**AuthenticationForm.error_messages, THROTTLED: "%(message)s"}

    def clean(self):
        username = self.cleaned_data.get("username")
        if username is None or not self.cleaned_data.get("password"):
            return super().clean()  # a field is missing: nothing is checked, nothing counted
        throttle = LoginThrottle.for_request(self.request, username)
        wait = throttle.wait_seconds()
        if wait:
            raise ValidationError(self.error_messages[THROTTLED], code=THROTTLED,
                                  params={"message": throttled_message(wait)})
        throttle.count_attempt()
        cleaned = super().clean()
        throttle.clear()  # reached only when the user name and password are right and the account active
        return cleaned


class ThrottledLoginView(LoginView):
    authentication_form = ThrottledAuthenticationForm

    def form_invalid(self, form):
        response = super().form_invalid(form)
        if form.has_error(NON_FIELD_ERRORS, code=THROTTLED):
            response.status_code = 429
        return response
