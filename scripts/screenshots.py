"""Takes the README's screenshots from a running demo server (started with `make start`).

Usage: .venv/bin/python scripts/screenshots.py [BASE_URL] [PASSWORD]
Logs in as the demo people, walks the main pages and writes PNGs to
projectapp/designs/static/earshot/screens/. Needs Chromium (/usr/bin/chromium) and Playwright.
"""

import re
import sys
from pathlib import Path

from playwright.sync_api import sync_playwright

BASE = sys.argv[1] if len(sys.argv) > 1 else "http://127.0.0.1:8000"
PASSWORD = sys.argv[2] if len(sys.argv) > 2 else "demo"
OUT = Path(__file__).resolve().parents[1] / "projectapp" / "designs" / "static" / "earshot" / "screens"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--disable-sync", "--no-first-run", "--disable-quic"]


def log_in(page, username: str) -> None:
    page.goto(BASE + "/accounts/login/")
    page.fill("#id_username", username)
    page.fill("#id_password", PASSWORD)
    page.click("button.primary")


def product_url(page, name: str) -> str:
    page.goto(BASE + "/")
    return page.get_by_role("link", name=name, exact=True).get_attribute("href")


def main() -> None:
    OUT.mkdir(parents=True, exist_ok=True)
    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path="/usr/bin/chromium", args=ARGS)
        page = browser.new_page(viewport={"width": 1440, "height": 900})
        log_in(page, "maren")
        page.screenshot(path=OUT / "products.png")
        cold_chain = product_url(page, "Cold-chain tracker")
        page.goto(BASE + cold_chain + "draft/")
        page.locator("#checklist details").first.click()
        page.screenshot(path=OUT / "questionnaire.png")
        hive = product_url(page, "Hive gateway")
        page.goto(BASE + hive + "revisions/1/")
        page.locator("#placement").scroll_into_view_if_needed()
        page.screenshot(path=OUT / "placement.png")
        page.context.clear_cookies()
        log_in(page, "tobias")
        page.goto(BASE + hive + "revisions/1/review/")
        page.screenshot(path=OUT / "review.png")
        page.goto(BASE + "/reviews/")
        page.screenshot(path=OUT / "review-dashboard.png")
        router = product_url(page, "Field router")
        page.goto(BASE + router + "revisions/1/signoff/")
        page.screenshot(path=OUT / "signoff.png")
        page.goto(BASE + "/archive/")
        page.screenshot(path=OUT / "archive.png")
        # The pump monitor's pilot, signed under rule set 1.1.0: its review, its place in the inbox of the approver
        # tobias mentioned, and what the current rule set would raise instead.
        pump = product_url(page, "Pump monitor")
        page.context.clear_cookies()
        log_in(page, "ines")
        page.goto(BASE + "/inbox/")
        page.screenshot(path=OUT / "inbox.png")
        page.goto(BASE + hive + "revisions/1/review/")
        page.locator("#steps").scroll_into_view_if_needed()
        page.screenshot(path=OUT / "steps.png")
        page.goto(BASE + pump + "revisions/1/")
        page.screenshot(path=OUT / "upgrade.png")
        browser.close()
    print("\n".join(str(path) for path in sorted(OUT.glob("*.png"))))


if __name__ == "__main__" and re.match(r"^https?://", BASE):
    main()
