"""Review views: submitting a draft for review, the dashboard and queues, a revision's items, one item, the
audit trail, comparison.

Item forms post to small endpoints; htmx swaps the item's card in place, and without JavaScript the
endpoint redirects back to the page the form was on.
"""

from collections import Counter

from django.contrib import messages
from django.contrib.auth import get_user_model
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db.models import Case, Value, When
from django.http import FileResponse, Http404
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse
from django.utils.http import url_has_allowed_host_and_scheme
from django.views.decorators.http import require_GET, require_http_methods, require_POST

from projectapp import paging
from projectapp.audit.models import AuditEvent
from projectapp.designs import lifecycle, problem_words
from projectapp.designs.access import get_product_for_user, get_revision_for_user, products_for
from projectapp.designs.models import Revision
from projectapp.filters import capped_choices
from projectapp.reviews import services
from projectapp.reviews.comparison import compare_revisions
from projectapp.reviews.forms import (
    AssignForm,
    CommentForm,
    CompareForm,
    ConfirmForm,
    DashboardFilterForm,
    DecisionForm,
    StepForm,
    TopicReviewersForm,
)
from projectapp.reviews.models import (
    OPEN_ITEMS,
    EvidenceAttachment,
    ProcessStep,
    ReviewItem,
    ReviewTally,
    TopicReviewer,
)
from projectapp.reviews.provenance import decision_lines
from projectapp.teams.access import has_role, teams_of
from projectapp.teams.models import Role
from rules.design import DesignError
from rules.findings import SEVERITIES, TOPICS

OPEN_FILTER = OPEN_ITEMS


def items_for(user):
    return (ReviewItem.objects.filter(revision__product__team__in=teams_of(user))
            .with_provenance().select_related("revision__product__team", "assignee"))


def get_item_for_user(user, item_id: int) -> ReviewItem:
    return get_object_or_404(items_for(user), pk=item_id)


SEVERITY_ORDER = Case(*(When(severity=severity, then=Value(rank)) for rank, severity in enumerate(SEVERITIES)),
                      default=Value(len(SEVERITIES)))
FACET_PRODUCTS = 25  # the products with the most open items; the filter's list has them all
TOPIC_ORDER = Case(*(When(topic=topic, then=Value(rank)) for rank, topic in enumerate(TOPICS)),
                   default=Value(len(TOPICS)))


@login_required
@require_GET
def dashboard(request):
    """The items under review: the raised items of every revision in review in the person's teams, filtered,
    counted, ordered (gravest first, then product, topic) and paged in the database."""
    # The revisions in review (an index on their state), then their items (an index on the revision).
    # Steps outside the team are planned on their revision's review page, never decided here (reviews.steps).
    base = ReviewItem.objects.filter(revision__product__team__in=teams_of(request.user),
                                     revision__state=Revision.State.IN_REVIEW, kind=ReviewItem.Kind.RAISED,
                                     process_step__isnull=True)
    form = DashboardFilterForm(request.GET).read()
    chosen, filters = form.cleaned, form.shown
    filters["state"] = filters["state"] or "open"
    items = base
    if filters["state"] == "open":
        items = items.filter(OPEN_FILTER)
    items = form.apply(items, {"product": "revision__product_id", "severity": "severity", "topic": "topic"})
    if chosen.get("assignee") == "me":
        items = items.filter(assignee=request.user)
    elif chosen.get("assignee") == "nobody":
        items = items.filter(assignee__isnull=True)
    elif "assignee" in chosen:
        items = items.filter(assignee_id=int(chosen["assignee"]))
    ordered = (items.with_provenance().select_related("revision__product__team", "assignee")
               .defer("previous_decision", "revision__document", "revision__evaluation", "revision__section_versions")
               .annotate(severity_order=SEVERITY_ORDER, topic_order=TOPIC_ORDER)
               .order_by("severity_order", "revision__product__name", "topic_order", "pk"))
    paged = paging.paged(ordered, form)
    reviewed = products_for(request.user).filter(revisions__state=Revision.State.IN_REVIEW).distinct()
    products, more_products = capped_choices(reviewed.order_by("name").only("pk", "name", "team"))
    context = {
        "items": paged.items,
        "paged": paged,
        "filters": filters,
        "filter_problems": form.problems,
        **_open_facets(request.user),
        "products": products,
        "more_products": more_products,
        "chosen_product": reviewed.filter(pk=chosen["product"]).first() if "product" in chosen else None,
        "without_product": form.query_without("product"),
        "severities": SEVERITIES,
        "topics": TOPICS,
        "teams": teams_of(request.user).order_by("name"),
    }
    template = "reviews/_dashboard_items.html" if request.htmx else "reviews/dashboard.html"
    return render(request, template, context, status=form.status)


def _open_facets(user) -> dict:
    """The open items of the revisions in review counted by product, severity, topic and assignee: summed from
    each revision's tally (reviews.models.ReviewTally, kept by every review write), a row per revision, rather
    than counted from the items on every look."""
    tallies = ReviewTally.objects.filter(revision__state=Revision.State.IN_REVIEW,
                                         revision__product__team__in=teams_of(user))
    by_product = list(tallies.filter(open_items__gt=0).order_by("-open_items", "revision__product__name")
                      .values_list("revision__product_id", "revision__product__name", "open_items")[:FACET_PRODUCTS])
    by_severity: Counter = Counter()
    by_topic: Counter = Counter()
    by_assignee: Counter = Counter()
    for groups in tallies.values_list("groups", flat=True):
        for severity, topic, assignee_id, n in groups:
            by_severity[severity] += n
            by_topic[topic] += n
            by_assignee[assignee_id] += n
    people = dict(get_user_model().objects.filter(pk__in=[pk for pk in by_assignee if pk])
                  .values_list("pk", "username"))
    return {
        "my_open": by_assignee.get(user.pk, 0),
        "unassigned_open": by_assignee.get(None, 0),
        "by_product": [{"product_id": pk, "name": name, "n": n} for pk, name, n in by_product],
        "by_severity": sorted(by_severity.items(), key=lambda pair: SEVERITIES.index(pair[0])
                              if pair[0] in SEVERITIES else 99),
        "by_topic": sorted(by_topic.items()),
        "by_assignee": sorted(({"id": pk, "username": people.get(pk) if pk else None, "n": n}
                               for pk, n in by_assignee.items()), key=lambda row: (row["username"] is None,
                                                                                   row["username"] or "")),
    }


@login_required
@require_POST
def draft_submit(request, product_id: int):
    """Submits the product's draft for review (reviews.services.revision_submit)."""
    product = get_product_for_user(request.user, product_id)
    draft = product.draft
    if draft is None:
        messages.error(request, "There is no draft to submit.")
        return redirect(product)
    try:
        revision = services.revision_submit(revision=draft, user=request.user)
    except DesignError as error:
        loose = [problem.message for problem in error.problems if not problem.path]  # no question holds them
        messages.error(request, f"Design revision {draft.number} can't be submitted yet: " + (
            "; ".join(loose) + "." if loose else problem_words.still_to_do(draft.document)))
        return redirect("draft_edit", product.pk)
    except lifecycle.IllegalTransition as refused:
        messages.error(request, str(refused))
        return redirect(product)
    messages.success(request, f"Design revision {revision.number} submitted for review and frozen.")
    return redirect(revision)


def _digests(revision) -> dict[str, str]:
    """File name -> SHA-256 of the revision's measurement files, named beside a finding a measurement cleared."""
    return dict(revision.measurement_files.values_list("name", "sha256"))


def _card_context(request, item: ReviewItem, *, approvers: set[int] | None = None, **extra) -> dict:
    people = services.assignable_people(item.revision)
    if approvers is None:
        approvers = services.approver_ids(item.revision.product.team)
    return {
        "item": item,
        "provenance": decision_lines(item, approver_ids=approvers),
        "can_review": services.can_review(request.user, item),
        "decision_form": extra.pop("decision_form", None) or DecisionForm(initial={
            "disposition": item.disposition, "justification": item.justification, "version": item.version}),
        "assign_form": extra.pop("assign_form", None) or AssignForm(
            people=people, initial={"assignee": item.assignee_id, "version": item.version}),
        "next": request.POST.get("next") or request.get_full_path(),
        **extra,
    }


@login_required
@require_GET
def revision_review(request, product_id: int, number: int):
    revision = get_revision_for_user(request.user, product_id, number)
    items = list(items_for(request.user).filter(revision=revision))
    severity_rank = {severity: index for index, severity in enumerate(SEVERITIES)}
    items.sort(key=lambda item: (item.kind, severity_rank.get(item.severity, 9),
                                 TOPICS.index(item.topic) if item.topic in TOPICS else 99, item.pk))
    approvers = services.approver_ids(revision.product.team)
    steps = {step.item_id: step for step in ProcessStep.objects.filter(revision=revision).select_related("owner")}
    raised = [_card_context(request, item, approvers=approvers) for item in items
              if item.kind == ReviewItem.Kind.RAISED and item.pk not in steps]
    step_cards = [_step_context(request, steps[item.pk], item=item) for item in items if item.pk in steps]
    resolved = [item for item in items if item.kind == ReviewItem.Kind.RESOLVED]
    settled = sum(1 for card in raised if card["item"].is_settled)
    return render(request, "reviews/revision_review.html", {
        "product": revision.product, "revision": revision, "cards": raised, "resolved": resolved,
        "counts": (settled, len(raised)), "settled": settled, "previous": services._previous_submitted(revision),
        "step_cards": step_cards, "measurement_digests": _digests(revision),
        "closed_reason": "" if lifecycle.is_review_open(revision) else lifecycle.review_closed_reason(revision)})


@login_required
@require_GET
def item_detail(request, item_id: int):
    item = get_item_for_user(request.user, item_id)
    return render(request, "reviews/item_detail.html", {
        **_card_context(request, item),
        "comments": item.comments.select_related("author", "written_on"),
        "comment_form": CommentForm(),
        "events": item.audit_events.select_related("actor"),
        "product": item.revision.product,
        "revision": item.revision,
        "measurement_digests": _digests(item.revision),
    })


def settled_count(revision) -> tuple[int, int]:
    """How many of a revision's raised items are settled, of how many (the review page's count)."""
    raised = [item for item in ReviewItem.objects.filter(revision=revision, kind=ReviewItem.Kind.RAISED,
                                                         process_step__isnull=True)  # steps are tracked, not settled
              .only("disposition", "carried_from_id", "carried_confirmed")]
    return sum(1 for item in raised if item.is_settled), len(raised)


def _answer(request, item: ReviewItem, *, status: int = 200, **extra):
    """The item's card for htmx (on the review page, with its settled count out of band, so the count follows
    each decision); a redirect back to the form's page otherwise."""
    if request.htmx:
        context = _card_context(request, item, measurement_digests=_digests(item.revision), **extra)
        review_url = reverse("revision_review", args=[item.revision.product_id, item.revision.number])
        if (request.htmx.current_url_abs_path or "").split("?")[0] == review_url:
            context["oob_counts"] = settled_count(item.revision)
        return render(request, "reviews/item_card_answer.html", context, status=status)
    if status == 403:
        raise PermissionDenied(extra.get("error"))
    message = extra.get("conflict_message") or extra.get("error")
    if message:
        messages.error(request, message)
    target = request.POST.get("next", "")
    if not url_has_allowed_host_and_scheme(target, allowed_hosts={request.get_host()}):
        target = item.get_absolute_url()
    return redirect(target)


def _apply(request, item: ReviewItem, write):
    """Runs a versioned write and answers with the card: saved, a conflict (409) or not allowed (403)."""
    try:
        item = write()
    except services.ReviewConflict as conflict:
        return _answer(request, conflict.current, status=409, conflict_message=_conflict_message(conflict.current))
    except PermissionDenied as error:
        return _answer(request, item, status=403, error=str(error) or "Not allowed.")
    return _answer(request, item, saved=True)


def _conflict_message(current: ReviewItem) -> str:
    who = current.decided_by.get_full_name() or current.decided_by.username if current.decided_by else "someone"
    return (f"{who} changed this item while you were editing: it is now '{current.get_disposition_display()}'"
            + (f" ({current.justification})" if current.justification else "")
            + (f", assigned to {current.assignee.username}" if current.assignee else "")
            + ". Your entry is kept in the form; save again to replace theirs.")


@login_required
@require_POST
def item_decide(request, item_id: int):
    item = get_item_for_user(request.user, item_id)
    form = DecisionForm(request.POST)
    if not form.is_valid():
        return _answer(request, item, status=400, decision_form=form, error="Choose a disposition.")
    try:
        item = services.review_item_decide(item=item, user=request.user, disposition=form.cleaned_data["disposition"],
                                           justification=form.cleaned_data["justification"],
                                           expected_version=form.cleaned_data["version"])
    except services.ReviewConflict as conflict:
        kept = DecisionForm(initial={**form.cleaned_data, "version": conflict.current.version})
        return _answer(request, conflict.current, status=409, decision_form=kept,
                       conflict_message=_conflict_message(conflict.current))
    except services.ReviewInputError as error:
        form.add_error(error.field if error.field in form.fields else None, str(error))
        return _answer(request, item, status=400, decision_form=form, error=str(error))
    except PermissionDenied as error:
        return _answer(request, item, status=403, decision_form=form, error=str(error) or "Not allowed.")
    return _answer(request, item, saved=True)


@login_required
@require_POST
def item_assign(request, item_id: int):
    item = get_item_for_user(request.user, item_id)
    form = AssignForm(request.POST, people=services.assignable_people(item.revision))
    if not form.is_valid():
        return _answer(request, item, status=400, assign_form=form, error="assignee: expected a reviewer or approver")
    return _apply(request, item, lambda: services.review_item_assign(
        item=item, user=request.user, assignee=form.cleaned_data["assignee"],
        expected_version=form.cleaned_data["version"]))


@login_required
@require_POST
def item_confirm(request, item_id: int):
    item = get_item_for_user(request.user, item_id)
    form = ConfirmForm(request.POST)
    if not form.is_valid():
        return _answer(request, item, status=400, error="version: expected the item version you confirmed")
    return _apply(request, item, lambda: services.review_item_confirm(
        item=item, user=request.user, expected_version=form.cleaned_data["version"]))


@login_required
@require_POST
def item_comment(request, item_id: int):
    item = get_item_for_user(request.user, item_id)
    form = CommentForm(request.POST)
    if form.is_valid():
        try:
            services.review_item_comment(item=item, user=request.user, text=form.cleaned_data["text"])
        except services.ReviewInputError as error:
            messages.error(request, str(error))
    else:
        messages.error(request, "text: expected a comment of at most 4000 characters")
    return redirect(item)


@login_required
@require_GET
def product_audit(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    events = AuditEvent.objects.filter(product=product).select_related("actor", "revision", "item")
    return render(request, "reviews/product_audit.html", {"product": product, "events": events})


@login_required
@require_GET
def revision_compare(request, product_id: int):
    product = get_product_for_user(request.user, product_id)
    revisions = list(product.revisions.order_by("number"))
    numbers = [revision.number for revision in revisions]
    form = CompareForm(request.GET).read()

    def pick(name: str, default: int | None) -> int | None:
        chosen = form.cleaned.get(name)
        return chosen if chosen in numbers else default

    newer = pick("to", numbers[-1] if numbers else None)
    older = pick("from", numbers[-2] if len(numbers) > 1 else newer)
    comparison = None
    if older is not None and newer is not None:
        by_number = {revision.number: revision for revision in revisions}
        comparison = compare_revisions(by_number[older], by_number[newer])
    return render(request, "reviews/compare.html", {"product": product, "numbers": numbers, "older": older,
                                                    "newer": newer, "comparison": comparison,
                                                    "filter_problems": form.problems}, status=form.status)


def _step_people(revision: Revision):
    return get_user_model().objects.filter(memberships__team=revision.product.team).distinct().order_by("username")


def _step_context(request, step: ProcessStep, *, item: ReviewItem | None = None, **extra) -> dict:
    form = extra.pop("step_form", None) or StepForm(people=_step_people(step.revision), initial={
        "owner": step.owner_id, "planned_on": step.planned_on, "status": step.status, "reference": step.reference,
        "version": step.version})
    return {"step": step, "item": item or step.item, "step_form": form,
            "can_edit": lifecycle.is_review_open(step.revision), **extra}


@login_required
@require_POST
def step_update(request, step_id: int):
    step = get_object_or_404(ProcessStep.objects.select_related("revision__product__team", "item", "owner")
                             .filter(revision__product__team__in=teams_of(request.user)), pk=step_id)
    form = StepForm(request.POST, people=_step_people(step.revision))
    status, extra = 200, {}
    if not form.is_valid():
        status = 400
        extra = {"step_form": form, "error": "; ".join(f"{name}: {' '.join(errors)}"
                                                      for name, errors in form.errors.items())}
    else:
        data = form.cleaned_data
        try:
            step = services.process_step_update(step=step, user=request.user, owner=data["owner"],
                                                planned_on=data["planned_on"], status=data["status"],
                                                reference=data["reference"], expected_version=data["version"])
            extra = {"saved": True}
        except services.ReviewConflict as conflict:
            step, status = conflict.current, 409
            extra = {"step_form": form, "error": f"Someone changed this step while you were editing: it is now "
                                                 f"'{conflict.current.get_status_display()}'. Your entry is kept "
                                                 "in the form; save again to replace theirs."}
            form.data = form.data.copy()
            form.data["version"] = str(conflict.current.version)
        except services.ReviewInputError as error:
            status, extra = 400, {"step_form": form, "error": str(error)}
        except PermissionDenied as error:
            if not request.htmx:
                raise
            status, extra = 403, {"error": str(error) or "Not allowed."}
    if request.htmx:
        return render(request, "reviews/_step_card.html", _step_context(request, step, **extra), status=status)
    if extra.get("error"):
        messages.error(request, extra["error"])
    return redirect(reverse("revision_review", args=[step.revision.product_id, step.revision.number])
                    + f"#step-{step.pk}")


@login_required
@require_POST
def evidence_upload(request, item_id: int):
    """A file for the decision on an item, or for its step when the item is tracked as one."""
    item = get_item_for_user(request.user, item_id)
    step = ProcessStep.objects.filter(item=item).first()
    upload = request.FILES.get("file")
    if upload is None:
        messages.error(request, "file: expected a file to attach")
    elif upload.size > services.MAX_ATTACHMENT_BYTES:
        messages.error(request, f"file: expected at most {services.MAX_ATTACHMENT_BYTES // 1_000_000} MB")
    else:
        try:
            services.evidence_attach(user=request.user, name=upload.name, content=upload.read(),
                                     item=None if step else item, step=step)
            messages.success(request, "Evidence attached.")
        except services.ReviewInputError as error:
            messages.error(request, str(error))
    target = reverse("revision_review", args=[item.revision.product_id, item.revision.number])
    return redirect(target + (f"#step-{step.pk}" if step else f"#item-{item.pk}"))


@login_required
@require_GET
def evidence_download(request, attachment_id: int):
    attachment = get_object_or_404(EvidenceAttachment.objects.filter(
        revision__product__team__in=teams_of(request.user)), pk=attachment_id)
    try:
        handle = attachment.file.open("rb")
    except FileNotFoundError:
        raise Http404("The stored file is missing.") from None
    # Always a download of opaque bytes: an uploaded HTML or SVG file must never run in the site's origin.
    response = FileResponse(handle, as_attachment=True, filename=attachment.name,
                            content_type="application/octet-stream")
    response["X-Content-Type-Options"] = "nosniff"
    return response


@login_required
@require_http_methods(["GET", "POST"])
def team_reviewers(request, team_id: int):
    """The team's default reviewer per topic: any member sees them, an approver sets them."""
    team = get_object_or_404(teams_of(request.user), pk=team_id)  # another team's: 404
    can_edit = has_role(request.user, team, Role.APPROVER)
    current = {row.topic: row.reviewer for row in TopicReviewer.objects.filter(team=team).select_related("reviewer")}
    status = 200
    if request.method == "POST":
        if not can_edit:
            raise PermissionDenied("Only an approver sets the team's default reviewers.")
        form = TopicReviewersForm(request.POST, people=services.reviewers_of(team))
        if form.is_valid():
            try:
                services.topic_reviewers_set(team=team, user=request.user, reviewers=form.cleaned_data)
            except services.ReviewInputError as error:
                form.add_error(None, str(error))
                status = 400
            else:
                messages.success(request, "Default reviewers saved; they are assigned at the next submission.")
                return redirect("team_reviewers", team_id=team.pk)
        else:
            status = 400
    else:
        form = TopicReviewersForm(initial=current, people=services.reviewers_of(team))
    rows = [(topic, form[topic], current.get(topic)) for topic in TOPICS]
    return render(request, "reviews/team_reviewers.html",
                  {"team": team, "form": form, "rows": rows, "can_edit": can_edit}, status=status)

