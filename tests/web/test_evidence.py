"""Evidence attachments: kept with their SHA-256, downloaded only by the team, never inline, frozen with the review."""

import hashlib

import pytest
from django.core.exceptions import PermissionDenied
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from projectapp.audit.models import AuditEvent
from projectapp.designs import services as design_services
from projectapp.reviews.models import EvidenceAttachment, ProcessStep, ReviewItem, SignedRevisionError
from projectapp.reviews.services import ReviewInputError, evidence_attach, revision_submit

LETTER = b"%PDF-1.4 operator approval of single-antenna operation, case 5521\n"


@pytest.fixture
def reviewed(product, author):
    revision_submit(revision=product.draft, user=author)
    return product.revisions.get(number=1)


def a_decision(revision) -> ReviewItem:
    return revision.review_items.filter(kind="raised", process_step__isnull=True).order_by("id").first()


def test_a_file_is_kept_with_its_sha256_size_and_an_audit_event(reviewed, reviewer):
    item = a_decision(reviewed)
    attachment = evidence_attach(user=reviewer, name="../../etc/approval letter.pdf", content=LETTER, item=item)
    assert attachment.sha256 == hashlib.sha256(LETTER).hexdigest() and attachment.size_bytes == len(LETTER)
    assert attachment.name == "approval-letter.pdf"  # the path dropped, the space replaced
    with attachment.file.open("rb") as handle:
        assert handle.read() == LETTER
    event = AuditEvent.objects.get(action=AuditEvent.Action.EVIDENCE_ADDED)
    assert event.changes["evidence"][1]["sha256"] == attachment.sha256


def test_an_empty_or_oversize_file_is_refused_naming_the_field(reviewed, reviewer, settings):
    item = a_decision(reviewed)
    with pytest.raises(ReviewInputError) as error:
        evidence_attach(user=reviewer, name="x.pdf", content=b"", item=item)
    assert error.value.field == "file"
    with pytest.raises(ReviewInputError, match="at most 10 MB"):
        evidence_attach(user=reviewer, name="x.pdf", content=b"0" * 10_000_001, item=item)
    assert not EvidenceAttachment.objects.exists()


def test_the_author_attaches_to_a_step_but_not_to_a_decision(reviewed, author):
    step = ProcessStep.objects.filter(revision=reviewed).first()
    assert evidence_attach(user=author, name="lab.pdf", content=LETTER, step=step).step == step
    with pytest.raises(PermissionDenied):
        evidence_attach(user=author, name="lab.pdf", content=LETTER, item=a_decision(reviewed))


def test_the_download_is_an_attachment_only_for_the_team(client, reviewed, reviewer, outsider):
    attachment = evidence_attach(user=reviewer, name="page.html", content=b"<script>alert(1)</script>",
                                 item=a_decision(reviewed))
    url = reverse("evidence_download", args=[attachment.pk])
    client.force_login(reviewer)
    response = client.get(url)
    assert response.status_code == 200 and response["Content-Disposition"].startswith("attachment")
    assert response["Content-Type"] == "application/octet-stream"
    assert b"".join(response.streaming_content) == b"<script>alert(1)</script>"
    client.force_login(outsider)
    assert client.get(url).status_code == 404


def test_the_upload_view_attaches_and_the_review_page_lists_it(client, reviewed, product, reviewer):
    item = a_decision(reviewed)
    client.force_login(reviewer)
    response = client.post(reverse("evidence_upload", args=[item.pk]),
                           {"file": SimpleUploadedFile("report.pdf", LETTER)})
    assert response.status_code == 302
    page = client.get(reverse("revision_review", args=[product.pk, 1])).content.decode()
    assert "report.pdf" in page and hashlib.sha256(LETTER).hexdigest()[:16] in page


def test_evidence_is_frozen_once_the_review_closes(reviewed, product, author, reviewer):
    attachment = evidence_attach(user=reviewer, name="a.pdf", content=LETTER, item=a_decision(reviewed))
    with pytest.raises(SignedRevisionError):
        attachment.delete()
    draft = design_services.draft_get_or_start(product=product, user=author)
    revision_submit(revision=draft, user=author)  # revision 1 withdrawn: its review is closed
    with pytest.raises(PermissionDenied):
        evidence_attach(user=reviewer, name="b.pdf", content=LETTER, item=a_decision(reviewed))
    attachment.name = "replaced.pdf"
    with pytest.raises(SignedRevisionError):
        attachment.save()
