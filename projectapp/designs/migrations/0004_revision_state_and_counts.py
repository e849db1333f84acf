"""A revision's life becomes a stored state (designs.lifecycle), and each revision stores what lists show of it.

Today's rows say where a revision is only across three apps: its status (draft or submitted), its signatures,
its signed record and whether a later record superseded that. This migration reads them once and writes the
state, by the rules the life cycle applies from now on:

- a draft stays a draft; a submitted revision whose record was superseded is superseded; one with a record is
  signed;
- a submitted revision without a record is withdrawn when a later revision of the product is signed (it can
  never be signed now); otherwise it is signing when it has a signature, withdrawn when a later revision was
  submitted after it (the later review carries its decisions), and in review otherwise.

It also stores each revision's finding counts: a submitted revision's from its frozen checklist, a draft's by
evaluating it with the engine as it is now (the one time a migration runs the rules; a design that can't be
checked stores its problem count, or "not checked" if checking fails), and each product's latest revision.
Reversing it maps the states back to draft and submitted.
"""

import django.db.models.deletion
from django.conf import settings
from django.db import migrations, models
from django.db.models import Min


def _frozen_counts(evaluation):
    summary = (evaluation or {}).get("summary") or {}
    return {"category": str(((evaluation or {}).get("design") or {}).get("category") or "")[:16],
            "blockers": summary.get("blocker", 0), "warnings": summary.get("warning", 0),
            "notes": summary.get("note", 0), "rule_failures": len((evaluation or {}).get("rule_failures") or [])}


def _draft_counts(revision, files):
    from rules.design import DesignError, parse_design
    from rules.evaluate import evaluate
    from rules.measurements import attach_measurements
    from rules.registry import RULESET_VERSION

    def read_text(name):
        if name not in files:
            raise FileNotFoundError(2, "no file of that name is uploaded to this revision")
        with files[name].file.open("rb") as handle:
            return handle.read().decode("utf-8", errors="replace")

    modem = revision.document.get("modem") if isinstance(revision.document, dict) else None
    category = modem.get("category") if isinstance(modem, dict) and isinstance(modem.get("category"), str) else ""
    unchecked = {"category": category[:16], "blockers": None, "warnings": None, "notes": None,
                 "ruleset": RULESET_VERSION}
    try:
        design = parse_design(revision.document)
        checklist = evaluate(design, attach_measurements(design, read_text)).as_dict()
    except DesignError as error:
        return {**unchecked, "problems": len(error.problems)}
    except Exception:  # noqa: BLE001 (an error in the engine: the list says "not checked", the next save retries)
        return {**unchecked, "check_failed": True}
    return {**_frozen_counts(checklist), "ruleset": RULESET_VERSION}


def states_from_rows(apps, schema_editor):
    Product = apps.get_model("designs", "Product")
    Revision = apps.get_model("designs", "Revision")
    MeasurementFile = apps.get_model("designs", "MeasurementFile")
    Signature = apps.get_model("signoff", "Signature")
    SignedRecord = apps.get_model("signoff", "SignedRecord")
    Supersession = apps.get_model("signoff", "Supersession")
    recorded = dict(SignedRecord.objects.values_list("revision_id", "created_at"))
    superseded = dict(Supersession.objects.values_list("older__revision_id", "created_at"))
    first_signed = dict(Signature.objects.values("revision_id").annotate(first=Min("signed_at"))
                        .values_list("revision_id", "first"))
    for product_id in Product.objects.order_by("pk").values_list("pk", flat=True):
        revisions = list(Revision.objects.filter(product_id=product_id).order_by("number"))
        signed = [revision for revision in revisions if revision.pk in recorded]
        newest_signed = signed[-1] if signed else None
        for revision in revisions:
            later = [other for other in revisions if other.number > revision.number and other.status != "draft"]
            if revision.status == "draft":
                state, since = "draft", None
            elif revision.pk in superseded:
                state, since = "superseded", superseded[revision.pk]
            elif revision.pk in recorded:
                state, since = "signed", recorded[revision.pk]
            elif newest_signed is not None and newest_signed.number > revision.number:
                state, since = "withdrawn", recorded[newest_signed.pk]
            elif revision.pk in first_signed:
                state, since = "signing", first_signed[revision.pk]
            elif later:
                state, since = "withdrawn", later[0].submitted_at
            else:
                state, since = "in-review", revision.submitted_at
            if revision.status == "draft":
                files = {m.name: m for m in MeasurementFile.objects.filter(revision_id=revision.pk)}
                counts = _draft_counts(revision, files)
            else:
                counts = _frozen_counts(revision.evaluation)
            Revision.objects.filter(pk=revision.pk).update(state=state, state_changed_at=since, **counts)
        if revisions:
            Product.objects.filter(pk=product_id).update(latest_revision_id=revisions[-1].pk)


def statuses_from_states(apps, schema_editor):
    Revision = apps.get_model("designs", "Revision")
    Revision.objects.filter(state="draft").update(status="draft")
    Revision.objects.exclude(state="draft").update(status="submitted")


class Migration(migrations.Migration):

    dependencies = [
        ('designs', '0003_measurementfile_kind'),
        ('signoff', '0002_signature_signer_name_fits_full_name'),
        migrations.swappable_dependency(settings.AUTH_USER_MODEL),
    ]

    operations = [
        migrations.RemoveConstraint(
            model_name='revision',
            name='one_draft_per_product',
        ),
        migrations.AddField(
            model_name='product',
            name='latest_revision',
            field=models.ForeignKey(blank=True, editable=False, null=True, on_delete=django.db.models.deletion.SET_NULL, related_name='+', to='designs.revision'),
        ),
        migrations.AddField(
            model_name='revision',
            name='blockers',
            field=models.PositiveIntegerField(blank=True, null=True),
        ),
        migrations.AddField(
            model_name='revision',
            name='category',
            field=models.CharField(blank=True, max_length=16),
        ),
        migrations.AddField(
            model_name='revision',
            name='check_failed',
            field=models.BooleanField(default=False),
        ),
        migrations.AddField(
            model_name='revision',
            name='notes',
            field=models.PositiveIntegerField(blank=True, null=True),
        ),
        migrations.AddField(
            model_name='revision',
            name='problems',
            field=models.PositiveIntegerField(default=0),
        ),
        migrations.AddField(
            model_name='revision',
            name='rule_failures',
            field=models.PositiveIntegerField(default=0),
        ),
        migrations.AddField(
            model_name='revision',
            name='state',
            field=models.CharField(choices=[('draft', 'Draft'), ('in-review', 'In review'), ('signing', 'Signing'), ('signed', 'Signed'), ('superseded', 'Superseded'), ('withdrawn', 'Withdrawn')], default='draft', editable=False, max_length=16),
        ),
        migrations.AddField(
            model_name='revision',
            name='state_changed_at',
            field=models.DateTimeField(blank=True, editable=False, null=True),
        ),
        migrations.AddField(
            model_name='revision',
            name='warnings',
            field=models.PositiveIntegerField(blank=True, null=True),
        ),
        migrations.RunPython(states_from_rows, statuses_from_states),
        migrations.RemoveField(
            model_name='revision',
            name='status',
        ),
        migrations.AddConstraint(
            model_name='revision',
            constraint=models.UniqueConstraint(condition=models.Q(('state', 'draft')), fields=('product',), name='one_draft_per_product'),
        ),
        migrations.AddIndex(
            model_name='revision',
            index=models.Index(fields=['state', 'product'], name='revision_state_product'),
        ),
    ]
