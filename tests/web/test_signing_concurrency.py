"""Two sessions at once: a review write and a signature of the same revision, or signatures of two revisions.

Every review write (decide, assign, confirm, comment) and every signature takes the revision's row lock
before it checks anything, so one waits for the other and then sees what the other committed: a change
never lands after the first signature, and a signature never attests a review that moved under it.

The races need real row locks (SELECT ... FOR UPDATE), so they run on PostgreSQL (CI's second pass;
`DATABASE_URL=$(scripts/postgres.sh start) .venv/bin/python -m pytest tests/web/test_signing_concurrency.py`).
"""

import threading
from collections.abc import Callable

import pytest
from django.core.exceptions import PermissionDenied
from django.db import close_old_connections, connection, connections, transaction

from projectapp.designs import services as design_services
from projectapp.reviews import services as review_services
from projectapp.reviews.models import Comment, ReviewItem
from projectapp.reviews.services import revision_submit
from projectapp.signoff import services
from projectapp.signoff.models import SignedRecord
from tests.web.conftest import PASSWORD, signing_request

pytestmark = pytest.mark.django_db(transaction=True)

WAIT_S = 20  # generous: a blocked thread is released as soon as the other commits
BLOCKED_S = 0.5  # how long a thread that should be waiting on the lock is given to (wrongly) finish


@pytest.fixture(autouse=True)
def row_locks():
    if connection.vendor == "sqlite":
        pytest.skip("SQLite has no row locks (select_for_update is a no-op; a writer locks the whole file), so the "
                    "interleaving these tests force can't happen there; they run on PostgreSQL")


def in_thread(work: Callable[[], object], outcome: dict, key: str) -> threading.Thread:
    def run():
        close_old_connections()
        try:
            work()
            outcome[key] = "done"
        except (PermissionDenied, services.SigningError) as error:
            outcome[key] = f"refused: {error}"
        except Exception as error:  # noqa: BLE001 (reported to the test thread, which fails on it)
            outcome[key] = f"error: {type(error).__name__}: {error}"
        finally:
            connections.close_all()

    thread = threading.Thread(target=run, daemon=True)
    thread.start()
    return thread


def holding_lock(work: Callable[[], object], outcome: dict, key: str):
    """Runs `work` in a thread inside a transaction that stays open until the returned event is set."""
    started, release = threading.Event(), threading.Event()

    def hold():
        with transaction.atomic():
            work()
            started.set()
            release.wait(WAIT_S)

    thread = in_thread(hold, outcome, key)
    if not started.wait(WAIT_S):
        release.set()
        thread.join(WAIT_S)
        pytest.fail(f"the first session never got going: {outcome.get(key)}")
    return thread, release


def race(first: Callable[[], object], second: Callable[[], object], outcome: dict, keys: tuple[str, str]) -> bool:
    """Runs `first` and keeps its transaction open while `second` starts and is given BLOCKED_S to finish,
    then lets both finish. Returns whether `second` was still waiting when `first` let go."""
    holder, release = holding_lock(first, outcome, keys[0])
    waiter = in_thread(second, outcome, keys[1])
    waiter.join(BLOCKED_S)
    waited = waiter.is_alive()
    release.set()
    holder.join(WAIT_S)
    waiter.join(WAIT_S)
    return waited


@pytest.fixture
def ready(product, author, reviewer, approver):
    """Revision 1 of the hive gateway with every blocker waived and every warning dispositioned, and one note
    (RFX-001, the RF exposure note) marked not applicable."""
    revision = revision_submit(revision=product.draft, user=author)
    for item in revision.review_items.filter(kind="raised", severity__in=["blocker", "warning"]):
        review_services.review_item_decide(item=item, user=approver, disposition="waived",
                                           justification="Pilot of 20 units", expected_version=item.version)
    note = revision.review_items.get(rule_id="RFX-001", kind="raised")
    review_services.review_item_decide(item=note, user=reviewer, disposition="not-applicable",
                                       justification="Bench unit, nobody near it", expected_version=note.version)
    assert services.readiness(revision).ready
    return revision


def next_revision_ready(product, author, approver):
    """Design revision 2, unchanged: the approver confirms every carried blocker and warning decision."""
    draft = design_services.draft_get_or_start(product=product, user=author)
    revision = revision_submit(revision=draft, user=author)
    for item in revision.review_items.filter(kind="raised", severity__in=["blocker", "warning"]):
        review_services.review_item_confirm(item=item, user=approver, expected_version=item.version)
    assert services.readiness(revision).ready
    return revision


def sign(revision, user, role: str) -> Callable[[], object]:
    return lambda: services.revision_sign(revision=revision, user=user, role=role, password=PASSWORD, request=signing_request())


def review_writes(reviewer) -> dict[str, Callable[[ReviewItem], object]]:
    return {
        "decide": lambda item: review_services.review_item_decide(
            item=item, user=reviewer, disposition="change", justification="", expected_version=item.version),
        "assign": lambda item: review_services.review_item_assign(
            item=item, user=reviewer, assignee=reviewer, expected_version=item.version),
        "confirm": lambda item: review_services.review_item_confirm(
            item=item, user=reviewer, expected_version=item.version),
        "comment": lambda item: review_services.review_item_comment(item=item, user=reviewer, text="One more thing"),
    }


@pytest.mark.parametrize("write", ["decide", "assign", "confirm", "comment"])
def test_a_review_write_waits_for_a_first_signature_in_progress_and_is_then_refused(
        ready, product, author, reviewer, approver, write):
    revision = ready
    if write == "confirm":  # a carried decision (the note's) that is still to be confirmed, on revision 2
        revision = next_revision_ready(product, author, approver)
        item = revision.review_items.get(rule_id="RFX-001", kind="raised")
        assert item.is_carried_unconfirmed
    else:
        item = revision.review_items.get(rule_id="EFF-001", kind="raised")
    before = ReviewItem.objects.get(pk=item.pk)
    outcome: dict[str, str] = {}
    waited = race(sign(revision, author, "author"), lambda: review_writes(reviewer)[write](item), outcome,
                  ("sign", write))
    assert outcome["sign"] == "done"
    assert outcome[write].startswith("refused: Signing has started"), outcome[write]
    assert waited, "the review write did not wait for the revision's lock"
    after = ReviewItem.objects.get(pk=item.pk)
    assert (after.version, after.disposition, after.assignee_id) == (before.version, before.disposition,
                                                                     before.assignee_id)
    assert not Comment.objects.filter(item=item).exists()


def test_a_signature_waits_for_a_decision_in_progress_and_then_sees_it(ready, author, reviewer):
    item = ready.review_items.get(rule_id="EFF-001", kind="raised")
    outcome: dict[str, str] = {}
    # the reviewer reopens the warning ("needs discussion"): the revision is no longer ready to sign
    waited = race(lambda: review_services.review_item_decide(
        item=item, user=reviewer, disposition="discussion", justification="", expected_version=item.version),
        sign(ready, author, "author"), outcome, ("decide", "sign"))
    assert outcome["decide"] == "done"
    assert outcome["sign"].startswith("refused: Design revision 1 can't be signed yet"), outcome["sign"]
    assert waited and not ready.signatures.exists()


def test_two_revisions_signed_at_once_leave_one_current_record(ready, product, author, reviewer, approver):
    def first_two_signatures(revision):
        services.revision_sign(revision=revision, user=author, role="author", password=PASSWORD, request=signing_request())
        services.revision_sign(revision=revision, user=reviewer, role="reviewer", password=PASSWORD, request=signing_request())

    first_two_signatures(ready)  # being signed, revision 1 stays so when revision 2 is submitted (designs.lifecycle)
    newer = next_revision_ready(product, author, approver)
    first_two_signatures(newer)
    outcome: dict[str, str] = {}
    assert race(sign(newer, approver, "approver"), sign(ready, approver, "approver"), outcome, ("newer", "older"))
    assert outcome["newer"] == "done"
    assert outcome["older"].startswith("refused: Design revision 2 of"), outcome["older"]
    assert [record.revision.number for record in SignedRecord.objects.all() if record.is_current] == [2]
    ready.refresh_from_db()
    assert ready.state == "withdrawn"  # it can never be signed now

