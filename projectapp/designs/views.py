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
from django.http import HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse
from django.views.decorators.http import require_GET, require_http_methods, require_POST
from django_htmx.http import HttpResponseClientRefresh, reswap

from projectapp import fragments, paging
from projectapp.designs import (
    coverage_panel,
    library_use,
    lifecycle,
    pattern_facts,
    problem_words,
    questionnaire,
    services,
    upgrades,
)
from projectapp.designs.access import (
    get_product_for_user,
    get_revision_for_user,
    products_for,
    revision_facts,
)
from projectapp.designs.checklists import (
    CHECK_FAILED,
    ChecklistState,
    cellular_patterns,
    checklist_for,
    coverage_rows,
    load_measurements,
    measurement_digests,
)
from projectapp.designs.forms import (
    VERSION_MESSAGE,
    DraftStartForm,
    DraftVersionForm,
    ImportForm,
    LibraryActionForm,
    LibraryApplyForm,
    LibraryEntryForm,
    LibraryTargetForm,
    MeasurementFileForm,
    PanelPartForm,
    PatternChangeForm,
    PatternForm,
    PortMapForm,
    ProductFilterForm,
    ProductForm,
    SectionActionForm,
    WithdrawForm,
)
from projectapp.designs.models import MeasurementFile, Revision
from projectapp.figures.charts import (
    chart_svg,
    correlation_chart,
    coverage_chart,
    isolation_chart,
    pattern_correlation_chart,
    return_loss_chart,
)
from projectapp.figures.placement import (
    coexistence_lines_from_findings,
    pair_severities_from_findings,
    placement_svg,
)
from projectapp.library.models import Entry
from projectapp.teams.access import has_role, require_role, teams_of, teams_where
from projectapp.teams.models import Role
from rules.catalog import categories
from rules.coverage import OutsideValidity
from rules.design import CELLULAR_ROLES, DesignError, Problem, parse_design_partial
from rules.farfield import FarFieldError
from rules.findings import SEVERITIES
from rules.glossary import glossary
from rules.registry import RETIRED, RULESET_VERSION, registered_rules
from rules.touchstone import TouchstoneError

logger = logging.getLogger(__name__)
SPACING_RULE = "SEP-001"  # the rule whose findings colour the drawing's pair lines
FIGURES_DUE = "figures-due"  # a save's answer asks the page to fetch the new drawing (_panel.html)


@login_required
@require_GET
def product_list(request):
    """The person's products, a page at a time, filtered in the database on each product's latest revision: its
    state and the counts it stored when it was saved or submitted (no design is evaluated here)."""
    teams = teams_of(request.user)
    form = ProductFilterForm(request.GET).read()
    products = (products_for(request.user).select_related("latest_revision").order_by("name", "pk")
                .defer("latest_revision__document", "latest_revision__evaluation",
                       "latest_revision__section_versions"))
    products = form.apply(products, {"team": "team_id", "state": "latest_revision__state",
                                     "category": "latest_revision__category"})
    if "q" in form.cleaned:
        products = products.filter(name__icontains=form.cleaned["q"])
    raises = form.cleaned.get("raises")
    if raises:
        products = products.filter(**{f"latest_revision__{COUNT_COLUMNS[raises]}__gt": 0})
    paged = paging.paged(products, form)
    on_page = list(paged.items)
    # The record in force of each product on the page (its signed revision), when that is not the latest.
    signed = {revision.product_id: revision for revision in Revision.objects.filter(
        product__in=[product.pk for product in on_page], state=Revision.State.SIGNED).only("pk", "product_id",
                                                                                             "number", "state")}
    rows = [{"product": product, "latest": product.latest_revision,
             "in_force": signed.get(product.pk) if signed.get(product.pk) != product.latest_revision else None}
            for product in on_page]
    return render(request, "designs/product_list.html", {
        "rows": rows, "paged": paged, "filters": form.shown, "filter_problems": form.problems,
        "can_create": teams_where(request.user, Role.AUTHOR).exists(), "teams": teams.order_by("name"),
        "states": Revision.State.choices, "categories": categories().values(), "severities": SEVERITIES,
    }, status=form.status)


COUNT_COLUMNS = {"blocker": "blockers", "warning": "warnings", "note": "notes"}


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
    revisions = list(product.revisions.select_related("created_by", "submitted_by", "based_on")
                     .defer(*(f"{prefix}{name}" for prefix in ("", "based_on__")
                              for name in ("document", "evaluation", "section_versions"))))
    return render(request, "designs/product_detail.html", {
        "product": product,
        "revisions": revisions,
        "has_draft": any(revision.is_draft for revision in revisions),
        "is_author": has_role(request.user, product.team, Role.AUTHOR),
        "roles": product.team.roles_of(request.user),
    })


def _figures(state: ChecklistState, id_prefix: str, editable: bool = False) -> dict:
    """The panel's drawing, charts and coverage. A figure that fails to draw (a defect in Earshot) is left
    out and named in `failed_figures`; the page still comes up with the rest. `editable`: the placement drawing
    for the draft page's editor (antennas dragged and turned on it)."""
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

    record = f"design revision {state.revision.number}"
    shown = state.shown_design
    if state.is_partial and shown is not None and state.checklist is not None:
        # A draft not complete yet: what it has is drawn, judged only where its spacing checks could run.
        checklist = state.checklist
        spacing_waits = any(item["id"] == SPACING_RULE for item in checklist.get("waiting", ()))
        svg = attempt("placement drawing", lambda: placement_svg(
            shown, pair_severities=None if spacing_waits else pair_severities_from_findings(state.findings),
            frequency_mhz=checklist.get("judged_at_mhz"), id_prefix=id_prefix, record=record,
            coexistence=coexistence_lines_from_findings(state.findings, shown), editable=editable))
    elif state.design is not None and state.checklist is not None:
        design = state.design
        svg = attempt("placement drawing", lambda: placement_svg(
            design, pair_severities=pair_severities_from_findings(state.findings),
            frequency_mhz=design.lowest_mhz, id_prefix=id_prefix, record=record,
            coexistence=coexistence_lines_from_findings(state.findings, design), editable=editable))
        measurements = attempt("measurements", lambda: load_measurements(state))
        if measurements is None:  # an empty AttachedMeasurements still carries its far-field patterns
            measurements = ()
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
        patterns = cellular_patterns(measurements, design)
        if patterns:
            chart = attempt("far-field correlation chart", lambda: chart_svg(pattern_correlation_chart(
                patterns, design, width_pt=560, height_pt=240), id_prefix="chart-far-field"))
            if chart is not None:
                charts.append(chart)
    return {"placement_svg": svg, "chart_svgs": charts, "coverage": coverage, "coverage_svg": coverage_svg,
            "failed_figures": list(dict.fromkeys(failed))}


def _chart(build, measurement, design, *, id_prefix: str) -> str:
    return chart_svg(build(measurement, design, width_pt=560, height_pt=240), id_prefix=id_prefix)


def _panel_context(state: ChecklistState, *, id_prefix: str = "placement", figures: bool = True,
                   editable: bool = False) -> dict:
    """The panel's checklist and band table, and (`figures`) its drawing, charts and coverage panel, drawn once
    per state of the revision (and version of the code that draws them). A save's answer leaves the figures
    out: the page fetches them with the next request (draft_edit, part=figures), so the checklist follows an
    answer without waiting for the drawing (benchmarks/section_save.py). `editable`: the draft page's, whose
    placement drawing the author moves antennas on."""
    drawn: dict = {"placement_svg": None, "chart_svgs": [], "coverage": [], "coverage_svg": None,
                   "failed_figures": []}
    if figures:
        key = fragments.cache_key("figures", state.revision.cache_identity, id_prefix, editable)
        drawn = cache.get(key)
        if drawn is None:
            drawn = _figures(state, id_prefix, editable)
            if not drawn["failed_figures"]:  # a failure is not kept: the next look tries again
                cache.set(key, drawn, timeout=30 * 24 * 3600)
    failed = bool(drawn["failed_figures"]) or CHECK_FAILED in state.problems
    todo = problem_words.todo(state.revision.document, state.checklist) if state.is_partial else None
    context = {"state": state, fragments.NOT_KEPT: failed, "todo": todo,
               "measurement_digests": measurement_digests(state.revision), "placement_editable": editable, **drawn}
    if figures:
        context.update(coverage_panel.panel(drawn["coverage"], coverage_panel.CoverageAssumptionsForm({}).read()))
    return context


def _section_item(section: questionnaire.Section, document: dict, problems: list[Problem], *, version: int,
                  library: dict[str, list[Entry]], conflict: services.DraftConflict | None = None,
                  undo: services.RemovedAntennas | None = None, focus: str = "") -> dict:
    """One questionnaire section as _section.html shows it: its fields, problems no field holds, the draft
    version its values were read at, the library parts it can be filled from, a conflict if its last save
    met someone else's change, the antennas its last change removed (for "Undo remove") and the element that
    should have the keyboard focus after a row action or preset (`focus`, an id)."""
    worded = [problem_words.worded(problem, document) for problem in problem_words.grouped(problems)]
    fields = questionnaire.section_fields(section, document, worded)
    flat = [item for row in fields for item in row] if section is questionnaire.ANTENNAS else fields
    notes: list = []
    if section is questionnaire.ANTENNAS:
        notes = [row.get("library") if isinstance(row, dict) and isinstance(row.get("library"), dict) else None
                 for row in document.get("antennas") or []] if isinstance(document.get("antennas"), list) else []
    elif isinstance(document.get("modem"), dict) and isinstance(document["modem"].get("library"), dict):
        notes = [document["modem"]["library"]]
    return {"section": section, "fields": fields, "flat": flat, "version": version, "conflict": conflict,
            "loose_problems": questionnaire.section_problems(section, worded, flat),
            "library": library.get(section.slug, []), "rows": list(zip(fields, notes + [None] * len(fields),
                                                                        strict=False))
            if section is questionnaire.ANTENNAS else [], "note": notes[0] if notes and section is
            questionnaire.PRODUCT else None, "undo": undo if section is questionnaire.ANTENNAS else None,
            "focus": focus}


def _library_choices(product) -> dict[str, list[Entry]]:
    """The team's parts the questionnaire offers, per section: antennas and modules not retired."""
    entries = list(Entry.objects.filter(team_id=product.team_id, retired_at__isnull=True).order_by("name")
                   .only("pk", "name", "version", "kind", "team_id"))
    return {questionnaire.ANTENNAS.slug: [entry for entry in entries if entry.kind == Entry.Kind.ANTENNA],
            questionnaire.PRODUCT.slug: [entry for entry in entries if entry.kind == Entry.Kind.MODULE]}


def _library_stamp(product) -> tuple:
    """What the draft page shows of the team's library (the pickers and the offers of newer versions)."""
    return tuple(Entry.objects.filter(team_id=product.team_id).order_by("pk").values_list(
        "pk", "name", "version", "retired_at"))


def _library_offers(revision: Revision) -> list[library_use.Offer]:
    names = library_use.noted_names(revision.document)
    if not names:
        return []
    entries = {entry.name: entry for entry in Entry.objects.filter(team_id=revision.product.team_id, name__in=names)
               .prefetch_related("files")}
    kept = dict(revision.measurement_files.values_list("name", "sha256"))
    return library_use.offers_for(revision.document, entries, kept)


def _draft_context(revision: Revision, state: ChecklistState, *, kept: dict | None = None) -> dict:
    """The draft page's context; `kept` replaces one section's item (a conflict shown with what was typed)."""
    library = _library_choices(revision.product)
    undo = services.draft_antennas_removed(revision=revision)  # named by the draft's version, as the page is
    sections = [kept if kept and kept["section"] is section
                else _section_item(section, revision.document, state.problems, version=revision.version,
                                   library=library, undo=undo)
                for section in questionnaire.SECTIONS]
    return {"product": revision.product, "revision": revision, "sections": sections,
            "library_offers": _library_offers(revision),
            "presets": questionnaire.band_presets(), "measurements": _measurement_rows(revision, state.problems),
            "pattern_defaults": _pattern_defaults(revision),
            "max_measurement_mb": services.MAX_MEASUREMENT_BYTES // 1_000_000, "editing": True,
            **_panel_context(state, editable=True)}


def _measurement_rows(revision: Revision, problems: list[Problem]) -> list[dict]:
    """Each kept file with its entry from the document (a Touchstone file's port map; a pattern's antenna,
    tick, environment, frequencies and grid), the parser's problems with that entry, and the antenna names to
    choose from."""
    document = revision.document if isinstance(revision.document, dict) else {}
    by_file = {entry.get("file"): (index, entry) for index, entry in enumerate(_list_in(document, "measurements"))
               if isinstance(entry, dict)}
    names = [a.get("name") for a in _list_in(document, "antennas") if isinstance(a, dict) and a.get("name")]
    rows = []
    for measurement in revision.measurement_files.all():
        index, entry = by_file.get(measurement.name, (None, {}))
        prefix = f"measurements[{index}]"
        row = {"file": measurement, "listed": index is not None, "antennas": names,
               "far_field": measurement.kind == MeasurementFile.Kind.FAR_FIELD,
               "problems": [problem for problem in problems if index is not None and (
                   problem.path == prefix or problem.path.startswith((prefix + ".", prefix + "[")))]}
        if row["far_field"]:
            environment = entry.get("environment") if isinstance(entry.get("environment"), dict) else {}
            row.update(antenna=entry.get("antenna"), absolute=entry.get("absolute") is True,
                       environment=environment, environment_model=environment.get("model") or "isotropic",
                       environment_words=pattern_facts.environment_words(entry),
                       facts=pattern_facts.pattern_facts(measurement))
        else:
            row["ports"] = list(enumerate(entry.get("ports") or []))
        rows.append(row)
    return rows


def _list_in(document: dict, key: str) -> list:
    value = document.get(key)
    return value if isinstance(value, list) else []


def _pattern_defaults(revision: Revision) -> dict:
    """What the far-field upload form starts with: the environment the cellular antennas' patterns already
    share (a new one must match it to be compared), else isotropic; the first antenna without a pattern."""
    document = revision.document if isinstance(revision.document, dict) else {}
    entries = [entry for entry in _list_in(document, "measurements")
               if isinstance(entry, dict) and entry.get("kind") == "far-field"]
    antennas = [a for a in _list_in(document, "antennas") if isinstance(a, dict) and a.get("name")]
    roles = {a.get("name"): a.get("role") for a in antennas}
    shared = next((entry["environment"] for entry in entries if roles.get(entry.get("antenna")) in CELLULAR_ROLES
                   and isinstance(entry.get("environment"), dict)), {})
    with_pattern = {entry.get("antenna") for entry in entries}
    return {"environment": shared, "environment_model": shared.get("model") or "isotropic",
            "antenna": next((a.get("name") for a in antennas if a.get("name") not in with_pattern), None),
            "antennas": [a.get("name") for a in antennas]}


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
    part = PanelPartForm(request.GET)
    if not part.is_valid():
        return HttpResponse("; ".join(f"{name}: {error}" for name, errors in part.errors.items() for error in errors),
                            status=400, content_type="text/plain; charset=utf-8")
    if part.cleaned_data["part"] == "figures":  # after a save: the drawing, charts and coverage of the draft now
        what_if = coverage_panel.CoverageAssumptionsForm(request.GET).read()
        if what_if.cleaned:  # a coverage what-if on screen (the loader sends it) stays through the redraw
            state = checklist_for(draft)
            return render(request, "designs/draft_figures.html", {
                "product": product, "revision": draft, **_panel_context(state, editable=True),
                **_coverage_what_if(state, what_if)})
        return HttpResponse(fragments.personal(fragments.shared(
            "designs/draft_figures.html", ("figures-oob", draft.cache_identity, product.pk),
            lambda: {"product": product, "revision": draft, **_panel_context(checklist_for(draft), editable=True)},
            timeout=fragments.DAY), request))
    # The page carries the draft's version in every form (what each save names as read), so it is part of
    # the key; the state key names the content, which the checklist and figures are cached by.
    return fragments.page(request, "designs/draft_edit.html",
                          (draft, product, _library_stamp(product)),
                          lambda: _draft_context(draft, checklist_for(draft)), timeout=fragments.DAY)


@login_required
@require_POST
def draft_start(request, product_id: int):
    """A new draft copied from the latest revision, or (`from`) from any revision: "start a draft from it"."""
    product = get_product_for_user(request.user, product_id)
    require_role(request.user, product.team, Role.AUTHOR)
    form = DraftStartForm(request.POST)
    source = None
    if not form.is_valid() or (form.cleaned_data["from"] is not None and not (
            source := product.revisions.exclude(state=Revision.State.DRAFT)
            .filter(number=form.cleaned_data["from"]).first())):
        messages.error(request, "from: expected the number of a design revision of this product that is not a "
                                "draft; no draft was started")
        return redirect(product)
    try:
        draft = services.draft_get_or_start(product=product, user=request.user, source=source)
    except services.DraftExists as exists:
        messages.error(request, f"Design revision {exists.draft.number} is already a draft of {product.name}: edit "
                                "it, or submit it, before starting another from an earlier design revision.")
        return redirect(product)
    messages.success(request, f"Design revision {draft.number} is a new draft"
                     + (f", copied from design revision {draft.based_on.number}." if draft.based_on else "."))
    return redirect("draft_edit", product.pk)


@login_required
@require_POST
def revision_withdraw(request, product_id: int, number: int):
    revision = get_revision_for_user(request.user, product_id, number)
    require_role(request.user, revision.product.team, Role.AUTHOR)
    form = WithdrawForm(request.POST)
    if not form.is_valid():
        messages.error(request, "reason: " + "; ".join(form.errors.get("reason", [])) + "; nothing was withdrawn")
        return redirect(revision.product)
    try:
        services.revision_withdraw(revision=revision, user=request.user, reason=form.cleaned_data["reason"])
    except lifecycle.IllegalTransition as refused:
        messages.error(request, str(refused))
        return redirect(revision.product)
    messages.success(request, f"Revision {revision.number} was withdrawn from review.")
    return redirect(revision.product)


def _problems_of(document: dict) -> list[Problem]:
    return list(parse_design_partial(document).problems)


@login_required
@require_POST
def draft_section_save(request, product_id: int, section: str):
    """Saves one questionnaire section. Without JavaScript: a redirect back to the section. With htmx, the
    answer `answer` asks for: "messages" (a changed answer: messages, version and panel, never the inputs) or
    the whole section (a row action, a preset, the Save button). A stale save is a 409 with the other
    person's change and nothing stored; what this person typed stays in the form."""
    product = get_product_for_user(request.user, product_id)
    require_role(request.user, product.team, Role.AUTHOR)
    current = questionnaire.SECTIONS_BY_SLUG.get(section)
    draft = product.draft
    if current is None or draft is None:
        return _not_saved(request, product, current, GONE_MESSAGE.format(product=product.name), status=404)
    form = DraftVersionForm(request.POST)
    if not form.is_valid():
        return _not_saved(request, product, current, VERSION_MESSAGE, status=400)
    library_action = LibraryActionForm(request.POST)
    filling = request.POST.get("action", "").startswith("library:")
    # the row action and preset; apply_answers() reads them once valid (a library action is read below)
    extras = SectionActionForm({key: value for key, value in request.POST.items() if key != "action"}
                               if filling else request.POST)
    if not extras.is_valid():
        return _not_saved(request, product, current, "Nothing was saved: " + "; ".join(
            str(error) for errors in extras.errors.values() for error in errors), status=400)
    copied: list[str] = []
    try:
        if filling:
            if not library_action.is_valid():
                return _not_saved(request, product, current, "action: expected library:<row>, library:new or "
                                                             "library:modem; nothing was stored", status=400)
            target = library_action.target
            if (target == "modem") != (current is questionnaire.PRODUCT) or current not in (
                    questionnaire.PRODUCT, questionnaire.ANTENNAS):
                return _not_saved(request, product, current, "action: this section has no such library part; "
                                                             "nothing was stored", status=400)
            kind = Entry.Kind.MODULE if target == "modem" else Entry.Kind.ANTENNA
            pick = LibraryEntryForm(request.POST, prefix=f"library-{target}", entries=Entry.objects.filter(
                team_id=product.team_id, kind=kind, retired_at__isnull=True))
            if not pick.is_valid():
                return _not_saved(request, product, current, f"library-{target}-entry: "
                                  + "; ".join(pick.errors["entry"]) + "; nothing was stored", status=400)
            draft, copied = services.draft_library_fill(
                revision=draft, section=current, answers=request.POST, target=target,
                entry=pick.cleaned_data["entry"], read_version=form.read_version, user=request.user)
            if copied or not request.htmx:  # with htmx the filled row shows its note; a reload shows this
                messages.success(request, f"Filled from library part {pick.cleaned_data['entry'].name}"
                                 + (f"; copied {', '.join(copied)} into the measurements (check each file's antenna, the "
                                      "port map or the pattern's environment)."
                                    if copied else "."))
        elif extras.cleaned_data.get("action", "").startswith("restore:"):
            if current is not questionnaire.ANTENNAS:
                return _not_saved(request, product, current, "action: only the antennas section restores a "
                                                             "removed antenna; nothing was stored", status=400)
            draft, restored = services.draft_antennas_restore(
                revision=draft, answers=request.POST, event_id=extras.restore_event, read_version=form.read_version,
                user=request.user)
            if not request.htmx:
                messages.success(request, f"Restored {', '.join(restored)}.")
        else:
            draft = services.draft_section_save(revision=draft, section=current, answers=request.POST,
                                                read_version=form.read_version, user=request.user)
    except services.DraftGone:
        return _not_saved(request, product, current, GONE_MESSAGE.format(product=product.name), status=409)
    except services.DraftConflict as conflict:
        return _section_conflict(request, current, conflict)
    except DesignError as error:  # what no database can hold (services.require_storable)
        return _not_saved(request, product, current, "Nothing was saved: " + "; ".join(
            str(problem) for problem in error.problems), status=400)
    except (ValueError, TouchstoneError) as error:
        return _not_saved(request, product, current, f"{error}; nothing was stored", status=400)
    if request.htmx and copied:
        # The measurements block changed too: the page again. A client redirect to this same page with a
        # #section fragment would only scroll (a same-document navigation), leaving the old page on screen.
        return HttpResponseClientRefresh()
    if request.htmx:
        state = checklist_for(draft)
        panel = fragments.shared("designs/_panel_oob.html", ("no-figures", draft, product),
                                 lambda: {"product": product, "revision": draft, "editing": True,
                                          **_panel_context(state, figures=False, editable=True)},
                                 timeout=fragments.DAY)
        template = ("designs/draft_section_messages.html" if request.POST.get("answer") == "messages"
                    else "designs/draft_section_saved.html")
        messages_only = request.POST.get("answer") == "messages"  # no inputs sent back
        response = render(request, template, {
            "product": product, "revision": draft, "presets": questionnaire.band_presets(),
            "current": _section_item(current, draft.document, state.problems, version=draft.version,
                                     library={} if messages_only else _library_choices(product),
                                     undo=None if messages_only else services.draft_antennas_removed(revision=draft),
                                     focus="" if messages_only else _focus_after(extras, draft.document)),
            "panel": fragments.personal(panel, request)})
        response["HX-Trigger"] = FIGURES_DUE  # the page's #figures-loader fetches the drawing of this state
        return response
    messages.success(request, f"{current.title} saved.")
    return redirect(reverse("draft_edit", args=[product.pk]) + f"#section-{current.slug}")


def _focus_after(extras: SectionActionForm, document: dict) -> str:
    """Where the keyboard focus belongs once a row action or a preset has redrawn the section: the new or
    copied row's name, the Undo button after a removal, the preset just used, the bands after dropping some.
    (Any other change keeps the focus on the element that had it: static/earshot/earshot.js.)"""
    action, preset = extras.cleaned_data.get("action") or "", extras.cleaned_data.get("preset") or ""
    rows = document.get("antennas") if isinstance(document.get("antennas"), list) else []
    if action == "add" and rows:
        return questionnaire.input_id(f"antennas[{len(rows) - 1}].name")
    if action.startswith("duplicate:") and extras.row is not None and extras.row + 1 < len(rows):
        return questionnaire.input_id(f"antennas[{extras.row + 1}].name")
    if action.startswith("remove:"):
        return "undo-remove"
    if action.startswith("restore:"):
        return "section-antennas-title"
    if action == "drop-bands":
        return questionnaire.input_id("modem.bands") + "-label"
    if preset:
        return f"preset-{preset}"
    return ""


GONE_MESSAGE = ("{product} has no draft any more (it was submitted for review): nothing was stored. Start a new "
                "draft from the product's page to change the design.")


def _not_saved(request, product, section: questionnaire.Section | None, notice: str, *, status: int):
    """A save refused before it reached the document: above the section with htmx (the inputs keep what was
    typed), otherwise a page that says so."""
    if request.htmx and section is not None:
        response = render(request, "designs/draft_section_notice.html", {"section": section, "notice": notice},
                          status=status)
        return reswap(response, "none")
    if status == 400 and section is not None:
        messages.error(request, notice)
        return redirect(reverse("draft_edit", args=[product.pk]) + f"#section-{section.slug}")
    return render(request, "designs/gone.html", {"product": product}, status=status)


def _section_conflict(request, section: questionnaire.Section, conflict: services.DraftConflict) -> HttpResponse:
    """409: the other person's change above the section. With htmx only that box is sent (the inputs keep
    what was typed); without, the page again, this section holding what was posted."""
    draft = conflict.revision
    if request.htmx:
        response = render(request, "designs/draft_section_conflict.html", {
            "product": draft.product, "conflict": conflict, "current": {"section": section}}, status=409)
        return reswap(response, "none")
    typed = questionnaire.apply_answers(draft.document, section, request.POST)
    kept = _section_item(section, typed, _problems_of(typed), version=conflict.read_version,
                         library=_library_choices(draft.product), conflict=conflict)
    return render(request, "designs/draft_edit.html", _draft_context(draft, checklist_for(draft), kept=kept),
                  status=409)


@login_required
@require_GET
def revision_detail(request, product_id: int, number: int):
    facts = revision_facts(request.user, product_id, number)
    is_author = facts.is_draft and Role.AUTHOR in facts.roles  # only a draft's page differs by role
    # Reviewers (the engineers who measure) keep measurement files with a draft from this page (authors do it on
    # the draft's questionnaire); its forms carry the draft's version, so that is in the key too.
    can_measure = facts.is_draft and Role.REVIEWER in facts.roles and not is_author
    can_start_draft = not facts.is_draft and Role.AUTHOR in facts.roles  # "start a draft from it" (upgrades)
    can_start_measurement_draft = not facts.is_draft and Role.REVIEWER in facts.roles
    revisions = Revision.objects.select_related("product", "submitted_by")
    draft = revisions.get(pk=facts.revision_id) if facts.is_draft else None

    def context() -> dict:
        revision = draft or revisions.get(pk=facts.revision_id)
        state = checklist_for(revision)
        measuring = {"measurements": _measurement_rows(revision, state.problems),
                     "pattern_defaults": _pattern_defaults(revision),
                     "max_measurement_mb": services.MAX_MEASUREMENT_BYTES // 1_000_000} if can_measure else {}
        return {"product": revision.product, "revision": revision, "is_author": is_author,
                "can_measure": can_measure, "can_start_draft": can_start_draft,
                "can_start_measurement_draft": can_start_measurement_draft,
                "upgrade": upgrades.comparison_for(revision),
                "since_source": upgrades.changes_since_source(revision, state.checklist) if draft else None,
                "design_text": services.document_export_text(revision=revision),
                **measuring, **_panel_context(state)}

    # The revision's identity (state and version, which a reviewer's measurement forms carry), the product's and
    # the submitter's name, and what the reader may do: all the page shows. The rule-set comparison follows from
    # the frozen revision and the code (the stamp covers rules/).
    return fragments.page(request, "designs/revision_detail.html",
                          (facts, facts.submitter_name, is_author, can_measure, can_start_draft,
                           can_start_measurement_draft), context)


@login_required
@require_POST
def measurement_draft_start(request, product_id: int, number: int):
    """A reviewer starts a draft from this revision to keep their measurement files (services)."""
    revision = get_revision_for_user(request.user, product_id, number)
    require_role(request.user, revision.product.team, Role.REVIEWER)
    if revision.is_draft:
        return redirect(revision)
    try:
        draft = services.measurement_draft_start(revision=revision, user=request.user)
    except services.DraftExists as exists:
        messages.info(request, f"Revision {exists.draft.number} is already a draft: add your measurement files to it.")
        return redirect(exists.draft)
    messages.success(request, f"Revision {draft.number} is a new draft copied from revision {revision.number}: add "
                              "your measurement files; its checklist re-judges with them.")
    return redirect(draft)


@login_required
@require_GET
def team_upgrades(request, team_id: int):
    """The team's frozen revisions that the current rule set would judge differently (designs.upgrades)."""
    team = get_object_or_404(teams_of(request.user), pk=team_id)  # another team's: 404
    rows = upgrades.affected_revisions(Revision.objects.filter(product__team=team))
    return render(request, "designs/team_upgrades.html",
                  {"team": team, "rows": rows, "ruleset": RULESET_VERSION,
                   "can_start_draft": has_role(request.user, team, Role.AUTHOR)})


@login_required
@require_GET
def revision_coverage(request, product_id: int, number: int):
    """The coverage panel with the assumptions in the query string (a what-if: the checklist keeps the
    defaults). With htmx the panel's block alone; without, a page holding it. A value the form or the path-loss
    model refuses is named, and the defaults are used for it (400)."""
    revision = get_revision_for_user(request.user, product_id, number)
    form = coverage_panel.CoverageAssumptionsForm(request.GET).read()
    context = {"product": revision.product, "revision": revision, **_coverage_what_if(checklist_for(revision), form)}
    template = "designs/_coverage.html" if request.htmx else "designs/coverage.html"
    return render(request, template, context, status=400 if form.problems else 200)


def _coverage_what_if(state: ChecklistState, form: coverage_panel.CoverageAssumptionsForm) -> dict:
    """The coverage panel's context with the form's assumptions (a what-if); one the path-loss model refuses is
    named in the form's problems, and the defaults are used instead."""
    environment = (state.design.deployment.environment if state.design else None) or "outdoor"
    try:
        rows = coverage_rows(state, **form.overrides(environment))
    except OutsideValidity as refusal:
        form.problems.append(f"{refusal.parameter}: {refusal}; the defaults are shown instead")
        form.cleaned = {}
        rows = coverage_rows(state)
    return {"coverage_what_if": True, **coverage_panel.panel(rows, form),
            "coverage_svg": chart_svg(coverage_chart(rows, width_pt=560, height_pt=240), id_prefix="coverage")
            if rows else None}


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
    version_form = DraftVersionForm(request.POST if request.method == "POST" else None)
    problems, conflict = [], None
    draft = product.draft
    read_version = draft.version if draft else 0
    if request.method == "POST" and not version_form.is_valid():
        problems = [VERSION_MESSAGE]
    elif request.method == "POST" and form.is_valid():
        upload = form.cleaned_data["design_file"]
        try:
            draft = services.design_import(product=product, text=upload.read(), source=upload.name,
                                           user=request.user, read_version=version_form.read_version)
        except DesignError as error:
            problems = [str(problem) for problem in error.problems]
            read_version = version_form.read_version
        except services.DraftConflict as error:
            conflict, draft, read_version = error, error.revision, error.revision.version
        else:
            messages.success(request, f"{upload.name} imported into draft design revision {draft.number}.")
            return redirect("draft_edit", product.pk)
    return render(request, "designs/import.html", {"product": product, "form": form, "problems": problems,
                                                   "draft": draft, "read_version": read_version,
                                                   "conflict": conflict},
                  status=409 if conflict else 400 if problems else 200)


@login_required
@require_GET
def rule_list(request):
    rules = registered_rules()
    return render(request, "designs/rule_list.html", {
        "rules": rules, "retired": RETIRED, "ruleset": RULESET_VERSION,
        "added": [rule for rule in rules if rule.added_in == RULESET_VERSION],
        "changed": [rule for rule in rules if rule.changed_in == RULESET_VERSION and rule.added_in != RULESET_VERSION]})


@login_required
@require_GET
def term_list(request):
    return render(request, "designs/term_list.html", {"groups": glossary()})


def _back_to_measurements(product) -> HttpResponse:
    return redirect(reverse("draft_edit", args=[product.pk]) + "#section-measurements")


def _uploaded(request, product, field: str, expected: str):
    """The file posted as `field` to the product's draft, or the answer to send instead: a message (nothing
    stored) and back to the measurements, for no draft, no file or one over the size limit."""
    upload = request.FILES.get(field)
    if product.draft is None or upload is None:
        messages.error(request, f"{field}: expected {expected} to upload to the draft")
        return _back_to_measurements(product)
    if upload.size > services.MAX_MEASUREMENT_BYTES:
        messages.error(request, f"{upload.name}: expected at most {services.MAX_MEASUREMENT_BYTES // 1_000_000} MB, "
                                f"got {upload.size / 1_000_000:.1f} MB; nothing was stored")
        return _back_to_measurements(product)
    return upload


@login_required
@require_POST
def measurement_upload(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    draft = product.draft
    upload = _uploaded(request, product, "touchstone", "a Touchstone file (.s1p to .s8p)")
    if isinstance(upload, HttpResponse):
        return upload
    try:
        measurement = services.measurement_add(revision=draft, name=upload.name, content=upload.read(),
                                               user=request.user)
    except services.DraftGone:
        return render(request, "designs/gone.html", {"product": product}, status=409)
    except (TouchstoneError, ValueError) as error:
        messages.error(request, f"{error} — nothing was stored.")
    else:
        messages.success(request, f"{measurement.name} kept with draft {draft.number}; check its port map.")
    return _back_to_measurements(product)


def _measurement_conflict(request, product, conflict: services.DraftConflict, *, name: str, action: str,
                          ports: list[str | None] | None = None, pattern: dict | None = None,
                          environment: dict | None = None) -> HttpResponse:
    """409: what others changed in the measurements, and the person's own change kept in a form that, posted
    again, replaces theirs."""
    draft = conflict.revision
    document = draft.document if isinstance(draft.document, dict) else {}
    antennas = [a.get("name") for a in document.get("antennas", []) if isinstance(a, dict) and a.get("name")]
    return render(request, "designs/measurement_conflict.html", {
        "product": product, "revision": draft, "conflict": conflict, "name": name, "action": action,
        "ports": list(enumerate(ports or [])), "antennas": antennas, "pattern": pattern, "environment": environment,
        "is_author": has_role(request.user, product.team, Role.AUTHOR)}, status=409)


def _measurement_version(request, product) -> DraftVersionForm | None:
    form = DraftVersionForm(request.POST)
    if form.is_valid():
        return form
    messages.error(request, VERSION_MESSAGE + "; nothing was changed")
    return None


def _kept_file_change(request, product, form_class):
    """What a change to a kept measurement file posts, read: (draft, form, file name, version form); or the
    answer to send instead (a message and back to the measurements) when any of it can't be used."""
    draft = product.draft
    if draft is not None:
        services.require_measurement_role(request.user, draft)
    form = form_class(request.POST)
    if not form.is_valid():
        messages.error(request, f"{form.problems()}; nothing was changed")
        return _back_to_measurements(product)
    name = form.cleaned_data["file"]
    if draft is None or not draft.measurement_files.filter(name=name).exists():
        messages.error(request, f"file: no measurement named {name!r} is kept with the draft")
        return _back_to_measurements(product)
    version = _measurement_version(request, product)
    if version is None:
        return _back_to_measurements(product)
    return draft, form, name, version


@login_required
@require_POST
def measurement_ports(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    read = _kept_file_change(request, product, PortMapForm)
    if isinstance(read, HttpResponse):
        return read
    draft, form, name, version = read
    ports = form.ports
    try:
        services.measurement_map_ports(revision=draft, name=name, ports=ports, user=request.user,
                                       read_version=version.read_version)
    except services.DraftConflict as conflict:
        return _measurement_conflict(request, product, conflict, name=name, action="ports", ports=ports)
    except services.DraftGone:
        return render(request, "designs/gone.html", {"product": product}, status=409)
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
        services.require_measurement_role(request.user, draft)
        version = _measurement_version(request, product)
        if version is None:
            return _back_to_measurements(product)
        try:
            services.measurement_remove(revision=draft, name=name, user=request.user,
                                        read_version=version.read_version)
        except services.DraftConflict as conflict:
            return _measurement_conflict(request, product, conflict, name=name, action="remove")
        except services.DraftGone:
            return render(request, "designs/gone.html", {"product": product}, status=409)
        messages.success(request, f"{name} removed from draft {draft.number}.")
    return _back_to_measurements(product)


@login_required
@require_POST
def measurement_pattern_upload(request, product_id: int):
    """Keeps one antenna's far-field pattern with the draft: the file must parse and its antenna and environment
    pass the design parser; otherwise a message names the file's line or the field, and nothing is stored."""
    product = get_product_for_user(request.user, product_id)
    draft = product.draft
    if draft is not None:
        services.require_measurement_role(request.user, draft)
    upload = _uploaded(request, product, "pattern", "a far-field pattern file (.csv)")
    if isinstance(upload, HttpResponse):
        return upload
    form = PatternForm(request.POST)
    if not form.is_valid():
        messages.error(request, f"{form.problems()}; nothing was stored")
        return _back_to_measurements(product)
    try:
        measurement = services.pattern_add(
            revision=draft, name=upload.name, content=upload.read(), antenna=form.cleaned_data["antenna"],
            absolute=form.cleaned_data["absolute"], environment=form.environment_entry(), user=request.user)
    except services.DraftGone:
        return render(request, "designs/gone.html", {"product": product}, status=409)
    except DesignError as error:
        messages.error(request, "; ".join(str(problem) for problem in error.problems) + " — nothing was stored.")
    except (FarFieldError, ValueError) as error:
        messages.error(request, f"{error} — nothing was stored.")
    else:
        messages.success(request, f"{measurement.name} kept with draft {draft.number} as the far-field pattern of "
                                  f"{form.cleaned_data['antenna']}.")
    return _back_to_measurements(product)


@login_required
@require_POST
def measurement_pattern_update(request, product_id: int):
    """Changes a kept pattern's antenna, `absolute` tick or environment (the cellular antennas' patterns share
    one environment, so a new one is set on each)."""
    product = get_product_for_user(request.user, product_id)
    read = _kept_file_change(request, product, PatternChangeForm)
    if isinstance(read, HttpResponse):
        return read
    draft, form, name, version = read
    try:
        others = services.pattern_update(
            revision=draft, name=name, antenna=form.cleaned_data["antenna"], absolute=form.cleaned_data["absolute"],
            environment=form.environment_entry(), user=request.user, read_version=version.read_version)
    except services.DraftConflict as conflict:
        return _measurement_conflict(request, product, conflict, name=name, action="pattern",
                                     pattern=form.cleaned_data, environment=form.environment_entry())
    except services.DraftGone:
        return render(request, "designs/gone.html", {"product": product}, status=409)
    except (DesignError, ValueError) as error:
        problems = error.problems if isinstance(error, DesignError) else [error]
        messages.error(request, "; ".join(str(problem) for problem in problems) + "; nothing was changed")
        return _back_to_measurements(product)
    messages.success(request, f"{name} saved" + (f"; its environment is now also that of {', '.join(others)}, "
                                                 "since patterns are compared in one environment" if others else "")
                     + ".")
    return _back_to_measurements(product)


@login_required
@require_http_methods(["GET", "POST"])
def draft_library_update(request, product_id: int):
    """A newer version of a library part the draft was filled from: what applying it changes, field by field
    (GET), and applying the fields the author keeps ticked (POST). Only drafts are offered it; a submitted
    revision keeps what it was submitted with."""
    product = get_product_for_user(request.user, product_id)
    if not has_role(request.user, product.team, Role.AUTHOR):
        return render(request, "designs/no_role.html", {"role": "author", "product": product}, status=403)
    draft = product.draft
    if draft is None:
        return render(request, "designs/gone.html", {"product": product}, status=404)
    target = LibraryTargetForm(request.POST if request.method == "POST" else request.GET)
    context = {"product": product, "revision": draft, "target": target, "offer": None, "problems": []}
    if not target.is_valid():
        context["problems"] = [f"{name}: {'; '.join(errors)}" for name, errors in target.errors.items()]
        return render(request, "designs/library_update.html", context, status=400)
    offer = next((offer for offer in _library_offers(draft)
                  if offer.kind == target.kind and offer.antenna == target.antenna_name), None)
    context["offer"] = offer
    if request.method == "GET" or offer is None:
        return render(request, "designs/library_update.html", context)
    form = LibraryApplyForm(request.POST, keys=[change.key for change in offer.changes])
    version = DraftVersionForm(request.POST)
    if not form.is_valid() or not version.is_valid():
        context["problems"] = [f"{name}: {'; '.join(errors)}" for name, errors in
                               [*form.errors.items(), *version.errors.items()]] or [VERSION_MESSAGE]
        return render(request, "designs/library_update.html", context, status=400)
    try:
        services.draft_library_apply(revision=draft, kind=offer.kind, antenna=offer.antenna, entry=offer.entry,
                                     entry_version=form.cleaned_data["entry_version"],
                                     keys=form.cleaned_data["apply"], with_files=form.cleaned_data["files"],
                                     read_version=version.read_version, user=request.user)
    except services.LibraryEntryChanged as changed:
        context["problems"] = [f"{changed.entry.name} changed again (now version {changed.entry.version}) while "
                               "you reviewed it: nothing was applied; review its changes again below"]
        return render(request, "designs/library_update.html", context, status=409)
    except services.DraftConflict as conflict:
        context["conflict"] = conflict
        context["revision"] = conflict.revision
        return render(request, "designs/library_update.html", context, status=409)
    except services.DraftGone:
        return render(request, "designs/gone.html", {"product": product}, status=409)
    except (ValueError, TouchstoneError) as error:
        context["problems"] = [f"{error}; nothing was applied"]
        return render(request, "designs/library_update.html", context, status=400)
    messages.success(request, f"Library part {offer.entry.name} version {offer.entry.version} applied to "
                              f"{offer.where}.")
    return redirect(reverse("draft_edit", args=[product.pk])
                    + ("#section-product" if offer.kind == "module" else "#section-antennas"))
