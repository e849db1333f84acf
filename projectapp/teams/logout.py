"""Logging out: a link in every page's header leads here; GET asks, POST ends the session.

Django's LogoutView takes POST only (a link must not log anyone out). Putting the log-out form on every page
made every page carry a CSRF token, set the CSRF cookie and be masked afresh for each reader; pages that
change nothing now carry no token at all, and this page holds the one form.
"""

from django.contrib.auth.views import LogoutView
from django.template.response import TemplateResponse


class LogOutView(LogoutView):
    http_method_names = ["get", "post", "options"]

    def get(self, request, *args, **kwargs):
        return TemplateResponse(request, "registration/log_out.html")
