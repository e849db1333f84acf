"""Process steps: findings that name a step outside the team are tracked, never block signing, carry forward."""

import datetime

import pytest
from django.core.exceptions import PermissionDenied
from django.urls import reverse

from projectapp.audit.models import AuditEvent
from projectapp.designs import services as design_services
from projectapp.notices.models import Notice
from projectapp.reviews.gate import item_obstacles
from projectapp.reviews.models import ProcessStep, ReviewItem, ReviewTally, SignedRevisionError, TopicReviewer
from projectapp.reviews.services import ReviewConflict, ReviewInputError, process_step_update, revision_submit
from projectapp.reviews.steps import is_external_step
from tests.web.conftest import EXAMPLES


@pytest.fixture
def reviewed(product, author):
    revision_submit(revision=product.draft, user=author)
    return product.revisions.get(number=1)


def test_each_certification_and_rf_exposure_finding_becomes_a_step(reviewed):
    raised = reviewed.review_items.filter(kind=ReviewItem.Kind.RAISED)
    external = {item.pk for item in raised if is_external_step(topic=item.topic, rule_id=item.rule_id)}
    assert external, "the hive gateway raises certification notes (rules/checks/certification.py)"
    assert set(ProcessStep.objects.filter(revision=reviewed).values_list("item_id", flat=True)) == external
    assert all(step.status == "planned" for step in ProcessStep.objects.filter(revision=reviewed))


def test_an_update_is_recorded_in_the_history_and_the_audit_trail(reviewed, author, reviewer):
    step = ProcessStep.objects.filter(revision=reviewed).first()
    updated = process_step_update(step=step, user=reviewer, owner=author, planned_on=datetime.date(2027, 2, 1),
                                  status="in-progress", reference="LAB-2291", expected_version=step.version)
    assert (updated.owner, updated.status, updated.reference, updated.version) == (author, "in-progress",
                                                                                     "LAB-2291", 2)
    assert updated.history[-1][3]["status"] == ["planned", "in-progress"]
    event = AuditEvent.objects.get(action=AuditEvent.Action.STEP_CHANGED)
    assert event.changes["reference"] == ["", "LAB-2291"] and event.item_id == step.item_id


def test_a_stale_edit_is_refused_and_nothing_is_overwritten(reviewed, author, reviewer):
    step = ProcessStep.objects.filter(revision=reviewed).first()
    process_step_update(step=step, user=reviewer, owner=None, planned_on=None, status="passed", reference="A-1",
                        expected_version=1)
    with pytest.raises(ReviewConflict):
        process_step_update(step=step, user=author, owner=None, planned_on=None, status="failed", reference="B",
                            expected_version=1)
    assert ProcessStep.objects.get(pk=step.pk).status == "passed"


def test_bad_values_name_their_field(reviewed, reviewer, outsider):
    step = ProcessStep.objects.filter(revision=reviewed).first()
    with pytest.raises(ReviewInputError) as error:
        process_step_update(step=step, user=reviewer, owner=None, planned_on=None, status="done", reference="",
                            expected_version=1)
    assert error.value.field == "status"
    with pytest.raises(ReviewInputError) as error:
        process_step_update(step=step, user=reviewer, owner=outsider, planned_on=None, status="passed",
                            reference="", expected_version=1)
    assert error.value.field == "owner"
    with pytest.raises(PermissionDenied):
        process_step_update(step=step, user=outsider, owner=None, planned_on=None, status="passed", reference="",
                            expected_version=1)


def test_steps_never_appear_among_the_gates_obstacles(reviewed):
    from projectapp.reviews.gate import item_obstacles

    stepped = ReviewItem.objects.filter(process_step__revision=reviewed)
    # even graver than the engine makes them, a step's item stands in no one's way
    stepped.update(severity="blocker")
    obstacles = item_obstacles(reviewed)
    assert not any(line.startswith(item.rule_id + " ") for item in stepped for line in obstacles)


def test_a_step_carries_forward_with_its_status_and_history(reviewed, product, author, reviewer):
    step = ProcessStep.objects.filter(revision=reviewed).select_related("item").first()
    process_step_update(step=step, user=reviewer, owner=author, planned_on=datetime.date(2027, 3, 4),
                        status="passed", reference="OP-77", expected_version=1)
    draft = design_services.draft_get_or_start(product=product, user=author)
    revision_submit(revision=draft, user=author)
    carried = ProcessStep.objects.get(revision__number=2, revision__product=product, item__rule_id=step.item.rule_id,
                                      item__subjects_key=step.item.subjects_key)
    assert (carried.status, carried.reference, carried.owner, carried.planned_on) == (
        "passed", "OP-77", author, datetime.date(2027, 3, 4))
    assert carried.carried_from == reviewed and len(carried.history) == 1


def test_a_step_of_a_closed_review_is_frozen(reviewed, product, author, reviewer):
    step = ProcessStep.objects.filter(revision=reviewed).first()
    draft = design_services.draft_get_or_start(product=product, user=author)
    revision_submit(revision=draft, user=author)  # withdraws revision 1: its review is closed
    with pytest.raises(PermissionDenied):
        process_step_update(step=step, user=reviewer, owner=None, planned_on=None, status="passed", reference="",
                            expected_version=1)
    step.status = "passed"
    with pytest.raises(SignedRevisionError):
        step.save()


def _post_step(client, user, step, **data):
    from django.urls import reverse

    client.force_login(user)
    values = {"status": "in-progress", "owner": "", "planned_on": "2027-01-15", "reference": "LAB-1",
              "version": step.version, **data}
    return client.post(reverse("process_step_update", args=[step.pk]), values, HTTP_HX_REQUEST="true")


def test_the_review_page_lists_steps_apart_and_saves_them(client, reviewed, product, reviewer):
    from django.urls import reverse

    step = ProcessStep.objects.filter(revision=reviewed).select_related("item").first()
    client.force_login(reviewer)
    page = client.get(reverse("revision_review", args=[product.pk, 1])).content.decode()
    assert "Steps outside the team" in page and f'id="step-{step.pk}"' in page
    assert f'id="item-{step.item_id}"' not in page  # not offered as an item to waive
    response = _post_step(client, reviewer, step)
    assert response.status_code == 200 and "In progress" in response.content.decode()
    stale = _post_step(client, reviewer, step, status="failed", version=1)
    assert stale.status_code == 409 and "Someone changed this step" in stale.content.decode()
    assert ProcessStep.objects.get(pk=step.pk).status == "in-progress"


def test_a_bad_date_names_the_field(client, reviewed, reviewer):
    step = ProcessStep.objects.filter(revision=reviewed).first()
    response = _post_step(client, reviewer, step, planned_on="next week")
    assert response.status_code == 400 and "planned_on: expected a date" in response.content.decode()


def test_another_teams_step_is_not_found(client, reviewed, outsider):
    step = ProcessStep.objects.filter(revision=reviewed).first()
    assert _post_step(client, outsider, step).status_code == 404


def test_the_signed_record_lists_open_external_steps_and_freezes_them(reviewed, author, reviewer, approver):
    import io

    from pypdf import PdfReader

    from projectapp.reviews.models import Disposition
    from projectapp.reviews.services import review_item_decide
    from projectapp.signoff import services as signoff
    from projectapp.signoff.models import SignedRecord
    from tests.web.conftest import PASSWORD, signing_request

    step = ProcessStep.objects.filter(revision=reviewed).select_related("item").first()
    process_step_update(step=step, user=reviewer, owner=author, planned_on=datetime.date(2027, 5, 6),
                        status="in-progress", reference="TH-4410", expected_version=1)
    from projectapp.reviews.services import evidence_attach

    report = evidence_attach(user=reviewer, name="th-4410-report.pdf", content=b"lab report body", step=step)
    for item in reviewed.review_items.filter(kind="raised", process_step__isnull=True).order_by("id"):
        if item.severity != "note":
            review_item_decide(item=item, user=approver, disposition=Disposition.WAIVED,
                               justification="pilot run", expected_version=item.version)
    # the gate never asked for the steps: signing goes through with every step still open
    for person, role in ((author, "author"), (reviewer, "reviewer"), (approver, "approver")):
        signoff.revision_sign(revision=reviewed, user=person, role=role, password=PASSWORD,
                              request=signing_request())
    with SignedRecord.objects.get(revision=reviewed).pdf.open("rb") as handle:
        text = " ".join(page.extract_text() for page in PdfReader(io.BytesIO(handle.read())).pages)
    assert "Open external steps" in text and "Tracked as an external step" in text
    assert "TH-4410" in text and "2027-05-06" in text and "In progress" in text
    assert "Evidence files" in text and "th-4410-report.pdf" in text
    assert report.sha256 in "".join(text.split())  # a table cell may wrap the 64 hex digits
    with pytest.raises(PermissionDenied):
        process_step_update(step=step, user=reviewer, owner=None, planned_on=None, status="passed", reference="",
                            expected_version=2)


def test_an_operator_only_note_becomes_a_step_that_names_the_operator(team, author):
    # rules/examples/pump-monitor.json is an LTE-M meter deep indoors: COV-002 says the depth it counts on is the
    # operator's to enable (CE mode B); the team can plan and record that, not waive it.
    product = design_services.product_create(team=team, name="Pump monitor", user=author)
    design_services.design_import(product=product, text=(EXAMPLES / "pump-monitor.json").read_text(),
                                  source="pump-monitor.json", user=author)
    revision = revision_submit(revision=product.draft, user=author)
    step = ProcessStep.objects.select_related("item").get(revision=revision, item__rule_id="COV-002")
    assert step.item.topic == "coverage" and step.decided_by.startswith("each operator")
    assert not any(line.startswith("COV-002") for line in item_obstacles(revision))


def test_a_design_trade_that_mentions_an_operator_stays_a_review_item():
    # CNT-001 (one antenna on an operator's approval) is a warning the team decides; its letter goes on the decision.
    assert not is_external_step(topic="antenna-count", rule_id="CNT-001")
    assert is_external_step(topic="antenna-count", rule_id="CNT-004")


def test_steps_are_planned_not_listed_as_open_items_and_their_owner_is_the_topics_reviewer(client, team, product,
                                                                                           author, reviewer,
                                                                                           approver):
    TopicReviewer.objects.create(team=team, topic="certification", reviewer=approver)
    TopicReviewer.objects.create(team=team, topic="separation", reviewer=reviewer)
    revision = revision_submit(revision=product.draft, user=author)
    steps = ProcessStep.objects.filter(revision=revision, item__topic="certification")
    assert steps and all(step.owner == approver for step in steps)
    # The tally the dashboard sums counts what needs a decision: no step among them.
    decided_here = revision.review_items.filter(kind="raised", process_step__isnull=True).count()
    assert ReviewTally.objects.get(revision=revision).open_items == decided_here
    client.force_login(reviewer)
    dashboard = client.get(reverse("review_dashboard"), {"state": "all"}).content.decode()
    assert "CRT-001" not in dashboard and "SEP-001" in dashboard
    told = Notice.objects.get(recipient=approver, kind=Notice.Kind.ASSIGNED)
    assert told.text.endswith(f"{steps.count()} steps outside the team to plan") and "#steps" in told.url
    assert Notice.objects.get(recipient=reviewer, kind=Notice.Kind.ASSIGNED).text.endswith("1 item to review")
