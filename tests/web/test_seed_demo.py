"""The demo: an invented company whose products show the range, including a revision an earlier release signed."""

import hashlib
import io
import json
from io import StringIO

import pytest
from django.core.management import call_command
from pypdf import PdfReader

from projectapp.audit.models import AuditEvent
from projectapp.demo.management.commands.seed_demo import EARLIER, EARLIER_CHECKLISTS
from projectapp.designs.models import Product, Revision
from projectapp.designs.upgrades import comparison_for
from projectapp.notices.models import Notice
from projectapp.reviews.models import Comment, EvidenceAttachment, ProcessStep
from projectapp.signoff.models import SignedRecord
from rules.evaluate import CHECKLIST_FORMAT


@pytest.fixture
def demo(db):
    call_command("seed_demo", "--password", "demo-only-password-1", stdout=StringIO())
    return Product.objects.get(team__name="Tallow Creek Instruments", name="Pump monitor")


def test_the_earlier_checklist_is_what_rule_set_1_1_0_wrote():
    stored = json.loads((EARLIER / EARLIER_CHECKLISTS["Pump monitor"]).read_text())
    assert (stored["format"], stored["ruleset"]) == (CHECKLIST_FORMAT, "1.1.0")
    # Rule set 2.0.0 gave every finding a basis and a line for the product; 1.1.0 wrote neither.
    assert stored["findings"] and all("basis" not in f and "product_impact" not in f for f in stored["findings"])


def test_the_pump_monitor_was_signed_under_rule_set_1_1_0_and_the_current_rules_judge_it_differently(demo):
    revision = demo.revisions.get(number=1)
    assert (revision.state, revision.ruleset) == (Revision.State.SIGNED, "1.1.0")
    record = SignedRecord.objects.get(revision=revision)
    with record.pdf.open("rb") as handle:
        content = handle.read()
    assert hashlib.sha256(content).hexdigest() == record.sha256
    text = " ".join(page.extract_text() for page in PdfReader(io.BytesIO(content)).pages)
    assert "1.1.0" in text and "pilot-window-plan.txt" in text
    comparison = comparison_for(revision)
    # 2.0.0 added COV-002 (an underground NB-IoT design counts on coverage enhancement: rules/checks/coverage.py).
    assert [f["id"] for f in comparison.new] == ["COV-002"] and comparison.new_blockers == 0
    submitted = AuditEvent.objects.get(revision=revision, action=AuditEvent.Action.SUBMITTED)
    assert "as an earlier release froze it" in submitted.summary and "rule set 1.1.0" in submitted.summary


def test_the_pilots_review_went_the_way_a_team_would_take_it(demo):
    revision = demo.revisions.get(number=1)
    waived = revision.review_items.get(rule_id="ENC-001")
    assert waived.disposition == "waived" and waived.decided_by.username == "ines"
    assert Comment.objects.filter(item=waived, text__contains="@ines").exists()
    assert EvidenceAttachment.objects.filter(item=waived).count() == 1
    assert Notice.objects.filter(recipient__username="ines", kind=Notice.Kind.MENTION).exists()
    steps = ProcessStep.objects.filter(revision=revision)
    assert steps.count() == 3 and all(step.owner.username == "ines" and step.planned_on for step in steps)


def test_loading_it_again_changes_nothing(demo):
    before = (Product.objects.count(), Revision.objects.count(), SignedRecord.objects.count())
    call_command("seed_demo", "--password", "demo-only-password-2", stdout=StringIO())
    assert (Product.objects.count(), Revision.objects.count(), SignedRecord.objects.count()) == before
