"""The migrations of the life cycle on a database that holds today's rows: designs/0004 derives every revision's
state from the old status, signatures, records and supersessions, stores its counts and each product's latest
revision; reviews/0007 and audit/0001 move the audit trail to its own app without touching a row."""

import json

import pytest
from django.db import connection
from django.db.migrations.executor import MigrationExecutor

from rules.design import parse_design
from rules.evaluate import evaluate
from tests.web.conftest import EXAMPLES

pytestmark = pytest.mark.django_db(transaction=True)

BEFORE = [("designs", "0003_measurementfile_kind"), ("reviews", "0006_auditevent_team_subject_product_optional"),
          ("signoff", "0002_signature_signer_name_fits_full_name"), ("audit", None)]


def migrate(targets):
    executor = MigrationExecutor(connection)
    executor.migrate(targets)
    executor.loader.build_graph()
    return executor.loader.project_state([target for target in targets if target[1] is not None]).apps


def latest_targets():
    return MigrationExecutor(connection).loader.graph.leaf_nodes()


@pytest.fixture
def old_database():
    apps = migrate(BEFORE)
    yield apps
    migrate(latest_targets())


def test_old_rows_get_their_state_counts_and_latest_revision(old_database):
    apps = old_database
    User = apps.get_model("auth", "User")
    Team = apps.get_model("teams", "Team")
    Product = apps.get_model("designs", "Product")
    Revision = apps.get_model("designs", "Revision")
    Signature = apps.get_model("signoff", "Signature")
    SignedRecord = apps.get_model("signoff", "SignedRecord")
    Supersession = apps.get_model("signoff", "Supersession")
    AuditEvent = apps.get_model("reviews", "AuditEvent")

    hive = json.loads((EXAMPLES / "hive-gateway.json").read_text())
    checklist = evaluate(parse_design(hive)).as_dict()
    maren = User.objects.create(username="maren")
    team = Team.objects.create(name="Tallow Creek Instruments")
    gateway = Product.objects.create(team=team, name="Hive gateway")
    probe = Product.objects.create(team=team, name="Orchard soil probe")

    def revision(product, number, status, **extra):
        return Revision.objects.create(**{"product": product, "number": number, "status": status, "document": hive,
                                          "evaluation": checklist if status == "submitted" else None, **extra})

    def record(of, digest):
        return SignedRecord.objects.create(revision=of, pdf=f"records/{digest}.pdf", sha256=digest * 64,
                                           size_bytes=1, fingerprint=digest * 64)

    g1, g2, g3, g4, g5 = (revision(gateway, number, "submitted") for number in range(1, 6))
    g6 = revision(gateway, 6, "draft")
    Supersession.objects.create(older=record(g1, "a"), newer=record(g2, "b"))
    Signature.objects.create(revision=g3, role="author", signer=maren, signer_name="maren", meaning="prepared")
    p1 = revision(probe, 1, "submitted")
    Signature.objects.create(revision=p1, role="author", signer=maren, signer_name="maren", meaning="prepared")
    p2 = revision(probe, 2, "submitted")
    record(p2, "c")
    p3 = revision(probe, 3, "draft", document={"format": "earshot-design/1"})  # not checkable yet
    event = AuditEvent.objects.create(product=gateway, team=team, revision=g2, actor=maren, action="archived",
                                      summary="Archived the signed record of revision 2", changes={"sha": [None, 1]})

    apps = migrate(latest_targets())
    Revision = apps.get_model("designs", "Revision")
    Product = apps.get_model("designs", "Product")
    state = dict(Revision.objects.values_list("pk", "state"))
    assert [state[r.pk] for r in (g1, g2, g3, g4, g5, g6)] == [
        "superseded",  # its record was superseded
        "signed",  # the record in force
        "signing",  # a signature, later than the signed revision
        "withdrawn",  # in review when revision 5 was submitted: revision 5's review carries it
        "in-review",
        "draft"]
    assert [state[r.pk] for r in (p1, p2, p3)] == ["withdrawn", "signed", "draft"]  # p1 can never be signed now
    submitted = Revision.objects.get(pk=g5.pk)
    summary = checklist["summary"]
    assert (submitted.blockers, submitted.warnings, submitted.notes) == (summary["blocker"], summary["warning"],
                                                                         summary["note"])
    assert submitted.category == "cat-1" and submitted.state_changed_at is None  # g5 had no submission time
    draft = Revision.objects.get(pk=g6.pk)  # evaluated by the migration: the same design as submitted
    assert (draft.blockers, draft.warnings, draft.notes, draft.problems) == (summary["blocker"], summary["warning"],
                                                                             summary["note"], 0)
    unchecked = Revision.objects.get(pk=p3.pk)
    assert unchecked.blockers is None and unchecked.problems > 0
    assert dict(Product.objects.values_list("pk", "latest_revision_id")) == {gateway.pk: g6.pk, probe.pk: p3.pk}

    moved = apps.get_model("audit", "AuditEvent").objects.get(pk=event.pk)
    assert (moved.summary, moved.changes, moved.revision_id, moved.action) == (
        "Archived the signed record of revision 2", {"sha": [None, 1]}, g2.pk, "archived")
    ContentType = apps.get_model("contenttypes", "ContentType")
    assert not ContentType.objects.filter(app_label="reviews", model="auditevent").exists()


def test_the_state_migration_reverses_to_draft_and_submitted(old_database):
    apps = old_database
    Team = apps.get_model("teams", "Team")
    Product = apps.get_model("designs", "Product")
    Revision = apps.get_model("designs", "Revision")
    product = Product.objects.create(team=Team.objects.create(name="Tallow Creek Instruments"), name="Pump monitor")
    submitted = Revision.objects.create(product=product, number=1, status="submitted", document={}, evaluation={})
    draft = Revision.objects.create(product=product, number=2, status="draft", document={})
    migrate(latest_targets())
    apps = migrate(BEFORE)
    Revision = apps.get_model("designs", "Revision")
    assert dict(Revision.objects.values_list("pk", "status")) == {submitted.pk: "submitted", draft.pk: "draft"}
