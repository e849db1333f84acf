"""Far-field patterns kept with a draft (views measurement_pattern_upload / measurement_pattern_update,
services.pattern_add / pattern_update): a file is kept only when it parses and its antenna and environment pass
the design parser; every refusal names the file's line or the field, and nothing is half stored."""

import hashlib
import json
import re

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse
from django.utils.html import escape

from projectapp.audit.models import AuditEvent
from projectapp.designs import services
from projectapp.designs.checklists import checklist_for
from projectapp.designs.models import MeasurementFile, Revision
from projectapp.reviews.services import revision_submit
from tests.web.conftest import EXAMPLES, make_user

MAIN_CSV = (EXAMPLES / "trail-tracker-main.csv").read_bytes()
DIV_CSV = (EXAMPLES / "trail-tracker-div.csv").read_bytes()
# The demo's environment (rules/examples/trail-tracker.json): Taga's model, 20° mean elevation, 20° spread,
# XPR 6 dB.
TAGA = {"environment": "taga", "mean_elevation_deg": "20", "spread_deg": "20", "xpr_db": "6"}


@pytest.fixture
def tracker(team, author):
    """The trail tracker's design without its measurements: MAIN and DIV 50 mm apart at 791 MHz (a spacing
    warning from the geometry), and a GNSS antenna."""
    document = json.loads((EXAMPLES / "trail-tracker.json").read_text())
    del document["measurements"]
    product = services.product_create(team=team, name="Trail tracker", user=author)
    services.design_import(product=product, text=json.dumps(document), source="trail-tracker.json", user=author)
    return product


def draft_of(product) -> Revision:
    return Revision.objects.get(product=product, state="draft")


def upload(client, product, name: str, content: bytes, antenna: str, *, absolute: bool = True, **environment):
    data = {"pattern": SimpleUploadedFile(name, content), "antenna": antenna, **(environment or TAGA)}
    if absolute:
        data["absolute"] = "on"
    return client.post(reverse("measurement_pattern_upload", args=[product.pk]), data, follow=True)


def text(response) -> str:
    return response.content.decode()


def separation(product) -> dict:
    return next(finding for finding in checklist_for(draft_of(product)).findings if finding["id"] == "SEP-001")


@pytest.fixture
def author_client(client, author):
    client.force_login(author)
    return client


def test_a_pair_of_patterns_is_kept_listed_and_outranks_the_spacing_rule(author_client, tracker):
    assert separation(tracker)["severity"] == "warning" and separation(tracker)["basis"] == "design"
    version = draft_of(tracker).version
    first = upload(author_client, tracker, "trail-tracker-main.csv", MAIN_CSV, "MAIN")
    assert "trail-tracker-main.csv kept with draft 1 as the far-field pattern of MAIN" in text(first)
    page = text(upload(author_client, tracker, "trail-tracker-div.csv", DIV_CSV, "DIV"))
    draft = draft_of(tracker)
    taga = {"model": "taga", "mean_elevation_deg": 20, "spread_deg": 20, "xpr_db": 6}
    assert draft.document["measurements"] == [
        {"kind": "far-field", "file": "trail-tracker-main.csv", "antenna": "MAIN", "absolute": True, "environment": taga},
        {"kind": "far-field", "file": "trail-tracker-div.csv", "antenna": "DIV", "absolute": True, "environment": taga}]
    kept = {measurement.name: measurement for measurement in draft.measurement_files.all()}
    assert {measurement.kind for measurement in kept.values()} == {"far-field"}
    assert kept["trail-tracker-main.csv"].sha256 == hashlib.sha256(MAIN_CSV).hexdigest()
    assert draft.version == version + 2 and draft.section_versions["measurements"] == version + 2
    # The files' own grid, as rules.farfield reads it: 800, 940 and 1840 MHz on a 10° grid, 19 × 36 points
    assert "3 frequencies: 800.0, 940.0, 1840.0 MHz" in page and "(19 × 36 points)" in page
    assert "Taga&#x27;s outdoor model" in page or "Taga's outdoor model" in page
    assert "Envelope correlation from far-field patterns" in page
    cleared = separation(tracker)
    assert (cleared["severity"], cleared["basis"]) == ("note", "measured")
    assert cleared["evidence"]["design_severity"] == "warning"
    assert sorted(cleared["evidence"]["outranked_by"]) == ["trail-tracker-div.csv", "trail-tracker-main.csv"]
    for measurement in kept.values():
        assert measurement.sha256 in page, "the cleared finding names each file with its SHA-256"


def test_each_upload_is_in_the_audit_trail_with_its_sha_256(author_client, tracker, author):
    upload(author_client, tracker, "trail-tracker-main.csv", MAIN_CSV, "MAIN")
    event = AuditEvent.objects.filter(product=tracker).order_by("-id").first()
    digest = hashlib.sha256(MAIN_CSV).hexdigest()
    assert (event.action, event.actor) == ("file-added", author) and "far-field pattern" in event.summary
    assert event.changes["file"] == [None, f"trail-tracker-main.csv: {len(MAIN_CSV)} bytes, SHA-256 {digest}"]
    assert event.changes["measurements"][1][0]["antenna"] == "MAIN"
    assert event.draft_version == draft_of(tracker).version


def broken(line: int, replacement: str) -> bytes:
    lines = MAIN_CSV.decode().split("\n")
    lines[line - 1] = replacement
    return "\n".join(lines).encode()


@pytest.mark.parametrize(("content", "message"), [
    # design-file.md, "Far-field pattern files": the header line and seven numbers a row
    (broken(4, "frequency,theta,phi"), "bad.csv:4: expected the header line"),
    (broken(9, "800,0,40,0.6,zero,0,0"), "bad.csv:9: e_theta_im: expected a number, got 'zero'"),
    (broken(12, "800,0,70,0.2"), "bad.csv:12: expected 7 comma-separated numbers"),
    (broken(7, "800,190,20,0.7,0.1,0,0"), "bad.csv:7: theta_deg"),
    (b"", "bad.csv: no header line"),
])
def test_a_file_that_does_not_parse_is_refused_naming_its_line_and_nothing_is_stored(author_client, tracker,
                                                                                      content, message):
    before = draft_of(tracker).document
    page = text(upload(author_client, tracker, "bad.csv", content, "MAIN"))
    assert escape(message) in page and "nothing was stored" in page
    assert not MeasurementFile.objects.exists() and draft_of(tracker).document == before


def test_a_file_not_named_csv_or_over_the_limit_is_refused(author_client, tracker, monkeypatch):
    assert "expected a far-field pattern file named .csv" in text(upload(author_client, tracker, "main.txt",
                                                                         MAIN_CSV, "MAIN"))
    monkeypatch.setattr(services, "MAX_MEASUREMENT_BYTES", 1000)
    assert "expected at most 0 MB" in text(upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN"))
    assert not MeasurementFile.objects.exists()


def test_a_wrong_antenna_or_a_second_pattern_of_one_antenna_is_named_and_refused(author_client, tracker):
    page = text(upload(author_client, tracker, "main.csv", MAIN_CSV, "NOPE"))
    assert ("antenna: expected the name of the antenna this pattern belongs to (DIV, GNSS, MAIN), got "
            "&quot;NOPE&quot; (main.csv)") in page
    assert "antenna: expected the antenna this pattern belongs to" in text(
        upload(author_client, tracker, "main.csv", MAIN_CSV, ""))
    upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN")
    page = text(upload(author_client, tracker, "again.csv", DIV_CSV, "MAIN"))
    assert "antenna MAIN already has a far-field pattern (measurements[0]); give one file per antenna" in page
    assert [m.name for m in MeasurementFile.objects.all()] == ["main.csv"]


@pytest.mark.parametrize(("environment", "message"), [
    ({"environment": "taga", "mean_elevation_deg": "20", "spread_deg": "", "xpr_db": "6"},
     "elevation spread (environment.spread_deg): required for the taga model: expected a number in degrees"),
    ({"environment": "taga", "mean_elevation_deg": "high", "spread_deg": "20", "xpr_db": "6"},
     "mean elevation (environment.mean_elevation_deg): expected a number in degrees above the horizon, got "
     "&quot;high&quot;"),
    ({"environment": "taga", "mean_elevation_deg": "20", "spread_deg": "20", "xpr_db": "45"},
     "XPR (environment.xpr_db): expected a number at least -30 and at most 30 dB, got 45"),
    # rules.measurements: the file's 10° theta steps can't resolve a 5° elevation spread
    ({"environment": "taga", "mean_elevation_deg": "20", "spread_deg": "5", "xpr_db": "6"},
     "elevation spread (environment.spread_deg): main.csv&#x27;s theta steps of 10° can&#x27;t resolve an elevation "
     "spread of 5°"),
    ({"environment": "urban"}, "environment: expected isotropic (uniform 3-D) or taga (Taga&#x27;s outdoor model)"),
])
def test_environment_problems_are_named_by_field_and_nothing_is_stored(author_client, tracker, environment, message):
    page = text(upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN", **environment))
    assert message in page and "nothing was stored" in page
    assert not MeasurementFile.objects.exists() and "measurements" not in draft_of(tracker).document


def test_a_pattern_that_cannot_be_compared_with_the_other_cellular_one_is_refused(author_client, tracker):
    upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN")
    page = text(upload(author_client, tracker, "div.csv", DIV_CSV, "DIV", environment="isotropic"))
    assert "div.csv is compared with main.csv (measurements[0]), but their environments differ" in page
    fewer = "\n".join(line for line in DIV_CSV.decode().split("\n") if not line.startswith("1840,")).encode()
    page = text(upload(author_client, tracker, "div.csv", fewer, "DIV"))
    assert "but their frequencies differ (800, 940, 1840 MHz against 800, 940 MHz)" in page
    assert [m.name for m in MeasurementFile.objects.all()] == ["main.csv"]


def test_the_upload_form_starts_with_the_environment_the_patterns_share(author_client, tracker):
    upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN")
    page = text(author_client.get(reverse("draft_edit", args=[tracker.pk])))
    form = page[page.index('id="new-pattern-antenna"') - 2000:]
    assert re.search(r'value="taga" id="new-pattern-taga" checked', form)
    assert 'id="new-pattern-spread" value="20"' in form
    assert '<option value="DIV" selected>' in form, "the first antenna without a pattern"


def test_changing_the_environment_of_one_cellular_pattern_changes_the_pairs(author_client, tracker):
    upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN")
    upload(author_client, tracker, "div.csv", DIV_CSV, "DIV")
    version = draft_of(tracker).version
    page = text(author_client.post(reverse("measurement_pattern_update", args=[tracker.pk]), {
        "file": "main.csv", "antenna": "MAIN", "absolute": "on", "environment": "isotropic", "version": version},
        follow=True))
    assert "main.csv saved; its environment is now also that of div.csv" in page
    entries = draft_of(tracker).document["measurements"]
    assert [entry.get("environment") for entry in entries] == [None, None], "isotropic, the default, is left out"
    assert checklist_for(draft_of(tracker)).checklist is not None, "the pair is comparable again"
    event = AuditEvent.objects.filter(product=tracker).order_by("-id").first()
    assert event.action == "file-mapped" and "measurements[1].environment" in event.changes


def test_a_pattern_can_be_moved_to_another_antenna_and_the_parser_judges_the_move(author_client, tracker):
    upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN", absolute=False)
    version = draft_of(tracker).version
    change = {"file": "main.csv", "antenna": "DIV", **TAGA, "version": version}
    author_client.post(reverse("measurement_pattern_update", args=[tracker.pk]), change)
    assert draft_of(tracker).document["measurements"][0]["antenna"] == "DIV"
    assert "absolute" not in draft_of(tracker).document["measurements"][0]
    page = text(author_client.post(reverse("measurement_pattern_update", args=[tracker.pk]),
                                   {**change, "antenna": "GHOST", "version": version + 1}, follow=True))
    assert "antenna: expected the name of the antenna this pattern belongs to" in page and "nothing was changed" in page
    assert draft_of(tracker).document["measurements"][0]["antenna"] == "DIV"


def test_a_change_made_on_a_stale_page_is_refused_with_the_other_change_shown(author_client, tracker, team):
    upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN")
    stale = draft_of(tracker).version
    author_client.post(reverse("measurement_pattern_update", args=[tracker.pk]),
                       {"file": "main.csv", "antenna": "MAIN", **TAGA, "version": stale})  # drops `absolute`
    answer = author_client.post(reverse("measurement_pattern_update", args=[tracker.pk]), {
        "file": "main.csv", "antenna": "GNSS", "environment": "isotropic", "version": stale})
    assert answer.status_code == 409
    page = text(answer)
    assert "The antenna and environment of main.csv were not saved" in page
    assert '<option value="GNSS" selected>' in page, "what I chose is kept in the form"
    assert draft_of(tracker).document["measurements"][0]["antenna"] == "MAIN"


def test_a_kept_pattern_is_removed_with_its_entry(author_client, tracker):
    upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN")
    author_client.post(reverse("measurement_remove", args=[tracker.pk]),
                       {"file": "main.csv", "version": draft_of(tracker).version})
    assert not MeasurementFile.objects.exists() and "measurements" not in draft_of(tracker).document


def test_a_new_draft_keeps_the_patterns_as_patterns(author_client, tracker, author):
    upload(author_client, tracker, "main.csv", MAIN_CSV, "MAIN")
    upload(author_client, tracker, "div.csv", DIV_CSV, "DIV")
    revision_submit(revision=draft_of(tracker), user=author)
    draft = services.draft_get_or_start(product=tracker, user=author)
    assert {(m.name, m.kind) for m in draft.measurement_files.all()} == {("main.csv", "far-field"),
                                                                        ("div.csv", "far-field")}
    assert checklist_for(draft).checklist is not None


def test_authors_and_reviewers_may_keep_patterns_others_are_refused(client, tracker, reviewer, outsider, team):
    client.force_login(reviewer)
    assert "kept with draft 1" in text(upload(client, tracker, "main.csv", MAIN_CSV, "MAIN"))
    page = text(client.get(reverse("revision_detail", args=[tracker.pk, 1])))
    assert f'action="{reverse("measurement_pattern_upload", args=[tracker.pk])}"' in page, "the reviewer's upload form"
    approver_only = make_user("approver-only", team, "approver")
    for person, status in ((outsider, 404), (approver_only, 403)):
        client.force_login(person)
        response = client.post(reverse("measurement_pattern_upload", args=[tracker.pk]), {
            "pattern": SimpleUploadedFile("div.csv", DIV_CSV), "antenna": "DIV", **TAGA})
        assert response.status_code == status
        response = client.post(reverse("measurement_pattern_update", args=[tracker.pk]), {
            "file": "main.csv", "antenna": "DIV", "environment": "isotropic", "version": 99})
        assert response.status_code == status
    assert [m.name for m in MeasurementFile.objects.all()] == ["main.csv"]
    assert draft_of(tracker).document["measurements"][0]["antenna"] == "MAIN"
