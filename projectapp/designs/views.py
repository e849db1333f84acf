"""Views of products, the design questionnaire, revisions and the rule list.

Each view declares its methods and login requirement, fetches objects through designs.access (404 for
other teams), checks the role for writes (403), calls a service or the engine, and renders. A view that
htmx may call answers with the fragment it swaps; the same URL serves the full page without JavaScript.
"""

import logging
from functools import partial

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.cache import cache
from django.db import DatabaseError
from django.db.models import OuterRef, Subquery
from django.http import HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.views.decorators.http import require_GET, require_http_methods, require_POST

from projectapp import fragments
from projectapp.designs import questionnaire, services
from projectapp.designs.access import (
    get_product_for_user,
    get_revision_for_user,
    products_for,
    revision_facts,
)
from projectapp.designs.checklists import (
    CHECK_FAILED,
    ChecklistState,
    checklist_for,
    coverage_rows,
    frozen_state_key,
    load_measurements,
    state_key,
    summaries,
)
from projectapp.designs.forms import (
    ImportForm,
    MeasurementFileForm,
    PortMapForm,
    ProductForm,
    SectionActionForm,
)
from projectapp.designs.models import Revision
from projectapp.figures.charts import (
    chart_svg,
    correlation_chart,
    coverage_chart,
    isolation_chart,
    return_loss_chart,
)
from projectapp.figures.placement import pair_severities_from_findings, placement_svg
from projectapp.teams.access import has_role, teams_where
from projectapp.teams.models import Role
from rules.coverage import TABLE_COLUMNS
from rules.design import DesignError
from rules.registry import RETIRED, RULESET_VERSION, registered_rules
from rules.touchstone import TouchstoneError

logger = logging.getLogger(__name__)


@login_required
@require_GET
def product_list(request):
    newest = Revision.objects.filter(product=OuterRef("pk")).order_by("-number")
    products = list(products_for(request.user).annotate(**{
        f"latest_{name}": Subquery(newest.values(name)[:1]) for name in ("id", "number", "status", "updated_at")}))
    can_create = teams_where(request.user, Role.AUTHOR).exists()
    # Everything the page shows is named by these rows (a revision's counts follow from its id and when it
    # was last saved), so the rendered page is kept per rows.
    rows = tuple((product.pk, product.name, product.description, product.team.name, product.latest_id,
                  product.latest_number, product.latest_status, str(product.latest_updated_at))
                 for product in products)
    return fragments.page(request, "designs/product_list.html", ("products", rows, can_create),
                          lambda: _product_list_context(products, can_create))


def _product_list_context(products, can_create: bool) -> dict:
    rows = _product_rows(products)
    return {"rows": rows, "can_create": can_create,
            fragments.NOT_KEPT: any(row["summary"] and row["summary"].get("failed") for row in rows)}


def _product_rows(products) -> list[dict]:
    latest = {revision.pk: revision for revision in Revision.objects.filter(
        pk__in=[product.latest_id for product in products if product.latest_id]).prefetch_related(
        "measurement_files")}
    found = summaries(list(latest.values()))
    return [{"product": product, "latest": latest.get(product.latest_id), "summary": found.get(product.latest_id)}
            for product in products]


@login_required
@require_http_methods(["GET", "POST"])
def product_create(request):
    teams = teams_where(request.user, Role.AUTHOR)
    if not teams.exists():
        return render(request, "designs/no_role.html", {"role": "author"}, status=403)
    form = ProductForm(request.POST or None, teams=teams)
    if request.method == "POST" and form.is_valid():
        product = services.product_create(team=form.cleaned_data["team"], name=form.cleaned_data["name"],
                                          description=form.cleaned_data["description"], user=request.user)
        messages.success(request, f"{product.name} created with an empty draft. Fill in the questionnaire.")
        return redirect("draft_edit", product.pk)
    return render(request, "designs/product_form.html", {"form": form})


@login_required
@require_GET
def product_detail(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    revisions = list(product.revisions.select_related("created_by", "submitted_by"))
    return render(request, "designs/product_detail.html", {
        "product": product,
        "revisions": revisions,
        "is_author": has_role(request.user, product.team, Role.AUTHOR),
        "roles": product.team.roles_of(request.user),
    })


def _figures(state: ChecklistState, id_prefix: str) -> dict:
    """The panel's drawing, charts and coverage. A figure that fails to draw (a defect in Earshot) is left
    out and named in `failed_figures`; the page still comes up with the rest."""
    svg = coverage_svg = None
    charts: list[str] = []
    coverage: list[dict] = []
    failed: list[str] = []

    def attempt(what: str, draw):
        try:
            return draw()
        except DatabaseError:
            raise
        except Exception:
            logger.exception("drawing the %s of revision %s failed", what, state.revision.pk)
            failed.append(what)
            return None

    if state.design is not None and state.checklist is not None:
        design = state.design
        svg = attempt("placement drawing", lambda: placement_svg(
            design, pair_severities=pair_severities_from_findings(state.findings),
            frequency_mhz=design.lowest_mhz, id_prefix=id_prefix))
        measurements = attempt("measurements", lambda: load_measurements(state)) or ()
        coverage = attempt("coverage estimate", lambda: coverage_rows(state)) or []
        if coverage:
            coverage_svg = attempt("coverage chart", lambda: chart_svg(
                coverage_chart(coverage, width_pt=560, height_pt=240), id_prefix="coverage"))
        for file_index, measurement in enumerate(measurements):
            for chart_index, build in enumerate((return_loss_chart, isolation_chart, correlation_chart)):
                chart = attempt(f"charts of {measurement.file}", partial(
                    _chart, build, measurement, design, id_prefix=f"chart-{file_index}-{chart_index}"))
                if chart is not None:
                    charts.append(chart)
    return {"placement_svg": svg, "chart_svgs": charts, "coverage": coverage, "coverage_svg": coverage_svg,
            "failed_figures": list(dict.fromkeys(failed))}


def _chart(build, measurement, design, *, id_prefix: str) -> str:
    return chart_svg(build(measurement, design, width_pt=560, height_pt=240), id_prefix=id_prefix)


def _panel_context(state: ChecklistState, *, id_prefix: str = "placement") -> dict:
    """The panel's figures, drawn once per state of the revision (and version of the code that draws them)."""
    key = fragments.cache_key("figures", state_key(state.revision), id_prefix)
    figures = cache.get(key)
    if figures is None:
        figures = _figures(state, id_prefix)
        if not figures["failed_figures"]:  # a failure is not kept: the next look tries again
            cache.set(key, figures, timeout=30 * 24 * 3600)
    failed = bool(figures["failed_figures"]) or CHECK_FAILED in state.problems
    return {"state": state, "coverage_columns": TABLE_COLUMNS, fragments.NOT_KEPT: failed, **figures}


def _section_item(section: questionnaire.Section, revision: Revision, state: ChecklistState) -> dict:
    """One questionnaire section as _section.html shows it: its fields, and problems no field holds."""
    fields = questionnaire.section_fields(section, revision.document, state.problems)
    flat = [item for row in fields for item in row] if section is questionnaire.ANTENNAS else fields
    return {"section": section, "fields": fields,
            "loose_problems": questionnaire.section_problems(section, state.problems, flat)}


def _draft_context(revision: Revision, state: ChecklistState) -> dict:
    sections = [_section_item(section, revision, state) for section in questionnaire.SECTIONS]
    return {"product": revision.product, "revision": revision, "sections": sections,
            "presets": questionnaire.band_presets(), "measurements": _measurement_rows(revision),
            "max_measurement_mb": services.MAX_MEASUREMENT_BYTES // 1_000_000, **_panel_context(state)}


def _measurement_rows(revision: Revision) -> list[dict]:
    """Each kept file with its port map from the document, and the antenna names to choose from."""
    document = revision.document if isinstance(revision.document, dict) else {}
    entries = {entry.get("file"): entry for entry in document.get("measurements", []) if isinstance(entry, dict)}
    names = [a.get("name") for a in document.get("antennas", []) if isinstance(a, dict) and a.get("name")]
    rows = []
    for measurement in revision.measurement_files.all():
        ports = entries.get(measurement.name, {}).get("ports") or []
        rows.append({"file": measurement, "listed": measurement.name in entries,
                     "ports": list(enumerate(ports)), "antennas": names})
    return rows


@login_required
@require_http_methods(["GET"])
def draft_edit(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    draft = product.draft
    is_author = has_role(request.user, product.team, Role.AUTHOR)
    if draft is None:
        return render(request, "designs/draft_none.html", {"product": product, "latest": product.latest,
                                                           "is_author": is_author})
    if not is_author:
        return redirect("revision_detail", product.pk, draft.number)
    return fragments.page(request, "designs/draft_edit.html",
                          ("draft", state_key(draft), product.pk, product.name, draft.number),
                          lambda: _draft_context(draft, checklist_for(draft)), timeout=fragments.DAY)


@login_required
@require_POST
def draft_start(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    draft = services.draft_get_or_start(product=product, user=request.user)
    messages.success(request, f"Revision {draft.number} is a new draft"
                     + (f", copied from revision {draft.based_on.number}." if draft.based_on else "."))
    return redirect("draft_edit", product.pk)


@login_required
@require_POST
def draft_section_save(request, product_id: int, section: str):
    product = get_product_for_user(request.user, product_id)
    current = questionnaire.SECTIONS_BY_SLUG.get(section)
    draft = product.draft
    if current is None or draft is None:
        return render(request, "designs/gone.html", {"product": product}, status=404)
    extras = SectionActionForm(request.POST)
    if not extras.is_valid():
        return _section_refused(request, product, current, draft, [
            str(error) for errors in extras.errors.values() for error in errors])
    document = questionnaire.apply_section(draft.document, current, request.POST)
    preset = extras.cleaned_data["preset"]
    if preset:
        chosen = next(item for item in questionnaire.band_presets() if item.slug == preset)
        document = questionnaire.set_bands(document, chosen.bands)
    if extras.cleaned_data["action"]:
        document = questionnaire.antennas_action(document, extras.verb, extras.row)
    if document != draft.document:  # saving what is already stored would only move updated_at
        try:
            draft = services.draft_save_document(revision=draft, document=document, user=request.user)
        except DesignError as error:
            return _section_refused(request, product, current, draft, [str(problem) for problem in error.problems])
    if request.htmx:
        state = checklist_for(draft)
        panel = fragments.shared("designs/_panel_oob.html", ("panel", state_key(draft), product.pk),
                                 lambda: {"product": product, "revision": draft, **_panel_context(state)},
                                 timeout=fragments.DAY)
        return render(request, "designs/draft_section_saved.html", {
            "product": product, "revision": draft, "current": _section_item(current, draft, state),
            "presets": questionnaire.band_presets(),
            "panel": fragments.personal(panel, request)})
    messages.success(request, f"{current.title} saved.")
    return redirect(reverse("draft_edit", args=[product.pk]) + f"#section-{current.slug}")


def _section_refused(request, product, section: questionnaire.Section, draft: Revision, problems: list[str]):
    """400: the post could not be used, and nothing was stored. With htmx, the section (as stored) with the
    reasons above it; without, a message on the draft page."""
    notice = "Nothing was saved: " + "; ".join(problems)
    if request.htmx:
        item = _section_item(section, draft, checklist_for(draft))
        item["loose_problems"] = [notice, *item["loose_problems"]]
        return render(request, "designs/draft_section_saved.html", {
            "product": product, "revision": draft, "current": item, "presets": questionnaire.band_presets(),
            "panel": ""}, status=400)
    messages.error(request, notice)
    return redirect(reverse("draft_edit", args=[product.pk]) + f"#section-{section.slug}")


@login_required
@require_POST
def draft_submit(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    draft = product.draft
    if draft is None:
        messages.error(request, "There is no draft to submit.")
        return redirect(product)
    try:
        revision = services.revision_submit(revision=draft, user=request.user)
    except DesignError as error:
        loose = [problem.message for problem in error.problems if not problem.path]  # no question holds them
        messages.error(request, f"Revision {draft.number} can't be submitted yet: " + (
            "; ".join(loose) + "." if loose else
            f"fix the {len(error.problems)} problem(s) listed beside the questions."))
        return redirect("draft_edit", product.pk)
    messages.success(request, f"Revision {revision.number} submitted for review and frozen.")
    return redirect(revision)


@login_required
@require_GET
def revision_detail(request, product_id: int, number: int):
    facts = revision_facts(request.user, product_id, number)
    is_author = facts.is_draft and Role.AUTHOR in facts.roles  # only a draft's page differs by role
    revisions = Revision.objects.select_related("product", "submitted_by")
    draft = revisions.get(pk=facts.revision_id) if facts.is_draft else None  # named by its content

    def context() -> dict:
        revision = draft or revisions.get(pk=facts.revision_id)
        return {"product": revision.product, "revision": revision, "is_author": is_author,
                "design_text": services.document_export_text(revision=revision),
                **_panel_context(checklist_for(revision))}

    state = state_key(draft) if draft else frozen_state_key(facts.revision_id, facts.submitted_at)
    return fragments.page(request, "designs/revision_detail.html",
                          ("revision", state, product_id, facts.product_name, facts.status, facts.submitter_name,
                           is_author), context)


@login_required
@require_GET
def revision_export(request, product_id: int, number: int):
    revision = get_revision_for_user(request.user, product_id, number)
    response = HttpResponse(services.document_export_text(revision=revision),
                            content_type="application/json; charset=utf-8")
    slug = "".join(ch if ch.isalnum() else "-" for ch in revision.product.name.lower()).strip("-")
    response["Content-Disposition"] = f'attachment; filename="{slug}-rev{revision.number}.json"'
    return response


@login_required
@require_GET
def revision_placement_svg(request, product_id: int, number: int):
    revision = get_revision_for_user(request.user, product_id, number)
    state = checklist_for(revision)
    svg = _panel_context(state)["placement_svg"]
    if svg is None:
        return HttpResponse("The design can't be drawn until it is valid.", status=404, content_type="text/plain")
    return HttpResponse(svg, content_type="image/svg+xml")


@login_required
@require_http_methods(["GET", "POST"])
def design_import(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    if not has_role(request.user, product.team, Role.AUTHOR):
        return render(request, "designs/no_role.html", {"role": "author", "product": product}, status=403)
    form = ImportForm(request.POST or None, request.FILES or None)
    problems = []
    if request.method == "POST" and form.is_valid():
        upload = form.cleaned_data["design_file"]
        try:
            draft = services.design_import(product=product, text=upload.read(), source=upload.name,
                                           user=request.user)
        except DesignError as error:
            problems = [str(problem) for problem in error.problems]
        else:
            messages.success(request, f"{upload.name} imported into draft revision {draft.number}.")
            return redirect("draft_edit", product.pk)
    return render(request, "designs/import.html", {"product": product, "form": form, "problems": problems,
                                                   "draft": product.draft},
                  status=400 if problems else 200)


@login_required
@require_GET
def rule_list(request):
    return render(request, "designs/rule_list.html", {
        "rules": registered_rules(), "retired": RETIRED, "ruleset": RULESET_VERSION})


def _back_to_measurements(product) -> HttpResponse:
    return redirect(reverse("draft_edit", args=[product.pk]) + "#section-measurements")


@login_required
@require_POST
def measurement_upload(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    draft = product.draft
    upload = request.FILES.get("touchstone")
    if draft is None or upload is None:
        messages.error(request, "touchstone: expected a Touchstone file (.s1p to .s8p) to upload to the draft")
        return _back_to_measurements(product)
    if upload.size > services.MAX_MEASUREMENT_BYTES:
        messages.error(request, f"{upload.name}: expected at most {services.MAX_MEASUREMENT_BYTES // 1_000_000} MB, "
                                f"got {upload.size / 1_000_000:.1f} MB; nothing was stored")
        return _back_to_measurements(product)
    try:
        measurement = services.measurement_add(revision=draft, name=upload.name, content=upload.read(),
                                               user=request.user)
    except (TouchstoneError, ValueError) as error:
        messages.error(request, f"{error} — nothing was stored.")
    else:
        messages.success(request, f"{measurement.name} kept with draft {draft.number}; check its port map.")
    return _back_to_measurements(product)


@login_required
@require_POST
def measurement_ports(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    draft = product.draft
    form = PortMapForm(request.POST)
    if not form.is_valid():
        messages.error(request, f"{form.problems()}; nothing was changed")
        return _back_to_measurements(product)
    name = form.cleaned_data["file"]
    if draft is None or not draft.measurement_files.filter(name=name).exists():
        messages.error(request, f"file: no measurement named {name!r} is kept with the draft")
        return _back_to_measurements(product)
    try:
        services.measurement_map_ports(revision=draft, name=name, ports=form.ports, user=request.user)
    except DesignError as error:
        messages.error(request, "; ".join(str(problem) for problem in error.problems) + "; nothing was changed")
        return _back_to_measurements(product)
    messages.success(request, f"Port map of {name} saved.")
    return _back_to_measurements(product)


@login_required
@require_POST
def measurement_remove(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    draft = product.draft
    form = MeasurementFileForm(request.POST)
    if not form.is_valid():
        messages.error(request, "file: expected the name of a kept measurement file; nothing was removed")
        return _back_to_measurements(product)
    name = form.cleaned_data["file"]
    if draft is not None:
        services.measurement_remove(revision=draft, name=name, user=request.user)
        messages.success(request, f"{name} removed from draft {draft.number}.")
    return _back_to_measurements(product)
