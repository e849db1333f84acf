"""The header's unread count, for every page: counted only when a page shows it (lazily), one indexed query."""

from django.utils.functional import SimpleLazyObject
from django.utils.html import format_html

from projectapp.notices.services import unread_count


def unread_notices(get_response):
    def middleware(request):
        def badge() -> str:
            user = getattr(request, "user", None)
            if user is None or not user.is_authenticated:
                return ""
            count = unread_count(user)
            return format_html('<span class="unread" aria-label="{} unread">{}</span>', count, count) if count else ""
        request.unread_notices = SimpleLazyObject(badge)
        return get_response(request)
    return middleware
