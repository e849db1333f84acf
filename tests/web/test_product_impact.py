"""What each finding means for the product, in a product manager's words: in the checklist JSON, on the
checklist, on the review card and the item page, and in the PDF record's findings in detail."""

import io
import json
import subprocess
import sys

from django.urls import reverse
from django.utils.html import escape
from pypdf import PdfReader

from projectapp.designs.checklists import checklist_for
from projectapp.reviews import services as review_services
from projectapp.signoff.pdf import build_record_pdf
from tests.web.conftest import EXAMPLES
from tests.web.test_term_list import page

LABEL = "What this means for the product:"


def test_the_checklist_json_gives_every_finding_its_product_impact():
    result = subprocess.run([sys.executable, "manage.py", "evaluate", str(EXAMPLES / "hive-gateway.json"),
                             "--format", "json"], capture_output=True, text=True, check=False)
    assert result.returncode == 1, result.stderr  # hive-gateway has a blocker
    findings = json.loads(result.stdout)["findings"]
    assert findings and all(finding["product_impact"].strip() for finding in findings)
    assert all(finding["product_impact"] != finding["explanation"] for finding in findings)


def test_the_checklist_shows_each_findings_impact_beside_its_explanation(client, author, product):
    html = page(client, author, reverse("draft_edit", args=[product.pk]))
    findings = checklist_for(product.draft).findings
    assert html.count(LABEL) == len(findings)
    for finding in findings:
        impact, explanation = escape(finding["product_impact"]), escape(finding["explanation"])
        assert explanation in html and impact in html
        assert html.index(explanation) < html.index(impact)  # the engineer's words first, then the product's


def test_review_cards_and_the_item_page_show_the_impact(client, author, reviewer, product):
    revision = review_services.revision_submit(revision=product.draft, user=author)
    items = list(revision.review_items.filter(kind="raised"))
    review = page(client, reviewer, reverse("revision_review", args=[product.pk, revision.number]))
    for item in items:
        assert escape(item.finding["product_impact"]) in review
    item = items[0]
    assert escape(item.finding["product_impact"]) in page(client, reviewer, reverse("review_item", args=[item.pk]))


def test_a_finding_stored_before_the_impact_line_existed_still_shows(client, author, reviewer, product):
    revision = review_services.revision_submit(revision=product.draft, user=author)
    item = revision.review_items.filter(kind="raised").first()
    old = {key: value for key, value in item.finding.items() if key != "product_impact"}
    type(item).objects.filter(pk=item.pk).update(finding=old)  # as a revision submitted earlier stored it
    html = page(client, reviewer, reverse("review_item", args=[item.pk]))
    assert escape(old["explanation"]) in html and LABEL not in html.split("Discussion")[0]


def _text(content: bytes) -> str:
    return "".join("".join(page.extract_text() for page in PdfReader(io.BytesIO(content)).pages).split())


def test_the_pdf_record_has_one_impact_line_per_finding_in_detail(author, product):
    revision = review_services.revision_submit(revision=product.draft, user=author)
    text = _text(build_record_pdf(revision, fingerprint="0" * 64))
    items = list(revision.review_items.filter(kind="raised"))
    assert text.count("Fortheproduct:") == len(items)
    for item in items:
        assert "".join(item.finding["product_impact"].split()) in text, item.rule_id
