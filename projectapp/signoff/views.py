"""Sign-off of a revision, the archive of signed records, and verification of a PDF against it."""

from django.contrib import messages
from django.contrib.auth import get_user_model
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db.models import Q
from django.http import FileResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.utils.dateparse import parse_date
from django.views.decorators.http import require_GET, require_http_methods, require_POST

from projectapp.designs.access import get_revision_for_user
from projectapp.signoff import services
from projectapp.signoff.forms import SignForm, VerifyForm
from projectapp.signoff.models import SignedRecord, Supersession
from projectapp.teams.access import teams_of
from rules.catalog import categories


def records_for(user):
    return SignedRecord.objects.filter(revision__product__team__in=teams_of(user)).select_related(
        "revision__product__team")


def _signable_roles(user, revision) -> list[str]:
    team = revision.product.team
    state = services.readiness(revision)
    mine = team.roles_of(user)
    return [role for role in state.missing_roles if role in mine]


@login_required
@require_GET
def signoff_page(request, product_id: int, number: int):
    revision = get_revision_for_user(request.user, product_id, number)
    state = services.readiness(revision)
    roles = _signable_roles(request.user, revision)
    return render(request, "signoff/signoff.html", {
        "product": revision.product, "revision": revision, "state": state,
        "signatures": revision.signatures.select_related("signer"),
        "form": SignForm(roles=roles) if roles else None,
        "record": getattr(revision, "signed_record", None),
    })


@login_required
@require_POST
def signoff_sign(request, product_id: int, number: int):
    revision = get_revision_for_user(request.user, product_id, number)
    form = SignForm(request.POST, roles=revision.product.team.signoff_roles)
    if not form.is_valid():
        messages.error(request, "role and password: both are needed to sign")
        return redirect("signoff_page", product_id, number)
    try:
        signature = services.revision_sign(revision=revision, user=request.user, role=form.cleaned_data["role"],
                                           password=form.cleaned_data["password"], request=request)
    except services.SigningError as error:
        messages.error(request, str(error))
        return redirect("signoff_page", product_id, number)
    except PermissionDenied as error:
        messages.error(request, str(error))
        return render(request, "signoff/signoff_denied.html", {"revision": revision, "reason": str(error)},
                      status=403)
    revision.refresh_from_db()
    if hasattr(revision, "signed_record"):
        messages.success(request, f"Signed as {signature.role}. All signatures are in: the record is archived.")
        return redirect(revision.signed_record)
    messages.success(request, f"Signed as {signature.role}.")
    return redirect("signoff_page", product_id, number)


@login_required
@require_GET
def archive_list(request):
    records = records_for(request.user)
    query = {key: request.GET.get(key, "").strip() for key in ("q", "product", "category", "signer", "since",
                                                                "until", "state")}
    if query["q"]:
        records = records.filter(Q(revision__product__name__icontains=query["q"]) | Q(sha256__startswith=query["q"])
                                 | Q(fingerprint__startswith=query["q"]))
    if query["product"].isdigit():
        records = records.filter(revision__product_id=int(query["product"]))
    if query["category"] in categories():
        records = records.filter(revision__evaluation__design__category=query["category"])
    if query["signer"].isdigit():
        records = records.filter(revision__signatures__signer_id=int(query["signer"]))
    since, until = parse_date(query["since"] or "") if query["since"] else None, \
        parse_date(query["until"] or "") if query["until"] else None
    if since:
        records = records.filter(created_at__date__gte=since)
    if until:
        records = records.filter(created_at__date__lte=until)
    superseded = Supersession.objects.values("older")
    if query["state"] == "current":
        records = records.exclude(pk__in=superseded)
    elif query["state"] == "superseded":
        records = records.filter(pk__in=superseded)
    records = records.distinct()
    superseded_ids = set(Supersession.objects.values_list("older_id", flat=True))
    rows = [{"record": record, "current": record.pk not in superseded_ids} for record in records]
    signers = get_user_model().objects.filter(
        pk__in=records_for(request.user).values("revision__signatures__signer")).order_by("username")
    from projectapp.designs.access import products_for

    return render(request, "signoff/archive.html", {
        "rows": rows, "query": query, "products": products_for(request.user), "signers": signers,
        "categories": categories().values()})


@login_required
@require_GET
def record_detail(request, record_id: int):
    record = get_object_or_404(records_for(request.user), pk=record_id)
    return render(request, "signoff/record.html", {
        "record": record, "revision": record.revision, "product": record.revision.product,
        "signatures": record.revision.signatures.select_related("signer"),
        "superseded_by": record.superseded_by, "supersedes": [link.older for link in record.supersedes.all()]})


@login_required
@require_GET
def record_download(request, record_id: int):
    record = get_object_or_404(records_for(request.user), pk=record_id)
    return FileResponse(record.pdf.open("rb"), as_attachment=True, filename=record.pdf.name.rsplit("/", 1)[-1],
                        content_type="application/pdf")


@login_required
@require_http_methods(["GET", "POST"])
def verify(request):
    form = VerifyForm(request.POST or None, request.FILES or None)
    outcome = None
    if request.method == "POST" and form.is_valid():
        content = form.cleaned_data["pdf"].read()
        record = services.find_record_by_content(content, records=records_for(request.user))
        import hashlib

        outcome = {"sha256": hashlib.sha256(content).hexdigest(), "record": record,
                   "current": record.is_current if record else None,
                   "superseded_by": record.superseded_by if record else None,
                   "name": form.cleaned_data["pdf"].name}
    return render(request, "signoff/verify.html", {"form": form, "outcome": outcome})
