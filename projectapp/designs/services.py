"""Every write to products and revisions goes through these functions (keyword-only, `<entity>_<action>`)."""

import json
from typing import Any

from django.core.exceptions import PermissionDenied
from django.core.files.base import ContentFile
from django.db import transaction
from django.utils import timezone

from projectapp.designs.checklists import measurement_reader
from projectapp.designs.models import MeasurementFile, Product, Revision
from projectapp.reviews.services import review_items_create
from projectapp.teams.access import has_role, require_role
from projectapp.teams.models import Role, Team
from rules.design import FORMAT, DesignError, Problem, decode_design_text, parse_design, storage_problems
from rules.evaluate import evaluate
from rules.measurements import attach_measurements
from rules.registry import RULESET_VERSION
from rules.touchstone import parse_touchstone


def blank_document(*, product_name: str) -> dict[str, Any]:
    return {
        "format": FORMAT,
        "product": {"name": product_name, "revision": "1"},
        "modem": {"category": "cat-m1", "bands": []},
        "antennas": [],
    }


@transaction.atomic
def product_create(*, team: Team, name: str, description: str = "", user) -> Product:
    require_role(user, team, Role.AUTHOR)
    product = Product.objects.create(team=team, name=name, description=description, created_by=user)
    Revision.objects.create(product=product, number=1, document=blank_document(product_name=name), created_by=user)
    return product


def _copy_measurements(*, source: Revision, target: Revision, user) -> None:
    for measurement in source.measurement_files.all():
        with measurement.file.open("rb") as handle:
            content = handle.read()
        copy = MeasurementFile(revision=target, name=measurement.name, size_bytes=len(content),
                               sha256=MeasurementFile.digest(content), uploaded_by=measurement.uploaded_by or user)
        copy.file.save(measurement.name, ContentFile(content), save=False)
        copy.save()


@transaction.atomic
def draft_get_or_start(*, product: Product, user) -> Revision:
    """The product's draft; if there is none, a new one copied from the latest revision."""
    require_role(user, product.team, Role.AUTHOR)
    product = Product.objects.select_for_update().get(pk=product.pk)
    draft = product.draft
    if draft is not None:
        return draft
    latest = product.latest
    number = latest.number + 1 if latest else 1
    document = json.loads(json.dumps(latest.document)) if latest else blank_document(product_name=product.name)
    draft = Revision.objects.create(product=product, number=number, document=document, based_on=latest,
                                    created_by=user)
    if latest is not None:
        _copy_measurements(source=latest, target=draft, user=user)
    return draft


def require_storable(document: Any) -> None:
    """Raises DesignError, nothing stored, for a document no database can hold (NUL, lone surrogates, nesting
    or size beyond the parser's limits): every write of a design document passes here."""
    problems = storage_problems(document)
    if problems:
        raise DesignError(problems)


def draft_save_document(*, revision: Revision, document: dict[str, Any], user) -> Revision:
    """Stores what the questionnaire holds, valid or not: nothing typed is dropped (what can't be stored at all
    raises DesignError)."""
    require_role(user, revision.product.team, Role.AUTHOR)
    require_storable(document)
    revision.document = document
    revision.save(update_fields=["document", "updated_at"])
    return revision


@transaction.atomic
def revision_submit(*, revision: Revision, user) -> Revision:
    """Freezes a draft: the document, its checklist and the rule-set version, stored whole.

    Raises DesignError (nothing changes) when the design can't be evaluated yet, or when a rule could not run.
    """
    require_role(user, revision.product.team, Role.AUTHOR)
    revision = Revision.objects.select_for_update().get(pk=revision.pk)
    if not revision.is_draft:
        raise DesignError([Problem("", f"revision {revision.number} was already submitted")])
    design = parse_design(revision.document)
    measurements = attach_measurements(design, measurement_reader(revision))
    evaluation = evaluate(design, measurements)
    if evaluation.rule_failures:  # an incomplete checklist is not frozen for people to sign
        raise DesignError([Problem("", f"rule {failure.id} ({failure.title}) could not run on this design, so "
                                       "the checklist is incomplete; that is an error in Earshot, logged for the "
                                       "people who run it") for failure in evaluation.rule_failures])
    revision.evaluation = evaluation.as_dict()
    revision.ruleset = RULESET_VERSION
    revision.status = Revision.Status.SUBMITTED
    revision.submitted_by = user
    revision.submitted_at = timezone.now()
    revision.save()
    review_items_create(revision=revision, user=user)
    return revision


@transaction.atomic
def design_import(*, product: Product, text: str | bytes, source: str, user) -> Revision:
    """Puts an imported design file into the product's draft (starting one if needed).

    The file must be a valid design whose measurements name files the draft already has; otherwise
    DesignError lists every problem and nothing is stored.
    """
    document = decode_design_text(text, source=source)
    design = parse_design(document)
    draft = draft_get_or_start(product=product, user=user)
    attach_measurements(design, measurement_reader(draft))
    return draft_save_document(revision=draft, document=document, user=user)


def document_export_text(*, revision: Revision) -> str:
    """The revision's design file. Import of this text stores the same document, so export again is identical."""
    return json.dumps(revision.document, indent=2, ensure_ascii=False) + "\n"


MAX_MEASUREMENT_BYTES = 20_000_000
MEASUREMENT_SUFFIXES = (".s1p", ".s2p", ".s3p", ".s4p", ".s5p", ".s6p", ".s7p", ".s8p", ".ts")


def require_measurement_role(user, revision: Revision) -> None:
    """Authors and reviewers (the engineers who measure) may keep measurements with a draft."""
    team = revision.product.team
    if not (has_role(user, team, Role.AUTHOR) or has_role(user, team, Role.REVIEWER)):
        raise PermissionDenied("Adding measurements needs the author or reviewer role.")
    if not revision.is_draft:
        raise PermissionDenied("Measurements are added to a draft revision.")


def _safe_file_name(name: str) -> str:
    base = name.replace("\\", "/").rsplit("/", 1)[-1].strip()
    return "".join(ch if ch.isalnum() or ch in "._-, " else "-" for ch in base)[:120]


def measurement_add(*, revision: Revision, name: str, content: bytes, user) -> MeasurementFile:
    """Keeps a Touchstone file with a draft and maps its ports to the design's antennas in order.

    The file must parse; nothing is stored otherwise. Raises TouchstoneError (naming the file and line)
    or ValueError (naming what was expected) for a file that can't be kept.
    """
    require_measurement_role(user, revision)
    name = _safe_file_name(name)
    if not name.lower().endswith(MEASUREMENT_SUFFIXES):
        raise ValueError(f"{name or 'file'}: expected a Touchstone file named .s1p to .s8p or .ts")
    if len(content) > MAX_MEASUREMENT_BYTES:
        raise ValueError(f"{name}: expected at most {MAX_MEASUREMENT_BYTES // 1_000_000} MB, "
                         f"got {len(content) / 1_000_000:.1f} MB")
    if revision.measurement_files.filter(name=name).exists():
        raise ValueError(f"{name}: a file of that name is already kept with this draft; remove it first")
    network = parse_touchstone(content.decode("utf-8", errors="replace"), source=name)
    document = json.loads(json.dumps(revision.document))
    antennas = [a.get("name") for a in document.get("antennas", []) if isinstance(a, dict) and a.get("name")]
    ports = [antennas[index] if index < len(antennas) else None for index in range(network.port_count)]
    measurements = document.get("measurements") if isinstance(document.get("measurements"), list) else []
    document["measurements"] = [*measurements, {"file": name, "ports": ports}]
    with transaction.atomic():
        measurement = MeasurementFile(revision=revision, name=name, size_bytes=len(content),
                                      sha256=MeasurementFile.digest(content), uploaded_by=user)
        measurement.file.save(name, ContentFile(content), save=False)
        measurement.save()
        revision.document = document
        revision.save(update_fields=["document", "updated_at"])
    return measurement


def measurement_map_ports(*, revision: Revision, name: str, ports: list[str | None], user) -> Revision:
    """Sets which antenna each port of a kept file measured (None: not connected to an antenna)."""
    require_measurement_role(user, revision)
    document = json.loads(json.dumps(revision.document))
    for entry in document.get("measurements", []):
        if isinstance(entry, dict) and entry.get("file") == name:
            entry["ports"] = ports
    require_storable(document)
    revision.document = document
    revision.save(update_fields=["document", "updated_at"])
    return revision


@transaction.atomic
def measurement_remove(*, revision: Revision, name: str, user) -> None:
    require_measurement_role(user, revision)
    document = json.loads(json.dumps(revision.document))
    if isinstance(document.get("measurements"), list):
        document["measurements"] = [entry for entry in document["measurements"]
                                    if not (isinstance(entry, dict) and entry.get("file") == name)]
        if not document["measurements"]:
            del document["measurements"]
    revision.document = document
    revision.save(update_fields=["document", "updated_at"])
    for measurement in revision.measurement_files.filter(name=name):
        stored = measurement.file.name
        measurement.delete()
        transaction.on_commit(lambda stored=stored, storage=measurement.file.storage: storage.delete(stored))
