"""Review views: the dashboard and queues, a revision's items, one item, the audit trail, comparison.

Item forms post to small endpoints; htmx swaps the item's card in place, and without JavaScript the
endpoint redirects back to the page the form was on.
"""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db.models import Count, Q
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse
from django.utils.http import url_has_allowed_host_and_scheme
from django.views.decorators.http import require_GET, require_POST

from projectapp.designs.access import get_product_for_user, get_revision_for_user, products_for
from projectapp.reviews import services
from projectapp.reviews.comparison import compare_revisions
from projectapp.reviews.forms import (
    AssignForm,
    CommentForm,
    CompareForm,
    ConfirmForm,
    DashboardFilterForm,
    DecisionForm,
)
from projectapp.reviews.models import AuditEvent, Disposition, ReviewItem
from projectapp.reviews.provenance import decision_lines
from projectapp.teams.access import teams_of
from rules.findings import SEVERITIES, TOPICS

OPEN_FILTER = (Q(disposition__in=[Disposition.OPEN, Disposition.DISCUSSION])
               | Q(carried_from__isnull=False, carried_confirmed=False))


def items_for(user):
    return (ReviewItem.objects.filter(revision__product__team__in=teams_of(user))
            .with_provenance().select_related("revision__product__team", "assignee"))


def get_item_for_user(user, item_id: int) -> ReviewItem:
    return get_object_or_404(items_for(user), pk=item_id)


def current_review_revisions(user):
    """Each product's latest submitted revision: the one under review."""
    latest = []
    for product in products_for(user):
        revision = product.latest_submitted
        if revision is not None:
            latest.append(revision.pk)
    return latest


@login_required
@require_GET
def dashboard(request):
    base = items_for(request.user).filter(revision__in=current_review_revisions(request.user),
                                          kind=ReviewItem.Kind.RAISED)
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
    severity_rank = {severity: index for index, severity in enumerate(SEVERITIES)}
    ordered = sorted(items, key=lambda item: (severity_rank.get(item.severity, 9), item.revision.product.name,
                                              TOPICS.index(item.topic) if item.topic in TOPICS else 99, item.pk))
    open_items = base.filter(OPEN_FILTER)
    context = {
        "items": ordered,
        "filters": filters,
        "filter_problems": form.problems,
        "my_open": open_items.filter(assignee=request.user).count(),
        "by_product": open_items.values("revision__product_id", "revision__product__name")
        .annotate(n=Count("id")).order_by("revision__product__name"),
        "by_severity": open_items.values("severity").annotate(n=Count("id")).order_by("severity"),
        "by_topic": open_items.values("topic").annotate(n=Count("id")).order_by("topic"),
        "by_assignee": open_items.values("assignee__username", "assignee_id").annotate(n=Count("id"))
        .order_by("assignee__username"),
        "products": products_for(request.user),
        "severities": SEVERITIES,
        "topics": TOPICS,
    }
    template = "reviews/_dashboard_items.html" if request.htmx else "reviews/dashboard.html"
    return render(request, template, context, status=form.status)


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
    raised = [_card_context(request, item, approvers=approvers) for item in items
              if item.kind == ReviewItem.Kind.RAISED]
    resolved = [item for item in items if item.kind == ReviewItem.Kind.RESOLVED]
    settled = sum(1 for card in raised if card["item"].is_settled)
    return render(request, "reviews/revision_review.html", {
        "product": revision.product, "revision": revision, "cards": raised, "resolved": resolved,
        "counts": (settled, len(raised)), "previous": services._previous_submitted(revision),
        "measurement_digests": _digests(revision)})


@login_required
@require_GET
def item_detail(request, item_id: int):
    item = get_item_for_user(request.user, item_id)
    return render(request, "reviews/item_detail.html", {
        **_card_context(request, item),
        "comments": item.comments.select_related("author"),
        "comment_form": CommentForm(),
        "events": item.audit_events.select_related("actor"),
        "product": item.revision.product,
        "revision": item.revision,
        "measurement_digests": _digests(item.revision),
    })


def settled_count(revision) -> tuple[int, int]:
    """How many of a revision's raised items are settled, of how many (the review page's count)."""
    raised = [item for item in ReviewItem.objects.filter(revision=revision, kind=ReviewItem.Kind.RAISED)
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
