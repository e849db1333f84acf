"""Sign-off, the PDF record, the archive and its verification."""

import copy
import hashlib
import io
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest
from django.contrib.auth import get_user_model
from django.core.exceptions import PermissionDenied
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse
from pypdf import PdfReader

from projectapp.designs import services as design_services
from projectapp.reviews.models import ReviewItem, SignedRevisionError
from projectapp.reviews.services import review_item_confirm, review_item_decide, revision_submit
from projectapp.signoff import services
from projectapp.signoff.archive_files import export_archive, verify_archive
from projectapp.signoff.models import ImmutableRecordError, SignedRecord, Supersession
from tests.web.conftest import PASSWORD, signing_request

ROOT = Path(__file__).parents[2]


@pytest.fixture
def submitted(product, author):
    revision_submit(revision=product.draft, user=author)
    return product.revisions.get(number=1)


def settle(revision, reviewer, approver) -> None:
    """Waive every blocker (as approver) and give every warning a disposition (as reviewer)."""
    for item in revision.review_items.filter(kind="raised"):
        if item.severity == "blocker":
            review_item_decide(item=item, user=approver, disposition="waived",
                               justification="Accepted for a 20-unit pilot", expected_version=item.version)
        elif item.severity == "warning":
            review_item_decide(item=item, user=reviewer, disposition="change", justification="",
                               expected_version=item.version)


def sign_all(revision, author, reviewer, approver) -> SignedRecord:
    for user, role in ((author, "author"), (reviewer, "reviewer"), (approver, "approver")):
        services.revision_sign(revision=revision, user=user, role=role, password=PASSWORD, request=signing_request())
    return SignedRecord.objects.get(revision=revision)


def pdf_text(content: bytes) -> str:
    """The PDF's text with whitespace collapsed (table cells wrap words onto new lines)."""
    return " ".join(" ".join(page.extract_text() for page in PdfReader(io.BytesIO(content)).pages).split())


def test_the_sign_off_page_lists_exactly_what_stands_in_the_way(client, submitted, reviewer):
    state = services.readiness(submitted)
    assert not state.ready
    assert any(o.startswith("SEP-001") and "must be waived by an approver" in o for o in state.obstacles)
    assert any(o.startswith("EFF-001") and "needs a disposition" in o for o in state.obstacles)
    blockers_and_warnings = submitted.review_items.filter(kind="raised", severity__in=["blocker", "warning"])
    assert len(state.obstacles) == blockers_and_warnings.count()
    client.force_login(reviewer)
    page = client.get(reverse("signoff_page", args=[submitted.product_id, 1])).content.decode()
    assert "What stands in the way" in page and "SEP-001" in page
    assert 'name="password"' not in page  # no sign form until it is ready


def test_a_blocker_marked_will_change_still_blocks_signing(submitted, reviewer):
    item = submitted.review_items.get(rule_id="SEP-001", kind="raised")
    review_item_decide(item=item, user=reviewer, disposition="change", justification="", expected_version=item.version)
    assert any("SEP-001" in obstacle for obstacle in services.readiness(submitted).obstacles)


def test_signing_needs_the_password_the_role_and_distinct_people(submitted, author, reviewer, approver):
    settle(submitted, reviewer, approver)
    assert services.readiness(submitted).ready
    with pytest.raises(services.SigningError, match="password: that is not your password"):
        services.revision_sign(revision=submitted, user=author, role="author", password="wrong", request=signing_request())
    with pytest.raises(PermissionDenied):
        services.revision_sign(revision=submitted, user=author, role="approver", password=PASSWORD, request=signing_request())
    services.revision_sign(revision=submitted, user=author, role="author", password=PASSWORD, request=signing_request())
    with pytest.raises(services.SigningError, match="already recorded"):
        services.revision_sign(revision=submitted, user=author, role="author", password=PASSWORD, request=signing_request())
    # the author also holds the reviewer role here; the team does not allow one person for two roles
    from projectapp.teams.models import Membership
    Membership.objects.create(team=submitted.product.team, user=author, role="reviewer")
    with pytest.raises(services.SigningError, match="different person for each role"):
        services.revision_sign(revision=submitted, user=author, role="reviewer", password=PASSWORD, request=signing_request())
    assert submitted.signatures.count() == 1


def test_signing_starts_the_freeze_of_the_review(client, submitted, author, reviewer, approver):
    settle(submitted, reviewer, approver)
    services.revision_sign(revision=submitted, user=author, role="author", password=PASSWORD, request=signing_request())
    item = submitted.review_items.get(rule_id="EFF-001", kind="raised")
    with pytest.raises(PermissionDenied):
        review_item_decide(item=item, user=reviewer, disposition="waived", justification="x",
                           expected_version=item.version)
    with pytest.raises(SignedRevisionError):
        ReviewItem.objects.filter(pk=item.pk).update(justification="edited")
    item.justification = "edited"
    with pytest.raises(SignedRevisionError):
        item.save()
    client.force_login(reviewer)
    response = client.post(reverse("review_item_decide", args=[item.pk]),
                           {"disposition": "open", "justification": "", "version": item.version},
                           HTTP_HX_REQUEST="true")
    assert response.status_code == 403


def test_the_last_signature_archives_a_pdf_with_every_finding_disposition_and_signature(
        submitted, author, reviewer, approver):
    settle(submitted, reviewer, approver)
    record = sign_all(submitted, author, reviewer, approver)
    with record.pdf.open("rb") as handle:
        content = handle.read()
    assert hashlib.sha256(content).hexdigest() == record.sha256 and len(content) == record.size_bytes
    assert content.startswith(b"%PDF")
    text = pdf_text(content)
    for item in submitted.review_items.filter(kind="raised"):
        assert item.rule_id in text
        assert item.get_disposition_display() in text
    assert "Accepted for a 20-unit pilot" in text
    for signature in submitted.signatures.all():
        assert signature.signer_name in text
    pages = len(PdfReader(io.BytesIO(content)).pages)
    assert f"page 1 of {pages}" in text and f"page {pages} of {pages}" in text
    assert "carrier acceptance" in text and "regulatory approval" in text and "RF exposure" in text
    assert record.fingerprint[:4] in text
    with pytest.raises(ImmutableRecordError):
        record.save()
    with pytest.raises(ImmutableRecordError):
        record.delete()


def test_a_later_sign_off_supersedes_the_older_record_without_editing_it(submitted, author, reviewer, approver):
    settle(submitted, reviewer, approver)
    first = sign_all(submitted, author, reviewer, approver)
    before = (first.sha256, first.fingerprint, first.pdf.name)
    draft = design_services.draft_get_or_start(product=submitted.product, user=author)
    document = copy.deepcopy(draft.document)
    document["antennas"][1]["position_mm"] = [165, 10, 12]  # beyond lambda/4 at 791 MHz (94.7 mm)
    design_services.draft_save_document(revision=draft, document=document, user=author)
    second_revision = revision_submit(revision=draft, user=author)
    for item in second_revision.review_items.filter(kind="raised"):
        if item.is_carried_unconfirmed or item.severity in ("blocker", "warning"):
            review_item_decide(item=item, user=approver, disposition=item.disposition if item.disposition != "open"
                               else "change", justification=item.justification or "", expected_version=item.version)
    second = sign_all(second_revision, author, reviewer, approver)
    first = SignedRecord.objects.get(pk=first.pk)
    assert (first.sha256, first.fingerprint, first.pdf.name) == before
    assert not first.is_current and first.superseded_by == second and second.is_current
    assert Supersession.objects.count() == 1


def test_the_archive_and_verification_work_from_the_browser(client, submitted, author, reviewer, approver, outsider):
    settle(submitted, reviewer, approver)
    record = sign_all(submitted, author, reviewer, approver)
    with record.pdf.open("rb") as handle:
        content = handle.read()
    client.force_login(reviewer)
    listing = client.get(reverse("archive_list") + "?state=current").content.decode()
    assert submitted.product.name in listing and record.sha256[:15] in listing
    assert record.sha256[:15] not in client.get(reverse("archive_list") + "?state=superseded").content.decode()
    assert client.get(reverse("record_download", args=[record.pk])).getvalue() == content
    page = client.post(reverse("archive_verify"), {"pdf": SimpleUploadedFile("copy.pdf", content)}).content.decode()
    assert "<strong>Yes.</strong>" in page and "<strong>current</strong>" in page
    tampered = bytearray(content)
    tampered[len(tampered) // 2] ^= 0x01  # one byte changed
    page = client.post(reverse("archive_verify"), {"pdf": SimpleUploadedFile("copy.pdf", bytes(tampered))})
    assert "<strong>No.</strong>" in page.content.decode()
    # another team's member learns nothing about this record
    client.force_login(outsider)
    assert client.get(reverse("record_detail", args=[record.pk])).status_code == 404
    assert client.get(reverse("record_download", args=[record.pk])).status_code == 404
    page = client.post(reverse("archive_verify"), {"pdf": SimpleUploadedFile("copy.pdf", content)}).content.decode()
    assert "<strong>No.</strong>" in page


def test_the_archive_exports_and_verifies_from_the_command_line(submitted, author, reviewer, approver, tmp_path,
                                                                 settings):
    settle(submitted, reviewer, approver)
    record = sign_all(submitted, author, reviewer, approver)
    out = tmp_path / "archive.zip"
    assert export_archive(out) == 1
    result = verify_archive(out)
    assert result.checked == 1 and result.problems == []
    with zipfile.ZipFile(out) as archive:
        names = archive.namelist()
        pdf_name = next(name for name in names if name.endswith(".pdf"))
        contents = {name: archive.read(name) for name in names}
    assert record.sha256 in contents["manifest.json"].decode()
    broken = bytearray(contents[pdf_name])
    broken[100] ^= 0x01
    contents[pdf_name] = bytes(broken)
    tampered = tmp_path / "tampered.zip"
    with zipfile.ZipFile(tampered, "w") as archive:
        for name, data in contents.items():
            archive.writestr(name, data)
    result = verify_archive(tampered)
    assert len(result.problems) == 1 and "does not match the manifest" in result.problems[0]


def test_verify_archive_command_exits_1_on_a_tampered_zip(tmp_path):
    bad = tmp_path / "bad.zip"
    with zipfile.ZipFile(bad, "w") as archive:
        archive.writestr("manifest.json", '{"format": "earshot-archive/1", "records": [{"file": "records/a.pdf", '
                                          '"sha256": "00"}]}')
        archive.writestr("records/a.pdf", b"%PDF-1.4 not the archived one")
    result = subprocess.run([sys.executable, "manage.py", "verify_archive", str(bad), "--offline"], cwd=ROOT,
                            capture_output=True, text=True, timeout=120)
    assert result.returncode == 1 and "does not match the manifest" in result.stderr


def test_signing_through_the_views(client, submitted, author, reviewer, approver):
    settle(submitted, reviewer, approver)
    url = reverse("signoff_sign", args=[submitted.product_id, 1])
    client.force_login(author)
    response = client.post(url, {"role": "author", "password": "not it"})
    assert response.status_code == 302 and submitted.signatures.count() == 0
    client.post(url, {"role": "author", "password": PASSWORD})
    client.force_login(reviewer)
    assert client.post(url, {"role": "approver", "password": PASSWORD}).status_code == 403
    client.post(url, {"role": "reviewer", "password": PASSWORD})
    client.force_login(approver)
    response = client.post(url, {"role": "approver", "password": PASSWORD})
    record = SignedRecord.objects.get(revision=submitted)
    assert response["Location"] == record.get_absolute_url()


def test_frozen_records_reject_changes_through_the_admin(client, submitted, author, reviewer, approver):
    settle(submitted, reviewer, approver)
    record = sign_all(submitted, author, reviewer, approver)
    admin = get_user_model().objects.create_superuser("root", "root@example.invalid", PASSWORD)
    client.force_login(admin)
    item = submitted.review_items.first()
    assert client.post(reverse("admin:reviews_reviewitem_change", args=[item.pk]), {"justification": "x"}).status_code == 403
    assert client.post(reverse("admin:designs_revision_change", args=[submitted.pk]), {}).status_code == 403
    assert client.post(reverse("admin:designs_revision_delete", args=[submitted.pk]), {"post": "yes"}).status_code == 403
    assert SignedRecord.objects.filter(pk=record.pk).exists()


def test_the_record_says_who_decided_what_and_what_was_carried(submitted, author, reviewer, approver):
    product = submitted.product
    eff = submitted.review_items.get(rule_id="EFF-001", kind="raised")
    sep = submitted.review_items.get(rule_id="SEP-001", kind="raised")
    review_item_decide(item=eff, user=reviewer, disposition="discussion", justification="",
                       expected_version=eff.version)
    review_item_decide(item=sep, user=approver, disposition="waived", justification="Pilot of 20 units",
                       expected_version=sep.version)
    draft = design_services.draft_get_or_start(product=product, user=author)
    second = revision_submit(revision=draft, user=author)
    eff2 = second.review_items.get(rule_id="EFF-001", kind="raised")
    sep2 = second.review_items.get(rule_id="SEP-001", kind="raised")
    review_item_decide(item=eff2, user=approver, disposition="waived", justification="Indoor use only",
                       expected_version=eff2.version)
    review_item_confirm(item=sep2, user=approver, expected_version=sep2.version)
    for item in second.review_items.filter(kind="raised", severity="warning").exclude(pk=eff2.pk):
        review_item_decide(item=item, user=reviewer, disposition="change", justification="",
                           expected_version=item.version)
    record = sign_all(second, author, reviewer, approver)
    with record.pdf.open("rb") as handle:
        text = pdf_text(handle.read())
    assert "carried from design revision 1, confirmed" not in text
    assert "Design revision 1 carried in: Needs discussion, decided by reviewer" in text  # EFF-001, decided anew
    assert "Carried from design revision 1; confirmed here by approver" in text  # SEP-001
    assert text.count("in this revision") >= 1 and "in design revision 1" in text


def test_an_older_revision_cannot_be_signed_once_a_newer_one_is_archived(client, submitted, author, reviewer,
                                                                        approver):
    settle(submitted, reviewer, approver)
    services.revision_sign(revision=submitted, user=author, role="author", password=PASSWORD, request=signing_request())  # signing started
    draft = design_services.draft_get_or_start(product=submitted.product, user=author)
    newer = revision_submit(revision=draft, user=author)
    for item in newer.review_items.filter(kind="raised", severity__in=["blocker", "warning"]):
        review_item_confirm(item=item, user=approver, expected_version=item.version)
    newer_record = sign_all(newer, author, reviewer, approver)
    url = reverse("signoff_sign", args=[submitted.product_id, 1])
    client.force_login(reviewer)
    response = client.post(url, {"role": "reviewer", "password": PASSWORD}, follow=True)
    page = response.content.decode()
    assert "Design revision 2 of Hive gateway is already signed and archived, so design revision 1 can no longer be signed" in page
    assert submitted.signatures.count() == 1 and not SignedRecord.objects.filter(revision=submitted).exists()
    assert any(o.startswith("Design revision 2 of Hive gateway") for o in services.readiness(submitted).obstacles)
    assert [record.pk for record in SignedRecord.objects.all() if record.is_current] == [newer_record.pk]


def test_the_record_is_built_before_the_first_signature_and_a_failure_is_a_message(
        client, submitted, author, reviewer, approver, monkeypatch, caplog):
    from reportlab.platypus.doctemplate import LayoutError

    from projectapp.signoff import pdf

    settle(submitted, reviewer, approver)
    built = []

    def failing_build(revision, *, fingerprint):
        built.append(revision.signatures.count())
        raise LayoutError("Flowable too large on page 5")

    monkeypatch.setattr(pdf, "build_record_pdf", failing_build)
    client.force_login(author)
    url = reverse("signoff_sign", args=[submitted.product_id, 1])
    response = client.post(url, {"role": "author", "password": PASSWORD}, follow=True)
    page = response.content.decode()
    assert response.status_code == 200 and built == [1]  # built with the signature being given, at the first
    assert "could not be built (LayoutError), so your signature was not recorded" in page
    assert "the review is still open" in page
    assert submitted.signatures.count() == 0 and "could not be built" in caplog.text
    item = submitted.review_items.get(rule_id="EFF-001", kind="raised")  # the review can still change
    review_item_decide(item=item, user=reviewer, disposition="waived", justification="Chamber-tested",
                       expected_version=item.version)
    monkeypatch.undo()
    record = sign_all(submitted, author, reviewer, approver)
    assert record.size_bytes > 0
