"""Rendered pages and fragments kept in the cache, for pages many people open and few change.

A revision's checklist page is the same HTML for everyone in the team until something it shows changes, and
drawing it (findings, evidence tables, the placement drawing, charts, coverage) costs far more than serving
it. So such a page is rendered once into the cache and served from there, with the few things that belong to
the reader put in as it goes out.

Two rules keep that safe:

- A page is rendered *without the request*. Where it would show something of the reader's it gets a marker
  instead: their CSRF token, their name, their flash messages, the response's CSP nonce; `page()` and
  `personal()` fill the markers for each reader. A marker begins with "<", which the template engine
  escapes in every value it puts in, so no text typed by anyone can forge one.
- A key names everything the page shows and the code that drew it, so any change makes a new key and an
  out-of-date page is never read again; it just ages out of the cache. The caller passes the objects the page
  shows: an object with a `cache_identity` (a revision: its id, state and version, designs.models; a product:
  its name and description; a revision's facts) is named by it, anything else by its repr (the reader's
  role...). `code_stamp()` names the code: a digest of the templates, the Python that fills them, and the
  static files the pages link (a stylesheet-only deploy starts afresh too, since a cached page names the
  stylesheet's hashed file).

Because a key's content never changes, each server process also keeps the pages it served last in its own
memory (`LOCAL`, bounded), in front of the shared cache: a popular page then costs neither a file read nor
decompression.
"""

import hashlib
import re
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from functools import cache as once
from typing import Any

from django.conf import settings
from django.contrib.messages import get_messages
from django.contrib.staticfiles import finders
from django.contrib.staticfiles.storage import ManifestFilesMixin, staticfiles_storage
from django.core.cache import cache
from django.http import HttpResponse
from django.middleware.csp import get_nonce
from django.middleware.csrf import get_token
from django.template.loader import render_to_string
from django.utils.html import escape
from django.utils.safestring import SafeString, mark_safe

# A context holding this key, true, is rendered but not kept: the page shows something that failed (a design
# that could not be checked, a figure that could not be drawn), which the next look should try again.
NOT_KEPT = "fragments_not_kept"
CSRF_MARK = mark_safe("<!--earshot:csrf-->")
NAME_MARK = mark_safe("<!--earshot:reader-->")
FLASH_MARK = mark_safe("<!--earshot:flash-->")
NONCE_MARK = mark_safe("<!--earshot:nonce-->")
UNREAD_MARK = mark_safe("<!--earshot:unread-->")  # the header's unread count (request.unread_notices, notices app)
_CSRF, _NAME, _FLASH, _NONCE, _UNREAD = (mark.encode()
                                        for mark in (CSRF_MARK, NAME_MARK, FLASH_MARK, NONCE_MARK, UNREAD_MARK))
_MARKS = re.compile(b"(" + b"|".join(re.escape(mark) for mark in (_CSRF, _NAME, _FLASH, _NONCE, _UNREAD)) + b")")
_STAMPED = (".py", ".html", ".csv", ".toml", ".json")
DAY = 24 * 3600


class _Reader:
    """Stands in for request.user while a shared page is rendered: signed in, named by a marker."""

    is_authenticated = True
    is_anonymous = False
    username = NAME_MARK

    def get_full_name(self) -> str:
        return NAME_MARK


class LocalCopies:
    """The most recently used pages of this process (as pieces), up to `max_bytes` in all."""

    def __init__(self, max_bytes: int):
        self.max_bytes = max_bytes
        self._items: OrderedDict[str, tuple[bytes, ...]] = OrderedDict()
        self._bytes = 0
        self._lock = threading.Lock()  # gthread workers serve several requests at once

    def get(self, key: str) -> tuple[bytes, ...] | None:
        with self._lock:
            pieces = self._items.get(key)
            if pieces is not None:
                self._items.move_to_end(key)
            return pieces

    def put(self, key: str, pieces: tuple[bytes, ...]) -> None:
        size = sum(map(len, pieces))
        if size > self.max_bytes // 4:
            return
        with self._lock:
            if key in self._items:
                return
            self._items[key] = pieces
            self._bytes += size
            while self._bytes > self.max_bytes:
                _, dropped = self._items.popitem(last=False)
                self._bytes -= sum(map(len, dropped))

    def clear(self) -> None:
        with self._lock:
            self._items.clear()
            self._bytes = 0


LOCAL = LocalCopies(max_bytes=64_000_000)


@once
def code_stamp() -> str:
    """A digest of the templates, the code and the static files that render pages: a deployment of any of them
    starts afresh."""
    base = settings.BASE_DIR
    digest = hashlib.sha256()
    for folder in ("templates", "projectapp", "rules"):
        for path in sorted((base / folder).rglob("*")):
            if path.suffix in _STAMPED and path.is_file() and "__pycache__" not in path.parts:
                digest.update(path.relative_to(base).as_posix().encode())
                digest.update(path.read_bytes())
    _stamp_static(digest)
    return digest.hexdigest()[:16]


def _stamp_static(digest) -> None:
    """The static files as pages link them. With hashed names (production: a manifest storage), the manifest
    names every file by its content's hash, so it is the whole story; otherwise every file the finders serve,
    by name and content (a page links the plain name then, but the stamp still follows the file)."""
    storage = staticfiles_storage
    if isinstance(storage, ManifestFilesMixin):
        manifest = storage.read_manifest()
        if manifest:
            digest.update(b"static-manifest\x00" + manifest.encode())
            return
    found: dict[str, tuple] = {}
    for finder in finders.get_finders():
        for name, source in finder.list([]):
            found.setdefault(name.replace("\\", "/"), (source, name))  # the first finder wins, as in serving
    for name in sorted(found):
        source, stored = found[name]
        digest.update(b"static\x00" + name.encode() + b"\x00")
        with source.open(stored) as handle:
            digest.update(handle.read())


def _part(part: Any) -> Any:
    identity = getattr(part, "cache_identity", None)
    return identity if isinstance(identity, str) else part


def cache_key(kind: str, *parts: Hashable) -> str:
    """A short key for `parts` under the current code: an object with a `cache_identity` is named by it,
    anything else by its repr (which must be stable)."""
    text = repr((code_stamp(), kind, *map(_part, parts))).encode()
    return f"earshot:{kind}:{hashlib.sha256(text).hexdigest()[:40]}"


Pieces = tuple[bytes, ...]  # a rendered page cut at its markers: text, marker, text, marker, ..., text


def shared(template: str, key_parts: tuple[Hashable, ...], context: Callable[[], dict[str, Any]],
           timeout: int | None = 7 * DAY) -> Pieces:
    """The template rendered with `context()` (called only when no copy is kept), as UTF-8 cut at the
    reader's markers: serving it is then one join, with no encoding and no searching."""
    if settings.DEBUG:  # a developer editing a template sees the edit at once (the code stamp is per process)
        return _render(template, context())
    key = cache_key(f"shared:{template}", *key_parts)
    pieces = LOCAL.get(key)
    if pieces is None:
        pieces = cache.get(key)
        if pieces is None:
            values = context()
            pieces = _render(template, values)
            if values.get(NOT_KEPT):  # it shows a failure: the next reader gets a fresh try
                return pieces
            cache.set(key, pieces, timeout)
        LOCAL.put(key, pieces)
    return pieces


def _render(template: str, context: dict[str, Any]) -> Pieces:
    html = render_to_string(template, {**context, "csrf_token": CSRF_MARK, "user": _Reader(),
                                       "flash_slot": FLASH_MARK, "csp_nonce": NONCE_MARK, "unread_slot": UNREAD_MARK})
    return tuple(_MARKS.split(html.encode()))


def _personal_bytes(pieces: Pieces, request) -> bytes:
    values: dict[bytes, bytes] = {}
    for mark in set(pieces[1::2]):
        if mark == _NONCE:
            nonce = get_nonce(request)  # None without the CSP middleware: an empty attribute then
            values[mark] = b"" if nonce is None else str(nonce).encode()
        elif mark == _CSRF:
            values[mark] = get_token(request).encode()
        elif mark == _NAME:
            values[mark] = escape(request.user.get_full_name() or request.user.username).encode()
        elif mark == _UNREAD:
            values[mark] = str(getattr(request, "unread_notices", "")).encode()  # markup the middleware escaped
        elif mark == _FLASH:
            messages = get_messages(request)
            values[mark] = render_to_string("_flash.html", {"messages": messages}).encode() if messages else b""
    return b"".join(values[piece] if index % 2 else piece for index, piece in enumerate(pieces))


def personal(pieces: Pieces, request) -> SafeString:
    """A shared fragment made ready for this reader, to put into a page: their token, their name, their
    messages, and this response's CSP nonce."""
    return mark_safe(_personal_bytes(pieces, request).decode())  # the template engine escaped what it put in


def page(request, template: str, key_parts: tuple[Hashable, ...], context: Callable[[], dict[str, Any]],
         timeout: int | None = 7 * DAY) -> HttpResponse:
    """A whole page served from the cache (see `shared`), made ready for this reader, as `render()` would
    answer it."""
    return HttpResponse(_personal_bytes(shared(template, key_parts, context, timeout), request))
