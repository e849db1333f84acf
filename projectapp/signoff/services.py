"""Signing a revision and archiving its record.

A revision can be signed when every blocker it raises is waived by an approver and every warning has a
disposition. Each role the team requires signs once, after re-entering their password. Every signature
builds the PDF record with itself in it before it is accepted, the first one included: a record that
can't be built is found while the review can still change, and the signature is refused with a message
(nothing is recorded). The last signature stores the PDF through Django's storage with its SHA-256, and
marks the product's previous record superseded (by adding a Supersession row; the old record itself
never changes).
"""

import hashlib
import json
import logging
from dataclasses import dataclass, field

from django.core.exceptions import PermissionDenied
from django.core.files.base import ContentFile
from django.db import transaction

from projectapp.designs.models import Product, Revision
from projectapp.reviews.models import AuditEvent, Disposition, ReviewItem
from projectapp.reviews.services import approver_ids
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
    """What still stands in the way of signing, item by item."""
    state = Readiness(revision, required_roles=list(revision.product.team.signoff_roles))
    state.signed_roles = list(revision.signatures.values_list("role", flat=True))
    if revision.is_draft:
        state.obstacles.append(f"Design revision {revision.number} is a draft: submit it for review first.")
        return state
    newer = None if hasattr(revision, "signed_record") else newer_record(revision)
    if newer is not None:
        state.obstacles.append(newer_record_obstacle(revision, newer))
    items = (revision.review_items.filter(kind=ReviewItem.Kind.RAISED).order_by("id")
             .with_provenance())
    approvers = approver_ids(revision.product.team)
    for item in items:
        label = f"{item.rule_id} {item.title}"
        if item.is_carried_unconfirmed and item.severity in ("blocker", "warning"):
            state.obstacles.append(f"{label}: the decision carried from design revision {item.carried_from.number} "
                                   "is not confirmed yet.")
        elif item.severity == "blocker" and item.disposition != Disposition.WAIVED:
            state.obstacles.append(f"{label}: a blocker must be waived by an approver "
                                   f"(now: {item.get_disposition_display().lower()}).")
        elif item.severity == "blocker" and (item.waiver_authority is None
                                             or item.waiver_authority.pk not in approvers):
            state.obstacles.append(f"{label}: a blocker must be waived by an approver (now: {_waiver_text(item)}); "
                                   "an approver must grant or confirm the waiver.")
        elif item.severity == "warning" and item.disposition not in (Disposition.CHANGE, Disposition.WAIVED,
                                                                     Disposition.NOT_APPLICABLE):
            state.obstacles.append(f"{label}: a warning needs a disposition "
                                   f"(now: {item.get_disposition_display().lower()}).")
    return state


def _waiver_text(item: ReviewItem) -> str:
    by = item.confirmed_by or item.decided_by
    text = f"waived by {by.get_username()}" if by else "waived"
    if item.confirmed_by_id:
        text += " (confirmed)"
    if item.decided_severity and item.decided_severity != item.severity:
        text += f", granted when it was a {item.decided_severity}"
    return text


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
    canonical = json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(canonical.encode("utf-8")).hexdigest()


def newer_record(revision: Revision) -> SignedRecord | None:
    """The record of a later revision of the same product, if one is archived."""
    return (SignedRecord.objects.filter(revision__product_id=revision.product_id, revision__number__gt=revision.number)
            .select_related("revision").order_by("-revision__number").first())


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
    # Locks, always in this order: the product (signatures of all its revisions take turns, so a record is
    # archived knowing every other record), then the revision (review writes take only this one, and
    # never the product after it, so the two can't deadlock). Every check below runs under them.
    list(Product.objects.select_for_update().filter(pk=revision.product_id).values_list("pk", flat=True))
    revision = Revision.objects.select_for_update().select_related("product__team").get(pk=revision.pk)
    team = revision.product.team
    if hasattr(revision, "signed_record"):
        raise SigningError("This revision is already signed and archived.")
    # Refused rather than archived as superseded at once: the newer record is the one in force, and an
    # older design becomes current again only through a new revision that everyone signs.
    newer = newer_record(revision)
    if newer is not None:
        raise SigningError(newer_record_obstacle(revision, newer))
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
    AuditEvent.objects.create(product=revision.product, revision=revision, actor=user,
                              action=AuditEvent.Action.SIGNED,
                              summary=f"Signed design revision {revision.number} as {role} ({signature.meaning.split(':')[0]})",
                              changes={"signature": [None, role]})
    if not [r for r in team.signoff_roles if r not in (*state.signed_roles, role)]:
        record_archive(revision=revision, user=user)
    else:
        record_build(revision=revision)  # built, not stored: see the module docstring
    return signature


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
    """Builds the PDF, stores it with its SHA-256, and supersedes the product's previous current record."""
    fingerprint, pdf_bytes = record_build(revision=revision)
    sha256 = hashlib.sha256(pdf_bytes).hexdigest()
    record = SignedRecord(revision=revision, sha256=sha256, size_bytes=len(pdf_bytes), fingerprint=fingerprint)
    # ASCII and short: a name of emoji or CJK would be too long for a file system (255 bytes) and the field.
    slug = "".join(ch if ch.isascii() and ch.isalnum() else "-" for ch in revision.product.name.lower())
    slug = "-".join(part for part in slug.split("-") if part)[:40].strip("-") or "product"
    record.pdf.save(f"{slug}-rev{revision.number}-{sha256[:12]}.pdf", ContentFile(pdf_bytes), save=False)
    record.save()
    earlier = (SignedRecord.objects.filter(revision__product=revision.product, revision__number__lt=revision.number)
               .exclude(pk=record.pk).exclude(supersession__isnull=False))
    for older in earlier:
        Supersession.objects.create(older=older, newer=record)
    AuditEvent.objects.create(product=revision.product, revision=revision, actor=user,
                              action=AuditEvent.Action.ARCHIVED,
                              summary=f"Archived the signed record of design revision {revision.number} "
                                      f"(SHA-256 {sha256[:16]}…)", changes={"sha256": [None, sha256]})
    return record


def find_record_by_content(content: bytes, *, records) -> SignedRecord | None:
    return records.filter(sha256=hashlib.sha256(content).hexdigest()).first()
