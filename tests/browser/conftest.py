"""Headless Chromium (through Playwright) driving the app on pytest-django's live server.

One browser for the session, a fresh context and page per test (so cookies never leak between people).
Chromium comes from EARSHOT_CHROMIUM, /usr/bin/chromium or the PATH; without it the tests skip on a
developer's machine and fail in CI, where skipping would hide that they never ran.
"""

import os
import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest

from projectapp.teams.models import Team
from tests.django_isolation import empty_cache, fast_password_hashing, media_in_tmp  # noqa: F401 (autouse)

# Playwright's sync API runs an asyncio event loop in the test's own thread (it switches to it with
# greenlets). Django sees that running loop and refuses ORM calls from the thread
# (SynchronousOnlyOperation), which would break every fixture that creates a person or a product once the
# browser is up. The test thread never runs async code of its own, and the live server answers requests
# in its own threads, so the safety check has nothing to protect here and is switched off.
os.environ["DJANGO_ALLOW_ASYNC_UNSAFE"] = "true"

CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--disable-quic",
]
DESKTOP = {"width": 1440, "height": 900}
INSTALL_HINT = ("install it (Debian/Ubuntu: apt-get install chromium) or point EARSHOT_CHROMIUM at a Chromium "
                "executable")


def _executable(path: str | None) -> bool:
    return bool(path) and Path(path).is_file() and os.access(path, os.X_OK)


def find_chromium() -> str | None:
    """EARSHOT_CHROMIUM if set, else Debian's /usr/bin/chromium, else `chromium` on the PATH."""
    chosen = os.environ.get("EARSHOT_CHROMIUM")
    if chosen:
        if not _executable(chosen):
            pytest.fail(f"EARSHOT_CHROMIUM={chosen!r} is not an executable file")
        return chosen
    for candidate in ("/usr/bin/chromium", shutil.which("chromium")):
        if _executable(candidate):
            return candidate
    return None


@pytest.fixture(scope="session")
def chromium_path() -> str:
    path = find_chromium()
    if path is None:
        if os.environ.get("CI"):
            pytest.fail("Chromium is required in CI: apt-get install chromium", pytrace=False)
        pytest.skip(f"Chromium not found: {INSTALL_HINT}")
    return path


@pytest.fixture(scope="session")
def browser(chromium_path):
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        if os.environ.get("CI"):
            pytest.fail("the playwright Python package is required in CI: pip install playwright", pytrace=False)
        pytest.skip("the playwright Python package is not installed: pip install playwright (it drives the "
                    "system's Chromium, so `playwright install` is not needed)")
    with sync_playwright() as playwright:
        chromium = playwright.chromium.launch(executable_path=chromium_path, args=CHROMIUM_ARGS)
        yield chromium
        chromium.close()


@pytest.hookimpl(wrapper=True, tryfirst=True)
def pytest_runtest_makereport(item, call):
    """Keeps each phase's report on the test item, so the page fixture knows whether the test failed."""
    report = yield
    setattr(item, f"report_{report.when}", report)
    return report


def _open_page(browser, request, tmp_path: Path, **context_options) -> Iterator:
    context = browser.new_context(viewport=DESKTOP, **context_options)
    page = context.new_page()
    errors: list[str] = []
    page.on("pageerror", lambda error: errors.append(str(error)))
    yield page
    report = getattr(request.node, "report_call", None)
    if report is not None and report.failed:
        shot = tmp_path / "failure.png"
        page.screenshot(path=str(shot), full_page=True)
        print(f"screenshot of the page at the failure: {shot}")
    context.close()
    if errors:
        pytest.fail("the page raised JavaScript errors: " + "; ".join(errors), pytrace=False)


@pytest.fixture
def page(browser, request, tmp_path):
    """A page in a fresh browser context at desktop size, JavaScript on; screenshot on failure."""
    yield from _open_page(browser, request, tmp_path)


@pytest.fixture
def page_without_js(browser, request, tmp_path):
    """A page in a fresh browser context with JavaScript switched off (htmx never loads)."""
    yield from _open_page(browser, request, tmp_path, java_script_enabled=False)


# -- people ------------------------------------------------------------------------------------------------
# The team on a transactional database: the live server answers from its own thread and connection, so it
# only sees rows that were committed. Its people (author, reviewer) come from tests/conftest.py.

@pytest.fixture
def team(transactional_db):
    return Team.objects.create(name="Tallow Creek Instruments")


@pytest.fixture
def hive_gateway(team, author):
    """A draft holding rules/examples/hive-gateway.json: a valid Cat 1 design with a SEP-001 blocker."""
    from projectapp.designs import services
    from tests.web.conftest import EXAMPLES

    product = services.product_create(team=team, name="Hive gateway", user=author)
    services.design_import(product=product, text=(EXAMPLES / "hive-gateway.json").read_text(),
                           source="hive-gateway.json", user=author)
    return product
