"""A revision's life, in one place: its states, which changes of state are allowed, the row locks each change
takes, and the audit event each writes. No other code changes `Revision.state` (the model's save() refuses it).

    draft ──submit──▶ in review ──first signature──▶ signing ──last signature──▶ signed ──newer signed──▶ superseded
                          │                             │
                          └──────────┬──────────────────┘
                                     ▼
                                 withdrawn

- *Withdrawn* is the end of a revision that was never signed: its author withdrew it from review, a newer
  revision of the product was submitted while it was still in review (the newer one's review carries its
  decisions), or a newer revision was signed while it was in review or being signed (the newer record is the
  one in force, so it can never be signed). It stays readable with its checklist and decisions.
- *Superseded* is the end of a signed revision: a newer revision's record replaced its record (the sign-off
  app keeps the link between the two records).
- Nothing goes back. To return to an earlier design, *start a draft from it*: a new draft copied from that
  revision (designs.services.draft_get_or_start), checked by the current rule set.

Locks: a change that concerns one revision locks its row (select_for_update); one where two revisions of a
product interact (submitting, which withdraws older ones in review; signing, which supersedes or withdraws
older ones) locks the product's row first, then the revisions', always in that order. Review writes take only
the revision's lock, and never a product's after it, so they can't deadlock with either. Every lock is FOR NO
KEY UPDATE (PostgreSQL): it makes writers of the same rows take turns, but lets through the foreign-key checks
PostgreSQL makes at commit for rows that point at a locked product or revision (an audit event, a review
item). A plain FOR UPDATE blocks those checks: a review write committing its audit event (which points at the
product) would wait for a signature holding the product, while the signature waits for the review write's
revision: a deadlock (tests/web/test_signing_concurrency.py found it).

Callers (the review and sign-off apps, the design services) run these inside their own transaction, after
their permission checks; each function checks its state under the lock and raises IllegalTransition, with
nothing changed, when the revision is not where the change starts. After a change commits, `state_changed`
is sent (for notifications: a side effect that must neither block nor undo a transition).
"""

from dataclasses import dataclass, field
from typing import Any

from django.db import transaction
from django.dispatch import Signal
from django.utils import timezone

from projectapp.audit.models import AuditEvent
from projectapp.audit.services import audit_record
from projectapp.designs import checklists
from projectapp.designs.models import Product, Revision
from rules.evaluate import CHECKLIST_FORMAT
from rules.registry import RULESET_VERSION

State = Revision.State

# (from, to): what makes the change. Every pair not listed is refused.
TRANSITIONS: dict[tuple[str, str], str] = {
    (State.DRAFT, State.IN_REVIEW): "an author submits it for review",
    (State.IN_REVIEW, State.SIGNING): "the first signature (the review freezes)",
    (State.SIGNING, State.SIGNED): "the last required signature (the record is archived)",
    (State.SIGNED, State.SUPERSEDED): "a newer revision of the product is signed",
    (State.IN_REVIEW, State.WITHDRAWN): "an author withdraws it, or a newer revision is submitted or signed",
    (State.SIGNING, State.WITHDRAWN): "a newer revision of the product is signed",
}
SIGNING_STARTED = (State.SIGNING, State.SIGNED, State.SUPERSEDED)
WHAT_IT_TAKES = {  # to: the states a change to it starts from, in words, for the refusal
    State.IN_REVIEW: "only a draft can be submitted for review",
    State.SIGNING: "only a revision in review can start signing",
    State.SIGNED: "only a revision being signed can be archived as signed",
    State.SUPERSEDED: "only a signed revision can be superseded",
    State.WITHDRAWN: "only a revision in review can be withdrawn",
    State.DRAFT: "no revision becomes a draft again: start a new draft from it",
}

state_changed = Signal()  # sent on commit: revision_id, product_id, before, after, actor_id


class IllegalTransition(Exception):
    """A change of state the table doesn't allow from where the revision is; nothing was changed."""

    def __init__(self, revision: Revision, to: str, detail: str = ""):
        self.revision, self.to = revision, to
        super().__init__(detail or f"Revision {revision.number} of {revision.product.name} is "
                                   f"{State(revision.state).label.lower()}: {WHAT_IT_TAKES[State(to)]}.")


def check(revision: Revision, to: str) -> None:
    """Raises IllegalTransition unless the table allows `revision` to go from its state to `to`."""
    if (revision.state, to) not in TRANSITIONS:
        raise IllegalTransition(revision, to)


# -- locks -----------------------------------------------------------------------------------------------------
def lock(revision: Revision | int) -> Revision:
    """The revision's row, locked until the transaction ends and read afresh (with its product and team)."""
    pk = revision if isinstance(revision, int) else revision.pk
    return Revision.objects.select_for_update(of=("self",), no_key=True).select_related("product__team").get(pk=pk)


def lock_with_product(revision: Revision) -> Revision:
    """The product's row, then the revision's: for changes where two revisions of a product interact."""
    list(Product.objects.select_for_update(no_key=True).filter(pk=revision.product_id).values_list("pk", flat=True))
    return lock(revision)


def _older(revision: Revision, states: tuple[str, ...]) -> list[Revision]:
    """The product's earlier revisions in `states`, locked (the product's lock is held), oldest first."""
    return list(Revision.objects.select_for_update(of=("self",), no_key=True).select_related("product__team")
                .filter(product_id=revision.product_id, number__lt=revision.number, state__in=states)
                .order_by("number"))


# -- the one place a state changes -------------------------------------------------------------------------------
def _move(revision: Revision, to: str, *, user, action: str, summary: str, changes: dict[str, Any] | None = None,
          **values: Any) -> Revision:
    """Moves a locked revision to `to` (with `values`, columns written in the same update) and records it."""
    check(revision, to)
    before, now = revision.state, timezone.now()
    updated = Revision.objects.filter(pk=revision.pk, state=before).update(state=to, state_changed_at=now, **values)
    if updated != 1:  # the row lock makes this impossible; refuse rather than write over a change
        raise IllegalTransition(revision, to, f"Revision {revision.number} changed state meanwhile; nothing was done.")
    revision.state, revision.state_changed_at = to, now
    for name, value in values.items():
        setattr(revision, name, value)
    audit_record(product=revision.product, revision=revision, actor=user, action=action, summary=summary,
                 changes={"state": [before, to], **(changes or {})})
    revision_id, product_id, actor_id = revision.pk, revision.product_id, getattr(user, "pk", None)
    transaction.on_commit(lambda: state_changed.send(sender=Revision, revision_id=revision_id,
                                                     product_id=product_id, before=before, after=to,
                                                     actor_id=actor_id))
    return revision


# -- submitting ------------------------------------------------------------------------------------------------------
@transaction.atomic
def submit(*, revision: Revision, user) -> Revision:
    """draft → in review: freezes the design with its checklist and rule set (evaluated now, under the lock, from
    the document as stored), and withdraws the product's older revisions still in review (the new review carries
    their decisions). Raises DesignError (nothing changes) for a design that can't be checked or a rule that could
    not run, IllegalTransition for a revision that is not a draft. The caller opens the review."""
    current = lock_with_product(revision)
    check(current, State.IN_REVIEW)
    return _freeze(current, checklists.evaluation_to_freeze(current), user=user,
                   summary=f"Submitted design revision {current.number} for review")


@transaction.atomic
def submit_with_earlier_checklist(*, revision: Revision, evaluation: dict[str, Any], user) -> Revision:
    """draft → in review with the checklist an earlier release of Earshot froze for this very design, under its
    older rule set: how a revision kept from an earlier release is loaded (the demo loads one, so that the
    rule-set upgrade page has something to show). Refused (ValueError, nothing changed) unless the checklist is
    one the engine writes, of an older rule set, for this design's product and board revision."""
    current = lock_with_product(revision)
    check(current, State.IN_REVIEW)
    design = evaluation.get("design", {}) if isinstance(evaluation, dict) else {}
    product = current.document.get("product", {}) if isinstance(current.document, dict) else {}
    if evaluation.get("format") != CHECKLIST_FORMAT or not isinstance(evaluation.get("findings"), list):
        raise ValueError(f"evaluation: expected a checklist of format {CHECKLIST_FORMAT}")
    if evaluation.get("ruleset") == RULESET_VERSION:
        raise ValueError("evaluation: it is the current rule set's; submit the revision instead")
    if (design.get("product"), design.get("revision")) != (product.get("name"), product.get("revision")):
        raise ValueError("evaluation: it was made for another design (product name and board revision differ)")
    return _freeze(current, evaluation, user=user,
                   summary=f"Loaded design revision {current.number} as an earlier release froze it for review")


def _freeze(current: Revision, evaluation: dict[str, Any], *, user, summary: str) -> Revision:
    values = {"evaluation": evaluation, "ruleset": evaluation["ruleset"], "submitted_by": user,
              "submitted_at": timezone.now(), **checklists.counts_of(evaluation)}
    _move(current, State.IN_REVIEW, user=user, action=AuditEvent.Action.SUBMITTED,
          summary=f"{summary} (rule set {evaluation['ruleset']})",
          changes={"ruleset": [None, evaluation["ruleset"]]}, **values)
    for older in _older(current, (State.IN_REVIEW,)):
        _move(older, State.WITHDRAWN, user=user, action=AuditEvent.Action.WITHDRAWN,
              summary=f"Withdrew revision {older.number} from review: revision {current.number} was submitted for "
                      "review and carries its decisions")
    return current


@transaction.atomic
def withdraw(*, revision: Revision, user, reason: str = "") -> Revision:
    """in review → withdrawn, on an author's word. A revision whose signing has started is withdrawn only by a
    newer revision's signing (its signatures were given on a frozen review)."""
    current = lock(revision)
    if current.state != State.IN_REVIEW:
        raise IllegalTransition(current, State.WITHDRAWN)
    return _move(current, State.WITHDRAWN, user=user, action=AuditEvent.Action.WITHDRAWN,
                 summary=f"Withdrew revision {current.number} from review" + (f": {reason}" if reason else ""),
                 changes={"reason": [None, reason]} if reason else None)


# -- the review ------------------------------------------------------------------------------------------------------
def is_review_open(revision: Revision) -> bool:
    """Decisions, assignments and comments are taken only while the revision is in review."""
    return revision.state == State.IN_REVIEW


def review_open_in_database(revision_ids) -> bool:
    """Whether every revision of `revision_ids` (an id or a queryset of ids) is in review, read from the rows."""
    found = Revision.objects.filter(pk__in=revision_ids if not isinstance(revision_ids, int) else [revision_ids])
    return not found.exclude(state=State.IN_REVIEW).exists()


def is_signing_started(revision_id: int) -> bool:
    return Revision.objects.filter(pk=revision_id, state__in=SIGNING_STARTED).exists()


def review_closed_reason(revision: Revision) -> str:
    return {
        State.DRAFT: "A draft is not under review.",
        State.SIGNING: "Signing has started: the review of this revision is frozen.",
        State.SIGNED: f"Revision {revision.number} is signed: its review is frozen.",
        State.SUPERSEDED: f"Revision {revision.number} is signed (and superseded since): its review is frozen.",
        State.WITHDRAWN: f"Revision {revision.number} was withdrawn: its review is closed.",
    }.get(State(revision.state), "")


# -- signing ------------------------------------------------------------------------------------------------------
def newer_signed(revision: Revision) -> Revision | None:
    """A later revision of the same product that is signed (its record current or superseded), the latest."""
    return (Revision.objects.filter(product_id=revision.product_id, number__gt=revision.number,
                                    state__in=(State.SIGNED, State.SUPERSEDED)).order_by("-number").first())


def lock_for_signing(revision: Revision) -> Revision:
    """The product's lock, then the revision's, for a signature: the revision as it is now, in review or being
    signed, or IllegalTransition (already signed, withdrawn, a draft)."""
    current = lock_with_product(revision)
    if current.state not in (State.IN_REVIEW, State.SIGNING):
        raise IllegalTransition(current, State.SIGNING, {
            State.DRAFT: f"Revision {current.number} is a draft: submit it for review first.",
            State.SIGNED: "This revision is already signed and archived.",
            State.SUPERSEDED: "This revision is already signed and archived (and superseded since).",
        }.get(State(current.state), ""))
    return current


def signature_recorded(*, revision: Revision, user, summary: str, changes: dict[str, Any]) -> Revision:
    """After a signature is stored (under lock_for_signing's locks): the first moves the revision to signing,
    freezing its review; every one is recorded."""
    if revision.state == State.IN_REVIEW:
        return _move(revision, State.SIGNING, user=user, action=AuditEvent.Action.SIGNED, summary=summary,
                     changes=changes)
    if revision.state != State.SIGNING:
        raise IllegalTransition(revision, State.SIGNING)
    audit_record(product=revision.product, revision=revision, actor=user, action=AuditEvent.Action.SIGNED,
                 summary=summary, changes=changes)
    return revision


@dataclass
class Signed:
    revision: Revision
    superseded: list[Revision] = field(default_factory=list)  # their records are replaced by this one's
    withdrawn: list[Revision] = field(default_factory=list)


def sign(*, revision: Revision, user, summary: str, changes: dict[str, Any]) -> Signed:
    """signing → signed, once the record is archived (under lock_for_signing's locks). The product's older signed
    revision is superseded, and its older revisions still in review or being signed are withdrawn: they can never
    be signed now."""
    outcome = Signed(_move(revision, State.SIGNED, user=user, action=AuditEvent.Action.ARCHIVED, summary=summary,
                           changes=changes))
    for older in _older(revision, (State.SIGNED, State.IN_REVIEW, State.SIGNING)):
        if older.state == State.SIGNED:
            outcome.superseded.append(_move(
                older, State.SUPERSEDED, user=user, action=AuditEvent.Action.SUPERSEDED,
                summary=f"Revision {older.number} superseded: revision {revision.number} is signed, and its record "
                        "is the one in force"))
        else:
            outcome.withdrawn.append(_move(
                older, State.WITHDRAWN, user=user, action=AuditEvent.Action.WITHDRAWN,
                summary=f"Withdrew revision {older.number}: revision {revision.number} is signed, so revision "
                        f"{older.number} can no longer be signed"))
    return outcome
