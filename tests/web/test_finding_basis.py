"""What a finding rests on (rule set 2's `basis`), in plain words on the checklist, the review cards and the
PDF record; for a finding a measurement cleared, the files that cleared it with their SHA-256. Revisions
evaluated under rule set 1.x (no basis in their stored checklist) still render."""

import hashlib
import io
import json

import pytest
from django.urls import reverse
from pypdf import PdfReader

from projectapp.designs import services
from projectapp.designs.models import Revision
from projectapp.reviews.models import ReviewItem
from projectapp.reviews.services import revision_submit
from projectapp.signoff.pdf import build_record_pdf
from tests.web.conftest import EXAMPLES

FILES = {"trail-tracker-main.csv": (EXAMPLES / "trail-tracker-main.csv").read_bytes(),
         "trail-tracker-div.csv": (EXAMPLES / "trail-tracker-div.csv").read_bytes()}
DIGESTS = {name: hashlib.sha256(content).hexdigest() for name, content in FILES.items()}


@pytest.fixture
def tracker(team, author):
    """The demo's trail tracker, submitted with its two far-field patterns (rules/examples/trail-tracker.json)."""
    product = services.product_create(team=team, name="Trail tracker", user=author)
    draft = product.draft
    document = json.loads((EXAMPLES / "trail-tracker.json").read_text())
    entries = document.pop("measurements")
    services.design_import(product=product, text=json.dumps(document), source="trail-tracker.json", user=author)
    for entry in entries:
        services.pattern_add(revision=draft, name=entry["file"], content=FILES[entry["file"]], antenna=entry["antenna"],
                             absolute=entry["absolute"], environment=entry["environment"], user=author)
    return revision_submit(revision=product.draft, user=author)


def pdf_text(content: bytes) -> str:
    return " ".join(" ".join(page.extract_text() for page in PdfReader(io.BytesIO(content)).pages).split())


def test_the_checklist_says_what_each_finding_rests_on(client, tracker, reviewer):
    client.force_login(reviewer)
    page = client.get(tracker.get_absolute_url()).content.decode()
    assert 'class="basis basis-measured"' in page and ">measured</span>" in page
    assert 'class="basis basis-design"' in page and ">from the design</span>" in page
    assert "from the design alone this would be a warning" in page
    for name, digest in DIGESTS.items():
        assert name in page and digest in page


def test_review_cards_and_the_item_page_carry_the_basis_and_what_cleared_it(client, tracker, reviewer):
    client.force_login(reviewer)
    review = client.get(reverse("revision_review", args=[tracker.product_id, tracker.number])).content.decode()
    assert ">measured</span>" in review and ">from the design</span>" in review
    item = ReviewItem.objects.get(revision=tracker, rule_id="SEP-001")
    detail = client.get(reverse("review_item", args=[item.pk])).content.decode()
    assert "Rests on:" in detail and all(digest in detail for digest in DIGESTS.values())
    dashboard = client.get(reverse("review_dashboard") + "?state=all").content.decode()
    assert ">measured</span>" in dashboard, "a list across revisions names the basis too"


def test_the_pdf_record_carries_basis_cleared_by_files_and_rule_set_2(tracker):
    text = pdf_text(build_record_pdf(tracker, fingerprint="0" * 64))
    assert "Severity, basis" in text and "measured" in text and "from the design" in text
    assert "Cleared by measurement (from the design alone: warning)" in text
    assert "2.0.0" in text
    flat = text.replace(" ", "")
    for name, digest in DIGESTS.items():
        assert name in text and digest in flat, "each file with its SHA-256 (the cell may break the digest)"
    assert "far-field pattern" in text and "grid 10° × 10°" in text
    assert "B3 3.2, B8 1.8, B20 1.5" in text, "the per-band peak gain (trail-tracker.json)"
    assert "1 in every band" in text and "measured in this product" in text
    assert "class 3: 23 dBm conducted" in text
    assert "Uplink: device to base station" in text and "Downlink: base station to device" in text
    assert "Envelope correlation from far-field patterns" in text


def as_rule_set_1(revision: Revision) -> None:
    """What a revision submitted under rule set 1.1.0 holds: a checklist whose findings have no basis."""
    evaluation = revision.evaluation
    for finding in evaluation["findings"]:
        del finding["basis"]
        finding["evidence"].pop("outranked_by", None)
    evaluation["ruleset"] = "1.1.0"
    Revision.objects.filter(pk=revision.pk).update(evaluation=evaluation, ruleset="1.1.0")  # frozen: no save()
    for item in ReviewItem.objects.filter(revision=revision):
        finding = {key: value for key, value in item.finding.items() if key != "basis"}
        finding["evidence"].pop("outranked_by", None)
        ReviewItem.objects.filter(pk=item.pk).update(finding=finding)


def test_a_revision_checked_under_rule_set_1_still_renders_without_a_basis(client, tracker, reviewer):
    as_rule_set_1(tracker)
    client.force_login(reviewer)
    for url in (tracker.get_absolute_url(), reverse("revision_review", args=[tracker.product_id, tracker.number]),
                reverse("review_item", args=[ReviewItem.objects.get(revision=tracker, rule_id="SEP-001").pk])):
        response = client.get(url)
        page = response.content.decode()
        assert response.status_code == 200, url
        assert 'class="basis' not in page and "Cleared by" not in page, url
    assert "rule set 1.1.0" in client.get(tracker.get_absolute_url()).content.decode()
    text = pdf_text(build_record_pdf(Revision.objects.get(pk=tracker.pk), fingerprint="0" * 64))
    assert "1.1.0" in text and "Cleared by measurement" not in text
    assert "NOTE —" in text, "the basis cell of an old finding is a dash"


def test_the_record_and_the_revision_page_show_the_radiated_targets_and_the_radio_roles(client, team, author,
                                                                                     reviewer):
    # rules/examples/depot-gateway.json: the team's TRP and TIS targets per band, a GNSS and a WLAN antenna
    product = services.product_create(team=team, name="Depot gateway", user=author)
    services.design_import(product=product, text=(EXAMPLES / "depot-gateway.json").read_text(),
                           source="depot-gateway.json", user=author)
    revision = revision_submit(revision=product.draft, user=author)
    text = pdf_text(build_record_pdf(revision, fingerprint="0" * 64))
    assert "Radiated target, TRP (at least) B2 19 dBm" in text and "B13 18 dBm" in text
    assert "Radiated target, TIS (at most) B2 -96 dBm" in text
    assert "GNSS (satellite navigation)" in text and "WLAN (Wi-Fi, Bluetooth)" in text
    assert "Conducted sensitivity B2 -100.5 dBm" in text
    assert "from datasheets" in text, "the radiated estimates rest on datasheet figures"
    client.force_login(reviewer)
    page = client.get(revision.get_absolute_url()).content.decode()
    assert "Radiated target, TRP (at least)" in page and "B13 18 dBm" in page
    assert "B2 -100.5 dBm" in page
