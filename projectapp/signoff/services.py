"""Signing a revision and archiving its record.

A revision can be signed when every blocker it raises is waived by an approver and every warning has a
disposition. Each role the team requires signs once, after re-entering their password. Every signature
builds the PDF record with itself in it before it is accepted, the first one included: a record that
can't be built is found while the review can still change, and the signature is refused with a message
(nothing is recorded). The last signature stores the PDF through Django's storage with its SHA-256, and
marks the product's previous record superseded (by adding a Supersession row; the old record itself
never changes).

The revision's state moves through designs.lifecycle, which also takes the locks: the first signature
moves it from in review to signing (the review freezes), the last to signed, superseding the product's older
signed revision and withdrawing older ones still unsigned. What the review must settle first is the
review's own rule (reviews.gate).
"""

import hashlib
import json
import logging
from dataclasses import dataclass, field

from django.contrib.auth import get_user_model
from django.core.exceptions import PermissionDenied
from django.core.files.base import ContentFile
from django.db import transaction
from django.urls import reverse

from projectapp.audit.models import AuditEvent
from projectapp.designs import lifecycle
from projectapp.designs.models import Revision
from projectapp.notices.models import Notice
from projectapp.notices.services import notify
from projectapp.reviews import gate
from projectapp.reviews.models import EvidenceAttachment, ProcessStep
from projectapp.signoff.models import MEANINGS, Signature, SignedRecord, Supersession
from projectapp.teams.access import has_role
from projectapp.teams.models import Role
from projectapp.teams.password_checks import is_locked_out, password_is_right

logger = logging.getLogger(__name__)


class SigningError(ValueError):
    """A signature that can't be recorded; the message says why, naming the field when there is one."""


class RecordBuildError(SigningError):
    """The PDF record could not be built, so the signature that needed it was not recorded."""


@dataclass
class Readiness:
    revision: Revision
    obstacles: list[str] = field(default_factory=list)
    required_roles: list[str] = field(default_factory=list)
    signed_roles: list[str] = field(default_factory=list)

    @property
    def ready(self) -> bool:
        return not self.obstacles

    @property
    def missing_roles(self) -> list[str]:
        return [role for role in self.required_roles if role not in self.signed_roles]


def readiness(revision: Revision) -> Readiness:
    """What still stands in the way of signing: the revision's state, then the review's items (reviews.gate)."""
    state = Readiness(revision, required_roles=list(revision.product.team.signoff_roles))
    state.signed_roles = list(revision.signatures.values_list("role", flat=True))
    State = Revision.State
    if revision.state == State.DRAFT:
        state.obstacles.append(f"Design revision {revision.number} is a draft: submit it for review first.")
        return state
    if revision.state in (State.SIGNED, State.SUPERSEDED):
        return state
    newer = newer_record(revision)
    if newer is not None:
        state.obstacles.append(newer_record_obstacle(revision, newer))
    elif revision.state == State.WITHDRAWN:
        state.obstacles.append(f"Design revision {revision.number} was withdrawn from review, so it can't be signed. "
                               "To go back to this design, start a new draft from it.")
    if revision.state != State.WITHDRAWN:
        state.obstacles += gate.item_obstacles(revision)
    return state


def record_fingerprint(revision: Revision) -> str:
    """SHA-256 over what the record attests: the design, its checklist, the decisions and the signatures."""
    content = {
        "product": revision.product.name,
        "revision": revision.number,
        "document": revision.document,
        "evaluation": revision.evaluation,
        "decisions": [
            [item.rule_id, item.subjects_key, item.kind, item.severity, item.disposition, item.justification,
             item.decided_by.username if item.decided_by else None,
             # provenance: when and where it was decided, on which severity, what was carried, who confirmed
             item.decided_at.isoformat() if item.decided_at else None,
             item.decided_in.number if item.decided_in else None, item.decided_severity,
             item.carried_from.number if item.carried_from else None, item.carried_confirmed,
             item.confirmed_by.username if item.confirmed_by else None,
             item.confirmed_at.isoformat() if item.confirmed_at else None]
            for item in revision.review_items.order_by("id").defer("finding", "previous_decision")
            .with_provenance()
        ],
        "signatures": [[s.role, s.signer.username, s.signer_name, s.signed_at.isoformat()]
                       for s in revision.signatures.order_by("id").select_related("signer")],
    }
    steps = [[step.item.rule_id, step.item.subjects_key, step.status, step.owner.username if step.owner else None,
              step.planned_on.isoformat() if step.planned_on else None, step.reference]
             for step in ProcessStep.objects.filter(revision=revision).select_related("item", "owner").order_by("id")]
    if steps:  # records signed before steps existed keep their fingerprint
        content["steps"] = steps
    evidence = list(EvidenceAttachment.objects.filter(revision=revision).order_by("id").values_list("name", "sha256"))
    if evidence:
        content["evidence"] = [list(pair) for pair in evidence]
    canonical = json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(canonical.encode("utf-8")).hexdigest()


def newer_record(revision: Revision) -> SignedRecord | None:
    """The record of a later revision of the same product, if one is signed (designs.lifecycle.newer_signed)."""
    newer = lifecycle.newer_signed(revision)
    return None if newer is None else SignedRecord.objects.select_related("revision").get(revision=newer)


def newer_record_obstacle(revision: Revision, newer: SignedRecord) -> str:
    return (f"Design revision {newer.revision.number} of {revision.product.name} is already signed and archived, so "
            f"design revision {revision.number} can no longer be signed: its record would compete with the newer one as "
            "the current record. To go back to this design, start a new revision from it.")


def revision_sign(*, revision: Revision, user, role: str, password: str, request) -> Signature:
    """`request` is the HTTP request the password came with: the password check counts towards the same
    lock as log-ins (teams/password_checks.py), per user name and address. It runs before the transaction,
    so a wrong password stays counted when the signing is refused."""
    if not password_is_right(request, user, password):
        if is_locked_out(request):
            raise SigningError("password: too many wrong passwords; password checks are locked for a while")
        raise SigningError("password: that is not your password")
    return _revision_sign_checked(revision=revision, user=user, role=role)


@transaction.atomic
def _revision_sign_checked(*, revision: Revision, user, role: str) -> Signature:
    # designs.lifecycle takes the locks, always in this order: the product (signatures of all its revisions take
    # turns, so a record is archived knowing every other one), then the revision (review writes take only this
    # one, and never the product after it, so the two can't deadlock). Every check below runs under them.
    try:
        revision = lifecycle.lock_for_signing(revision)
    except lifecycle.IllegalTransition as refused:
        newer = newer_record(refused.revision)
        raise SigningError(newer_record_obstacle(refused.revision, newer) if newer else str(refused)) from refused
    team = revision.product.team
    if role not in team.signoff_roles:
        raise SigningError(f"role: {team.name} does not require a {role} signature")
    if not has_role(user, team, role):
        raise PermissionDenied(f"Signing as {role} needs the {role} role in {team.name}.")
    state = readiness(revision)
    if not state.ready:
        raise SigningError(f"Design revision {revision.number} can't be signed yet: {len(state.obstacles)} item(s) stand "
                           "in the way.")
    if role in state.signed_roles:
        raise SigningError(f"role: the {role} signature is already recorded")
    if not team.allow_dual_signing and revision.signatures.filter(signer=user).exists():
        raise SigningError(f"{team.name} requires a different person for each role; you have signed already.")
    signature = Signature.objects.create(
        revision=revision, role=role, signer=user, signer_name=user.get_full_name() or user.get_username(),
        meaning=MEANINGS[Role(role)])
    lifecycle.signature_recorded(
        revision=revision, user=user, changes={"signature": [None, role]},
        summary=f"Signed design revision {revision.number} as {role} ({signature.meaning.split(':')[0]})")
    missing = [r for r in team.signoff_roles if r not in (*state.signed_roles, role)]
    if not missing:
        record = record_archive(revision=revision, user=user)
        _tell_signed(revision=revision, record=record, user=user)
    else:
        record_build(revision=revision)  # built, not stored: see the module docstring
        _tell_signature_awaited(revision=revision, roles=missing, user=user)
    return signature


def _tell_signature_awaited(*, revision: Revision, roles: list[str], user) -> None:
    """After a signature, the people who may give a missing one (not the signer) are told theirs is awaited."""
    team = revision.product.team
    signers = set(revision.signatures.values_list("signer_id", flat=True)) if not team.allow_dual_signing else set()
    people = get_user_model().objects.filter(memberships__team=team, memberships__role__in=roles).exclude(
        pk__in=signers).distinct()
    notify(recipients=people, team=team, kind=Notice.Kind.SIGNATURE, actor=user,
           url=reverse("signoff_page", args=[revision.product_id, revision.number]),
           text=f"{revision.product.name}, design revision {revision.number}: a {' or '.join(roles)} signature "
                f"is awaited ({user.get_full_name() or user.get_username()} has signed)",
           event_key=f"signature:{revision.pk}:{revision.signatures.count()}")


def _tell_signed(*, revision: Revision, record: SignedRecord, user) -> None:
    """Everyone who took part in the revision's life (its audit trail's people) is told it is signed."""
    involved = set(AuditEvent.objects.filter(revision=revision).values_list("actor_id", flat=True))
    notify(recipients=get_user_model().objects.filter(pk__in=involved), team=revision.product.team,
           kind=Notice.Kind.SIGNED, actor=user, url=reverse("record_detail", args=[record.pk]),
           text=f"{revision.product.name}, design revision {revision.number} is signed and its record archived",
           event_key=f"signed:{revision.pk}")


def record_build(*, revision: Revision) -> tuple[str, bytes]:
    """The record's fingerprint and PDF as they stand (signatures so far included)."""
    from projectapp.signoff.pdf import build_record_pdf

    fingerprint = record_fingerprint(revision)
    try:
        return fingerprint, build_record_pdf(revision, fingerprint=fingerprint)
    except Exception as error:  # noqa: BLE001 (any failure: the signature is refused with a message, not a 500)
        logger.exception("the PDF record of %s could not be built", revision)
        earlier = revision.signatures.count() > 1  # the signature being refused is already in the count
        raise RecordBuildError(
            f"The PDF record of design revision {revision.number} could not be built ({type(error).__name__}), so your "
            "signature was not recorded and nothing changed"
            + (": the signatures already given stand." if earlier else ": the review is still open.")
            + " The server log has the cause for whoever runs Earshot; sign again once it is fixed.") from error


def record_archive(*, revision: Revision, user) -> SignedRecord:
    """At the last signature (the revision locked and being signed): builds the PDF, stores it with its
    SHA-256, moves the revision to signed, and supersedes the product's previous current record."""
    fingerprint, pdf_bytes = record_build(revision=revision)
    sha256 = hashlib.sha256(pdf_bytes).hexdigest()
    record = SignedRecord(revision=revision, sha256=sha256, size_bytes=len(pdf_bytes), fingerprint=fingerprint)
    # ASCII and short: a name of emoji or CJK would be too long for a file system (255 bytes) and the field.
    slug = "".join(ch if ch.isascii() and ch.isalnum() else "-" for ch in revision.product.name.lower())
    slug = "-".join(part for part in slug.split("-") if part)[:40].strip("-") or "product"
    record.pdf.save(f"{slug}-rev{revision.number}-{sha256[:12]}.pdf", ContentFile(pdf_bytes), save=False)
    record.save()
    signed = lifecycle.sign(revision=revision, user=user, changes={"sha256": [None, sha256]},
                            summary=f"Archived the signed record of revision {revision.number} "
                                    f"(SHA-256 {sha256[:16]}…)")
    for older in SignedRecord.objects.filter(revision__in=[older.pk for older in signed.superseded]):
        Supersession.objects.create(older=older, newer=record)
    return record


def find_record_by_content(content: bytes, *, records) -> SignedRecord | None:
    return records.filter(sha256=hashlib.sha256(content).hexdigest()).first()
