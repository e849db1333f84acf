"""Uploading Touchstone files to a draft: every broken file is answered and nothing is half stored."""

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from projectapp.designs import services
from projectapp.designs.models import MeasurementFile
from tests.web.conftest import EXAMPLES

GOOD_S2P = (EXAMPLES / "field-router-revA.s2p").read_bytes()


def upload(client, product, name: str, content: bytes):
    return client.post(reverse("measurement_upload", args=[product.pk]),
                       {"touchstone": SimpleUploadedFile(name, content)}, follow=True)


@pytest.mark.parametrize(("name", "content", "message"), [
    # Touchstone File Format Specification v1.1: a 2-port line holds 9 numbers
    ("short.s2p", b"# MHz S RI R 50\n700 0.1 0 0.2 0 0.2 0 0.1 0\n800 0.1 0 0.2\n", "short.s2p:3:"),
    ("words.s1p", b"# MHz S RI R 50\n700 zero 0\n", "words.s1p:2:"),
    ("format.s1p", b"# MHz S XY R 50\n700 0.1 0\n", "format.s1p:1:"),
    ("empty.s2p", b"", "empty.s2p"),
    ("notes.txt", b"# MHz S RI R 50\n700 0.1 0\n", "expected a Touchstone file named .s1p to .s8p"),
])
def test_every_broken_file_gets_a_message_and_nothing_is_stored(client, product, author, name, content, message):
    client.force_login(author)
    before = product.draft.document
    page = upload(client, product, name, content).content.decode()
    assert message in page and "nothing was stored" in page
    assert not MeasurementFile.objects.exists()
    assert product.draft.document == before


def test_an_oversize_file_is_refused_before_it_is_read(client, product, author, monkeypatch):
    monkeypatch.setattr(services, "MAX_MEASUREMENT_BYTES", 1000)
    client.force_login(author)
    page = upload(client, product, "big.s2p", GOOD_S2P).content.decode()
    assert "expected at most 0 MB" in page and not MeasurementFile.objects.exists()


def test_a_good_file_is_kept_mapped_and_checked(client, product, author):
    client.force_login(author)
    page = upload(client, product, "field-router-revA.s2p", GOOD_S2P).content.decode()
    assert "kept with draft 1" in page
    assert product.draft.document["measurements"] == [{"file": "field-router-revA.s2p", "ports": ["MAIN", "DIV"]}]
    again = upload(client, product, "field-router-revA.s2p", GOOD_S2P).content.decode()
    assert "already kept with this draft" in again and MeasurementFile.objects.count() == 1
    client.post(reverse("measurement_ports", args=[product.pk]),
                {"file": "field-router-revA.s2p", "port_count": "2", "port-0": "DIV", "port-1": "",
                 "version": product.draft.version})
    assert product.draft.document["measurements"][0]["ports"] == ["DIV", None]
    client.post(reverse("measurement_remove", args=[product.pk]), {"file": "field-router-revA.s2p",
                                                                   "version": product.draft.version})
    assert "measurements" not in product.draft.document and not MeasurementFile.objects.exists()


def test_measurement_uploads_deny_outsiders_and_members_without_the_role(client, product, outsider, team):
    from tests.web.conftest import make_user

    client.force_login(outsider)
    assert client.post(reverse("measurement_upload", args=[product.pk]),
                       {"touchstone": SimpleUploadedFile("a.s2p", GOOD_S2P)}).status_code == 404
    approver_only = make_user("approver-only", team, "approver")
    client.force_login(approver_only)
    assert client.post(reverse("measurement_upload", args=[product.pk]),
                       {"touchstone": SimpleUploadedFile("a.s2p", GOOD_S2P)}).status_code == 403
    assert not MeasurementFile.objects.exists()
