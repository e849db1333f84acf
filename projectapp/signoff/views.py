"""Sign-off of a revision, the archive of signed records, and verification of a PDF against it."""

from django.contrib import messages
from django.contrib.auth import get_user_model
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db.models import Q
from django.http import FileResponse, Http404, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.views.decorators.http import require_GET, require_http_methods, require_POST

from projectapp import paging
from projectapp.designs.access import get_revision_for_user, products_for
from projectapp.designs.models import Revision
from projectapp.filters import capped_choices
from projectapp.signoff import services
from projectapp.signoff.export_pack import export_pack_build, pack_file_name
from projectapp.signoff.forms import ArchiveFilterForm, SignForm, VerifyForm
from projectapp.signoff.models import Signature, SignedRecord
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
    """The signed records of the person's teams, filtered and paged in the database; current or superseded is
    the revision's state (designs.lifecycle)."""
    teams = teams_of(request.user)
    records = records_for(request.user).defer("revision__document", "revision__evaluation",
                                              "revision__section_versions")
    form = ArchiveFilterForm(request.GET).read()
    chosen, query = form.cleaned, form.shown
    if "q" in chosen:
        text = chosen["q"]
        records = records.filter(Q(revision__product__name__icontains=text) | Q(sha256__startswith=text)
                                 | Q(fingerprint__startswith=text))
    records = form.apply(records, {"product": "revision__product_id", "category": "revision__category",
                                   "since": "created_at__date__gte", "until": "created_at__date__lte"})
    if "signer" in chosen:
        records = records.filter(revision__in=Signature.objects.filter(signer_id=chosen["signer"]).values("revision"))
    state = {"current": Revision.State.SIGNED, "superseded": Revision.State.SUPERSEDED}.get(chosen.get("state"))
    if state:
        records = records.filter(revision__state=state)
    paged = paging.paged(records.order_by("-created_at", "-id"), form)
    signed_revisions = Revision.objects.filter(product__team__in=teams, state__in=SIGNED_STATES)
    signers = get_user_model().objects.filter(
        pk__in=Signature.objects.filter(revision__in=signed_revisions).values("signer")).order_by("username")
    signed_products = products_for(request.user).filter(revisions__state__in=SIGNED_STATES).distinct()
    products, more_products = capped_choices(signed_products.order_by("name").only("pk", "name", "team"))
    return render(request, "signoff/archive.html", {
        "records": paged.items, "paged": paged, "query": query, "products": products, "more_products": more_products,
        "chosen_product": signed_products.filter(pk=chosen["product"]).first() if "product" in chosen else None,
        "without_product": form.query_without("product"), "signers": signers, "categories": categories().values(),
        "filter_problems": form.problems}, status=form.status)


SIGNED_STATES = (Revision.State.SIGNED, Revision.State.SUPERSEDED)


@login_required
@require_GET
def revision_record(request, product_id: int, number: int):
    """A signed revision's record, wherever the revision is shown: the designs and review pages link here by
    revision, and this answers with the record's page (a 404 while the revision is not signed)."""
    revision = get_revision_for_user(request.user, product_id, number)
    record = SignedRecord.objects.filter(revision=revision).first()
    if record is None:
        raise Http404("This revision is not signed.")
    return redirect(record)


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


@login_required
@require_GET
def record_pack(request, record_id: int):
    """The export pack of a signed revision (signoff.export_pack), for an operator or a test house."""
    record = get_object_or_404(records_for(request.user), pk=record_id)
    response = HttpResponse(export_pack_build(record), content_type="application/zip")
    response["Content-Disposition"] = f'attachment; filename="{pack_file_name(record)}"'
    return response
