"""The engineer's measurement path: a reviewer starts a draft from the revision in review to keep the files
they measured, without the author; the checklist re-judges and the draft's page shows what changed."""

from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from projectapp.audit.models import AuditEvent
from projectapp.designs.models import Revision
from projectapp.reviews.services import revision_submit
from tests.web.conftest import EXAMPLES

GOOD_S2P = (EXAMPLES / "field-router-revA.s2p").read_bytes()


def test_a_reviewer_starts_a_measurement_draft_adds_a_file_and_the_author_sees_what_changed(client, product, author,
                                                                                           reviewer):
    revision_submit(revision=product.draft, user=author)
    client.force_login(reviewer)
    page = client.get(reverse("revision_detail", args=[product.pk, 1])).content.decode()
    assert "start a measurement draft" in page
    response = client.post(reverse("measurement_draft_start", args=[product.pk, 1]))
    draft = product.draft
    assert response.status_code == 302 and response["Location"] == draft.get_absolute_url()
    assert draft.based_on.number == 1 and draft.created_by == reviewer
    assert AuditEvent.objects.filter(revision=draft, actor=reviewer, summary__contains="measurement draft").exists()
    client.post(reverse("measurement_upload", args=[product.pk]),
                {"touchstone": SimpleUploadedFile("field-router-revA.s2p", GOOD_S2P)})
    assert draft.measurement_files.count() == 1
    assert AuditEvent.objects.filter(revision=draft, actor=reviewer).count() >= 2
    client.force_login(author)
    page = client.get(reverse("revision_detail", args=[product.pk, draft.number])).content.decode()
    assert "Changed since revision 1" in page
    assert Revision.objects.get(product=product, number=1).measurement_files.count() == 0  # frozen one untouched


def test_a_second_measurement_draft_goes_to_the_open_one(client, product, author, reviewer):
    revision_submit(revision=product.draft, user=author)
    client.force_login(reviewer)
    client.post(reverse("measurement_draft_start", args=[product.pk, 1]))
    response = client.post(reverse("measurement_draft_start", args=[product.pk, 1]))
    assert response["Location"] == product.draft.get_absolute_url()
    assert product.revisions.filter(state="draft").count() == 1


def test_an_author_without_the_reviewer_role_is_refused_and_another_team_gets_404(client, product, author, outsider):
    revision_submit(revision=product.draft, user=author)
    client.force_login(author)
    assert client.post(reverse("measurement_draft_start", args=[product.pk, 1])).status_code == 403
    client.force_login(outsider)
    assert client.post(reverse("measurement_draft_start", args=[product.pk, 1])).status_code == 404
    assert product.draft is None
