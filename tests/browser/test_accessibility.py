"""Every page a person reaches, at desktop size and at a 390 px phone width: no axe-core violations against
the WCAG 2.0/2.1/2.2 A and AA rules, nothing scrolls sideways on the phone, and the questionnaire's checklist
is one tap away there.

The pages come from the URL patterns, walked as tests/web/test_security.py walks them, with the objects of its
`site` fixture: a new page is audited without anyone adding it here. A URL that answers GET with HTML is
audited; one that only takes POST (405) or sends a file is listed as skipped. The log-in page and the 404 and
403 pages are added by hand, since they need someone logged out, a missing object and a missing role.

axe-core (MPL-2.0) is vendored under tests/browser/vendor/axe-core/ and injected by Playwright only; the app
never serves it. The context bypasses the page's CSP so the injected script may run; the app's own scripts run
under the CSP in every other browser test."""

from pathlib import Path

import pytest
from django.urls import reverse

from projectapp.teams.models import Role
from tests.browser.conftest import DESKTOP
from tests.browser.test_questionnaire_flow import log_in
from tests.web import test_security
from tests.web.conftest import make_user
from tests.web.test_security import site_routes, url_of

site = test_security.site  # the fixture with an object of the protected team for every URL parameter

pytestmark = pytest.mark.browser

AXE = Path(__file__).parent / "vendor" / "axe-core" / "axe.min.js"
# WCAG 2.0, 2.1 and 2.2 at levels A and AA (axe has no wcag22a tag: 2.2's level-A additions need a person).
WCAG_AA_TAGS = ["wcag2a", "wcag2aa", "wcag21a", "wcag21aa", "wcag22aa"]
PHONE = {"width": 390, "height": 844}
# The pages the walk must reach (library_index redirects to the one team's library_list): if the fixture or a
# route changes so that one of them stops answering HTML, the test says so instead of auditing fewer pages.
MUST_AUDIT = {
    "product_list", "product_create", "product_detail", "draft_edit", "revision_detail", "revision_review",
    "revision_compare", "revision_coverage", "review_item", "review_dashboard", "product_audit", "signoff_page",
    "archive_list", "record_detail", "rule_list", "term_list", "inbox", "team_reviewers", "team_upgrades",
    "library_list", "library_entry", "library_antenna_create", "library_module_create",
    "password_change",
}


def violations(page) -> list[dict]:
    page.add_script_tag(path=str(AXE))
    result = page.evaluate("tags => axe.run(document, {runOnly: {type: 'tag', values: tags}})", WCAG_AA_TAGS)
    return result["violations"]


def readable(where: str, found: list[dict]) -> list[str]:
    """One line per page and rule: the rule id, how many elements, the first few of them, and axe's summary
    of what is wrong with the first."""
    lines = []
    for violation in found:
        nodes = violation["nodes"]
        targets = ", ".join(" ".join(node["target"]) for node in nodes[:3]) + (" ..." if len(nodes) > 3 else "")
        summary = " ".join(nodes[0].get("failureSummary", "").split())
        lines.append(f"{where}: {violation['id']} on {len(nodes)} element(s): {targets}: {summary}")
    return lines


# A hint for the failure message: the outermost elements reaching past the right edge that no scrolling box of
# theirs clips. (An absolutely placed element escapes a scroller that is not its containing block, which is why
# .table-scroll is position: relative; such an escapee is not named here.)
OVERFLOWING = """() => {
    const clipped = el => { for (let up = el.parentElement; up && up !== document.body; up = up.parentElement)
        if (getComputedStyle(up).overflowX !== 'visible') return true; return false; };
    const wide = [...document.querySelectorAll('body *')]
        .filter(el => el.getBoundingClientRect().right > window.innerWidth + 0.5 && !clipped(el));
    const name = el => el.tagName.toLowerCase() + (el.id ? '#' + el.id : '')
        + (typeof el.className === 'string' && el.className ? '.' + el.className.split(' ')[0] : '');
    return wide.filter(el => !wide.includes(el.parentElement)).slice(0, 6)
        .map(el => (el.parentElement ? name(el.parentElement) + ' > ' : '') + name(el));
}"""


def audit(page, where: str, viewport: dict) -> list[str]:
    page.wait_for_load_state("networkidle")
    problems = readable(where, violations(page))
    if viewport is PHONE:
        width = page.evaluate("document.scrollingElement.scrollWidth")
        shown = page.evaluate("window.innerWidth")
        if width > shown:
            wide = page.evaluate(OVERFLOWING)
            problems.append(f"{where}: scrolls sideways, {width} px wide in {shown} px (too wide: {wide})")
    return problems


@pytest.fixture
def everyone(site, team):
    """A member with every role, so that every page opens (the author alone may not see the team pages)."""
    return make_user("ines", team, *Role.values)


@pytest.mark.parametrize("viewport", [DESKTOP, PHONE], ids=["desktop", "phone"])
def test_every_page_is_axe_clean_and_never_scrolls_sideways(browser, live_server, site, everyone, viewport):
    context = browser.new_context(viewport=viewport, bypass_csp=True)
    page = context.new_page()
    problems, audited, skipped = [], set(), {}
    try:
        page.goto(live_server.url + reverse("login"))
        problems += audit(page, "log-in", viewport)
        log_in(page, live_server, everyone)
        for route in site_routes():
            url = url_of(route, site.kwargs)
            answer = page.request.get(live_server.url + url, max_redirects=0)
            kind = answer.headers.get("content-type", "")
            if answer.status != 200 or not kind.startswith("text/html"):
                skipped[route.name] = f"{answer.status} {kind}"
                continue
            page.goto(live_server.url + url)
            problems += audit(page, f"{route.name} ({url})", viewport)
            audited.add(route.name)
        page.goto(live_server.url + reverse("draft_edit", args=[site.draft_product.pk]))  # a never-submitted draft
        problems += audit(page, "draft_edit, first draft", viewport)
        missing = page.goto(live_server.url + "/products/999999/")
        assert missing is not None and missing.status == 404
        problems += audit(page, "404 page", viewport)
    finally:
        context.close()
    problems += forbidden_pages(browser, live_server, site, viewport)
    assert MUST_AUDIT - audited == set(), f"not audited: {sorted(MUST_AUDIT - audited)}; skipped: {skipped}"
    assert problems == [], "\n" + "\n".join(problems)


def forbidden_pages(browser, live_server, site, viewport) -> list[str]:
    """The 403 page, as a reviewer who may not create products (a reviewer opening a draft is shown the
    revision instead, so that is no 403)."""
    reviewer = make_user("tobias", site.submitted.team, Role.REVIEWER)
    context = browser.new_context(viewport=viewport, bypass_csp=True)
    page = context.new_page()
    problems = []
    try:
        log_in(page, live_server, reviewer)
        answer = page.goto(live_server.url + reverse("product_create"))
        assert answer is not None and answer.status == 403
        problems += audit(page, "403 page (product_create)", viewport)
    finally:
        context.close()
    return problems


def test_on_a_phone_the_checklist_is_one_tap_from_the_top_of_the_questionnaire(browser, live_server, site,
                                                                                  everyone):
    context = browser.new_context(viewport=PHONE)
    page = context.new_page()
    try:
        log_in(page, live_server, everyone)
        page.goto(live_server.url + reverse("draft_edit", args=[site.draft_product.pk]))
        checklist = page.locator("#checklist")
        assert not checklist.is_visible() or checklist.bounding_box()["y"] > PHONE["height"]  # below the forms
        jump = page.locator("#checklist-jump a")
        assert jump.bounding_box()["y"] < PHONE["height"]  # the bar is on the first screen
        jump.click()
        page.wait_for_function("location.hash === '#checklist'")
        top = checklist.bounding_box()["y"]
        assert 0 <= top < PHONE["height"] / 2, top  # one tap and the checklist's heading is in view
    finally:
        context.close()
