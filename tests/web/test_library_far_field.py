"""Far-field patterns kept with library antennas: uploaded (checked by rules.farfield, refused with the field
and the problem named), listed with their kind, copied into a draft as the pattern of the antenna filled and
judged there, offered to a draft only through the author's review of a newer version (never to a submitted
revision), exported and imported with their kind, and out of reach of other teams.

Check values: B3 DL 1805-1880 MHz, B8 DL 925-960 MHz, B20 DL 791-821 MHz (3GPP TS 36.101 Table 5.5-1) hold the
trail tracker patterns' 1840, 940 and 800 MHz; the Touchstone file is scikit-rf's shipped one-port
`ring slot measured.s1p`; SHA-256 from Python's hashlib. The demo pattern is checked against the short-dipole
far field of Balanis, Antenna Theory §4.2 (benchmarks/far_field_data.py) and Taga's isotropic mean effective
gain, half the total efficiency (Taga, IEEE Trans. Veh. Technol. 39(2), 1990). Part names are invented.
"""

import hashlib
import json
import math
from io import StringIO
from pathlib import Path

import numpy as np
import pytest
import skrf
from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management import call_command
from django.urls import reverse

from benchmarks.far_field_data import dipole_field, grid, pattern_text
from projectapp.audit.models import AuditEvent
from projectapp.designs import services
from projectapp.designs.checklists import checklist_for
from projectapp.designs.models import MeasurementFile, Revision
from projectapp.library import services as library
from projectapp.library.models import Entry, EntryFile
from projectapp.library.parts import ANTENNA
from projectapp.reviews.services import revision_submit
from projectapp.teams.models import Team
from rules.farfield import parse_far_field, total_efficiency
from tests.web.conftest import EXAMPLES
from tests.web.test_draft_versions import HTMX, page_form, save, signed_in

RING_SLOT = (Path(skrf.__file__).parent / "data" / "ring slot measured.s1p").read_bytes()
MAIN_CSV = (EXAMPLES / "trail-tracker-main.csv").read_bytes()
DIV_CSV = (EXAMPLES / "trail-tracker-div.csv").read_bytes()
TRAIL = json.loads((EXAMPLES / "trail-tracker.json").read_text())
# The trail tracker's DIV antenna as a library part: its values without the design's own name, role and feed.
DIV_VALUES = {key: value for key, value in TRAIL["antennas"][1].items() if key not in ("name", "role", "position_mm")}
TAGA = {"model": "taga", "mean_elevation_deg": 20, "spread_deg": 20, "xpr_db": 6}  # the demo's environment


def draft_of(product) -> Revision:
    return Revision.objects.get(product=product, state="draft")


def fresh(entry: Entry) -> Entry:
    return Entry.objects.get(pk=entry.pk)


@pytest.fixture
def div_part(team, author):
    entry = library.entry_create(team=team, kind=ANTENNA, name="Sorrel flex D1", values=dict(DIV_VALUES), user=author)
    library.entry_file_add(entry=entry, name="trail-tracker-div.csv", content=DIV_CSV, absolute=True, read_version=1,
                           user=author)
    return fresh(entry)


def trail_tracker(team, author, name: str = "Trail tracker", *, main_pattern: bool = True):
    """The trail tracker without its measurements, then (`main_pattern`) MAIN's pattern kept in the demo's
    environment: MAIN and DIV 50 mm apart at 791 MHz are a spacing warning until DIV's pattern joins MAIN's."""
    document = json.loads(json.dumps(TRAIL))
    del document["measurements"]
    product = services.product_create(team=team, name=name, user=author)
    services.design_import(product=product, text=json.dumps(document), source="trail-tracker.json", user=author)
    if main_pattern:
        services.pattern_add(revision=product.draft, name="trail-tracker-main.csv", content=MAIN_CSV,
                             antenna="MAIN", absolute=True, environment=TAGA, user=author)
    return product


@pytest.fixture
def tracker(team, author):
    return trail_tracker(team, author)


def finding(product, rule_id: str) -> dict:
    return next(found for found in checklist_for(draft_of(product)).findings if found["id"] == rule_id)


def upload(client, entry, name: str, content: bytes, *, absolute: bool = False, version: int | None = None):
    data = {"version": version or fresh(entry).version, "file": SimpleUploadedFile(name, content)}
    if absolute:
        data["absolute"] = "on"
    return client.post(reverse("library_file_add", args=[entry.pk]), data)


def fill(client, product, target: str, entry, **extra):
    data = {**page_form(client, product, "antennas"), "action": f"library:{target}", f"library-{target}-entry": entry.pk}
    return save(client, product, "antennas", data, **extra)


def shifted_frequencies(content: bytes, factor: float) -> bytes:
    """The same pattern at other frequencies (every frequency times `factor`): a file that can't be compared
    point by point with the original."""
    lines = content.decode().split("\n")
    body = [line for line in lines if line and not line.startswith("#")]
    rows = [body[0]] + [",".join([f"{float(row.split(',')[0]) * factor:g}", *row.split(",")[1:]]) for row in body[1:]]
    return ("\n".join(rows) + "\n").encode()


# -- upload ---------------------------------------------------------------------------------------------------

def test_a_pattern_uploaded_on_the_page_is_kept_as_far_field_and_listed_with_its_kind(client, team, author):
    entry = library.entry_create(team=team, kind=ANTENNA, name="Sorrel flex D1", values=dict(DIV_VALUES), user=author)
    client.force_login(author)
    answer = upload(client, entry, "trail-tracker-div.csv", DIV_CSV, absolute=True)
    assert answer.status_code == 302
    stored = fresh(entry).files.get()
    assert (stored.kind, stored.absolute, stored.sha256) == ("far-field", True, hashlib.sha256(DIV_CSV).hexdigest())
    assert fresh(entry).version == 2
    upload(client, entry, "ring-slot.s1p", RING_SLOT)
    page = client.get(entry.get_absolute_url()).content.decode()
    assert "trail-tracker-div.csv</strong></a> <span class=\"status\">far-field pattern, absolute</span>" in page
    assert "ring-slot.s1p</strong></a> <span class=\"status\">Touchstone (S-parameters)</span>" in page
    download = client.get(reverse("library_file_download", args=[entry.pk, stored.pk]))
    assert b"".join(download.streaming_content) == DIV_CSV
    event = AuditEvent.objects.filter(subject=entry.audit_subject, action="part-file-added").order_by("id").first()
    assert event.changes["file trail-tracker-div.csv"] == [
        None, f"far-field pattern (absolute), {len(DIV_CSV)} bytes, SHA-256 {stored.sha256}"]


def test_the_upload_message_says_which_kind_was_kept(client, team, author):
    entry = library.entry_create(team=team, kind=ANTENNA, name="Sorrel flex D1", values={}, user=author)
    client.force_login(author)
    page = client.post(reverse("library_file_add", args=[entry.pk]),
                       {"version": 1, "file": SimpleUploadedFile("div.csv", DIV_CSV)}, follow=True).content.decode()
    assert "div.csv kept with Sorrel flex D1 as a relative far-field pattern." in page


@pytest.mark.parametrize(("name", "content", "absolute", "field", "expected"), [
    # a pattern whose second row's theta is not a number: rules.farfield names the file and line
    ("div.csv", DIV_CSV.replace(b"\n800,0,10,", b"\n800,zero,10,", 1), False, "file", "div.csv:6: "),
    # a header other than the one design-file.md gives
    ("div.csv", DIV_CSV.replace(b"frequency_mhz,theta_deg", b"freq,theta", 1), False, "file", "div.csv:4: "),
    # a point of the grid left out (design-file.md: a regular grid, every point at every frequency)
    ("div.csv", DIV_CSV.replace(b"\n800,0,10,", b"\n#800,0,10,", 1), False, "file", "div.csv"),
    ("photo.png", b"\x89PNG\r\n\x1a\n", False, "file", "photo.png: expected a Touchstone file named .s1p to .s8p "
                                                       "or .ts, or a far-field pattern file named .csv"),
    ("div.csv", b"\xff\xfe not text", False, "file", "div.csv: expected text (UTF-8); far-field pattern files are "
                                                     "plain text"),
    # absolute belongs to a far-field pattern only
    ("ring-slot.s1p", RING_SLOT, True, "absolute", "only a far-field pattern can be absolute"),
])
def test_a_bad_file_is_refused_naming_the_field_and_the_problem_and_nothing_is_stored(
        client, team, author, name, content, absolute, field, expected):
    entry = library.entry_create(team=team, kind=ANTENNA, name="Sorrel flex D1", values={}, user=author)
    client.force_login(author)
    answer = upload(client, entry, name, content, absolute=absolute)
    assert answer.status_code == 400
    errors = answer.context["upload"].errors
    assert list(errors) == [field]
    assert expected in errors[field][0] and errors[field][0].endswith("— nothing was stored")
    assert not EntryFile.objects.filter(entry=entry).exists() and fresh(entry).version == 1


def test_a_duplicate_keeps_each_file_with_its_kind(div_part, author):
    library.entry_file_add(entry=div_part, name="ring-slot.s1p", content=RING_SLOT, read_version=2, user=author)
    copy = library.entry_duplicate(entry=fresh(div_part), name="Sorrel flex D1 copy", user=author)
    assert sorted(copy.files.values_list("name", "kind", "absolute", "sha256")) == sorted(
        fresh(div_part).files.values_list("name", "kind", "absolute", "sha256"))


def test_the_engine_reads_what_the_library_keeps(div_part):
    stored = div_part.files.get()
    pattern = parse_far_field(stored.read_bytes().decode(), source=stored.name)
    # 800, 940, 1840 MHz: inside the DL of B20, B8 and B3 (3GPP TS 36.101 Table 5.5-1)
    assert list(pattern.frequencies_mhz) == [800.0, 940.0, 1840.0]


# -- into a draft, and judged there ------------------------------------------------------------------------

def test_filling_an_antenna_copies_its_pattern_and_the_checklist_judges_the_pair_by_it(tracker, author, div_part):
    before = finding(tracker, "SEP-001")
    assert (before["severity"], before["basis"]) == ("warning", "design")  # 50 mm inside λ/2π at 791 MHz
    client = signed_in(author)
    answer = fill(client, tracker, "1", div_part)
    assert answer.status_code == 302
    draft = draft_of(tracker)
    assert draft.document["antennas"][1]["library"] == {"name": "Sorrel flex D1", "version": 2}
    # copied as DIV's far-field pattern, absolute as the library keeps it, in the environment MAIN's pattern has
    assert draft.document["measurements"][1] == {"kind": "far-field", "file": "trail-tracker-div.csv",
                                                 "antenna": "DIV", "absolute": True, "environment": TAGA}
    kept = draft.measurement_files.get(name="trail-tracker-div.csv")
    assert (kept.kind, kept.sha256) == (MeasurementFile.Kind.FAR_FIELD, hashlib.sha256(DIV_CSV).hexdigest())
    event = AuditEvent.objects.filter(revision=draft).order_by("-id").first()
    assert event.action == AuditEvent.Action.LIBRARY_FILLED and "with 1 file(s)" in event.summary
    assert event.changes["file"][1].endswith("from library part Sorrel flex D1 version 2")

    cleared = finding(tracker, "SEP-001")
    assert (cleared["severity"], cleared["basis"]) == ("note", "measured")
    assert cleared["evidence"]["measured_method"] == "far-field"
    assert cleared["evidence"]["measured_ecc"] <= 0.5  # design.md: ECC ≤ 0.5 by a trustworthy method clears it
    assert sorted(cleared["evidence"]["outranked_by"]) == ["trail-tracker-div.csv", "trail-tracker-main.csv"]
    page = client.get(reverse("draft_edit", args=[tracker.pk])).content.decode()
    assert "Envelope correlation from far-field patterns" in page


def test_with_htmx_a_fill_that_copied_files_reloads_the_page_so_the_measurements_show_them(tracker, author,
                                                                                          div_part):
    # A client redirect to the same page with a #section fragment would only scroll, leaving the old page.
    answer = fill(signed_in(author), tracker, "1", div_part, **HTMX)
    assert (answer.status_code, answer["HX-Refresh"]) == (200, "true")
    assert draft_of(tracker).measurement_files.filter(name="trail-tracker-div.csv").exists()


def test_a_pattern_the_draft_cannot_compare_refuses_the_fill_and_nothing_is_stored(tracker, team, author):
    entry = library.entry_create(team=team, kind=ANTENNA, name="Sorrel flex D2", values=dict(DIV_VALUES), user=author)
    # DIV's pattern at 1.01 times its frequencies: MAIN's pattern in the draft can't be compared with it
    library.entry_file_add(entry=entry, name="div-shifted.csv", content=shifted_frequencies(DIV_CSV, 1.01),
                           absolute=True, read_version=1, user=author)
    before = draft_of(tracker)
    answer = fill(signed_in(author), tracker, "1", fresh(entry), **HTMX)
    assert answer.status_code == 400
    text = answer.content.decode()
    assert "frequencies differ" in text and "Sorrel flex D2" in text and "nothing was stored" in text
    after = draft_of(tracker)
    assert (after.version, after.document) == (before.version, before.document)
    assert list(after.measurement_files.values_list("name", flat=True)) == ["trail-tracker-main.csv"]
    media = Path(MeasurementFile._meta.get_field("file").storage.location)
    written = [path for path in media.rglob("div-shifted*.csv") if "library" not in path.relative_to(media).parts]
    assert not written, "no measurement file is written for a refused fill"


def test_the_first_pattern_of_a_design_is_judged_in_the_default_environment(team, author, div_part):
    product = trail_tracker(team, author, main_pattern=False)
    fill(signed_in(author), product, "1", div_part)
    assert draft_of(product).document["measurements"] == [
        {"kind": "far-field", "file": "trail-tracker-div.csv", "antenna": "DIV", "absolute": True}]


def test_a_new_pattern_reaches_a_draft_only_when_its_author_applies_it_and_never_a_submitted_revision(
        team, author, reviewer):
    part = library.entry_create(team=team, kind=ANTENNA, name="Sorrel flex D1", values=dict(DIV_VALUES), user=author)
    submitted_product = trail_tracker(team, author, "Trail tracker A")
    drafted_product = trail_tracker(team, author, "Trail tracker B")
    for product in (submitted_product, drafted_product):
        fill(signed_in(author), product, "1", part)
    submitted = revision_submit(revision=submitted_product.draft, user=author)
    frozen = (submitted.document, list(submitted.measurement_files.values_list("name", "sha256")))

    library.entry_file_add(entry=part, name="trail-tracker-div.csv", content=DIV_CSV, absolute=True, read_version=1,
                           user=reviewer)
    filled = draft_of(drafted_product)
    assert [m["file"] for m in filled.document["measurements"]] == ["trail-tracker-main.csv"]  # not by itself

    client = signed_in(author)
    page = client.get(reverse("draft_edit", args=[drafted_product.pk])).content.decode()
    assert "changed (v1 → v2)" in page and "0 fields and 1 file differ" in page
    review_url = reverse("draft_library_update", args=[drafted_product.pk])
    review = client.get(review_url, {"part": "antenna", "antenna": "DIV"}).content.decode()
    assert "<code>trail-tracker-div.csv</code>: copied into the measurements" in review
    answer = client.post(review_url, {"part": "antenna", "antenna": "DIV", "entry_version": 2,
                                      "version": filled.version, "files": "on"})
    assert answer.status_code == 302
    applied = draft_of(drafted_product)
    assert applied.document["measurements"][1] == {"kind": "far-field", "file": "trail-tracker-div.csv",
                                                   "antenna": "DIV", "absolute": True, "environment": TAGA}
    assert applied.measurement_files.get(name="trail-tracker-div.csv").kind == "far-field"
    assert finding(drafted_product, "SEP-001")["basis"] == "measured"

    again = Revision.objects.get(pk=submitted.pk)
    assert (again.document, list(again.measurement_files.values_list("name", "sha256"))) == frozen
    shown = client.get(reverse("revision_detail", args=[submitted_product.pk, submitted.number])).content.decode()
    assert "changed (v1" not in shown


# -- export and import -------------------------------------------------------------------------------------

def test_export_and_import_carry_each_file_with_its_kind_and_the_text_round_trips(team, author, div_part, other_team,
                                                                                outsider):
    library.entry_file_add(entry=div_part, name="ring-slot.s1p", content=RING_SLOT, read_version=2, user=author)
    text = library.library_export_text(team=team)
    files = json.loads(text)["antennas"][0]["files"]
    assert [(f["name"], f["kind"], f.get("absolute")) for f in files] == [
        ("ring-slot.s1p", "touchstone", None), ("trail-tracker-div.csv", "far-field", True)]
    assert files[1]["sha256"] == hashlib.sha256(DIV_CSV).hexdigest()

    summary = library.library_import(team=other_team, text=text, source="sorrel.json", user=outsider)
    assert summary.created == ["Sorrel flex D1"]
    theirs = Entry.objects.get(team=other_team, name="Sorrel flex D1")
    assert sorted(theirs.files.values_list("name", "kind", "absolute")) == [
        ("ring-slot.s1p", "touchstone", False), ("trail-tracker-div.csv", "far-field", True)]
    assert library.library_export_text(team=other_team) == text
    # importing the same text again changes nothing; a changed `absolute` alone is a change
    assert library.library_import(team=other_team, text=text, source="sorrel.json", user=outsider).unchanged == [
        "Sorrel flex D1"]
    relative = json.loads(text)
    relative["antennas"][0]["files"][1]["absolute"] = False
    assert library.library_import(team=other_team, text=json.dumps(relative), source="r.json",
                                  user=outsider).changed == ["Sorrel flex D1"]
    assert theirs.files.get(name="trail-tracker-div.csv").absolute is False


def test_a_file_without_kind_imports_as_touchstone_as_older_exports_mean(team, author):
    older = {"format": "earshot-library/1", "antennas": [{
        "name": "Sorrel whip W1", "values": {"mounting": "external"},
        "files": [{"name": "ring-slot.s1p", "sha256": hashlib.sha256(RING_SLOT).hexdigest(),
                   "text": RING_SLOT.decode()}]}]}
    library.library_import(team=team, text=json.dumps(older), source="older.json", user=author)
    assert Entry.objects.get(name="Sorrel whip W1").files.get().kind == "touchstone"
    # and a pattern without a kind is not taken for one: it is read as what older exports meant
    older["antennas"][0]["files"] = [{"name": "div.csv", "text": DIV_CSV.decode()}]
    with pytest.raises(library.PartInvalid) as refused:
        library.library_import(team=team, text=json.dumps(older), source="older.json", user=author)
    assert [str(p) for p in refused.value.problems] == [
        "antennas[0].files[0].name: div.csv: expected a Touchstone file named .s1p to .s8p or .ts, as its kind "
        "touchstone says"]


def test_import_names_every_problem_of_a_file_and_stores_nothing(team, author):
    def item(**fields):
        return {"name": "div.csv", "kind": "far-field", "text": DIV_CSV.decode(), **fields}

    document = {"format": "earshot-library/1", "antennas": [{"name": "Sorrel flex D1", "values": {}, "files": [
        item(kind="pattern"),
        item(name="div.s1p"),
        {"name": "ring-slot.s1p", "kind": "touchstone", "absolute": True, "text": RING_SLOT.decode()},
        item(name="b.csv", absolute="yes"),
        item(name="c.csv", sha256="0" * 64),
        item(name="d.csv", text=DIV_CSV.decode().replace("\n800,0,10,", "\n800,zero,10,", 1)),
    ]}]}
    with pytest.raises(library.PartInvalid) as refused:
        library.library_import(team=team, text=json.dumps(document), source="bad.json", user=author)
    found = {problem.path: problem.message for problem in refused.value.problems}
    assert found["antennas[0].files[0].kind"] == 'expected touchstone or far-field, got "pattern"'
    assert found["antennas[0].files[1].name"].endswith("expected a far-field pattern file named .csv, as its kind "
                                                       "far-field says")
    assert found["antennas[0].files[2].absolute"].startswith("only a far-field pattern can be absolute")
    assert found["antennas[0].files[3].absolute"] == "expected true or false"
    assert "the text's SHA-256 is" in found["antennas[0].files[4].sha256"]
    assert found["antennas[0].files[5].text"].startswith("d.csv:6: ")
    assert not Entry.objects.filter(team=team).exists()


# -- who may ----------------------------------------------------------------------------------------------

def test_another_teams_pattern_and_its_entry_are_a_404_and_a_reader_without_the_role_gets_a_403(
        client, div_part, outsider, approver):
    stored = div_part.files.get()
    client.force_login(outsider)
    assert client.get(reverse("library_file_download", args=[div_part.pk, stored.pk])).status_code == 404
    assert client.get(div_part.get_absolute_url()).status_code == 404
    assert upload(client, div_part, "x.csv", DIV_CSV, absolute=True).status_code == 404
    client.force_login(approver)  # reads the library, doesn't change it
    download = client.get(reverse("library_file_download", args=[div_part.pk, stored.pk]))
    assert download.status_code == 200 and b"".join(download.streaming_content) == DIV_CSV
    assert upload(client, div_part, "x.csv", DIV_CSV, absolute=True).status_code == 403
    assert list(fresh(div_part).files.values_list("name", flat=True)) == ["trail-tracker-div.csv"]


def test_another_teams_part_with_a_pattern_cannot_be_filled_into_a_draft(tracker, author, other_team, outsider):
    theirs = library.entry_create(team=other_team, kind=ANTENNA, name="Larch flex", values=dict(DIV_VALUES),
                                  user=outsider)
    library.entry_file_add(entry=theirs, name="trail-tracker-div.csv", content=DIV_CSV, absolute=True,
                           read_version=1, user=outsider)
    before = draft_of(tracker)
    assert fill(signed_in(author), tracker, "1", fresh(theirs), **HTMX).status_code == 400
    assert draft_of(tracker).version == before.version
    assert list(draft_of(tracker).measurement_files.values_list("name", flat=True)) == ["trail-tracker-main.csv"]


# -- the demo ---------------------------------------------------------------------------------------------

def test_the_demo_flex_antenna_keeps_a_pattern_computed_from_its_own_values(db):
    call_command("seed_demo", "--password", "demo-only-password-1", stdout=StringIO())
    flex = Entry.objects.get(team=Team.objects.get(name="Tallow Creek Instruments"), name="TCI flex antenna F2")
    stored = flex.files.get()
    assert (stored.name, stored.kind, stored.absolute) == ("tci-flex-f2-cold-chain.csv", "far-field", True)
    # A short dipole along the part's axis at the cold-chain tracker's feed (160, 45, 20 mm), with the part's
    # efficiency in the band each frequency lies in: 740 MHz in B12 DL 729-746, 751 in B13 DL 746-756, 1960 in B2
    # DL 1930-1990, 2132 in B4 DL 2110-2155 (3GPP TS 36.101 Table 5.5-1).
    efficiency = flex.values["efficiency_pct"]
    per_frequency = {740: efficiency["B12"], 751: efficiency["B13"], 1960: efficiency["B2"], 2132: efficiency["B4"]}
    theta, phi = grid(10)
    fields = [dipole_field([mhz], theta, phi, flex.values["polarization"], (160, 45, 20), pct / 100)
              for mhz, pct in per_frequency.items()]
    expected = pattern_text(list(per_frequency), theta, phi, np.concatenate([f[0] for f in fields]),
                            np.concatenate([f[1] for f in fields]), digits=5, comment=(
                                "Tallow Creek cold-chain tracker P1, TCI flex antenna F2 on the lid (feed at 160, 45, "
                                "20 mm)\nsynthetic demo data: short-dipole model, phase referred to the enclosure "
                                "origin\nabsolute: |E_theta|^2 + |E_phi|^2 is the realized gain"))
    assert stored.read_bytes().decode() == expected
    pattern = parse_far_field(expected, source=stored.name)
    assert np.allclose(total_efficiency(pattern), [pct / 100 for pct in per_frequency.values()], atol=1e-4)

    # The cold-chain tracker's draft, filled from version 1, is offered the pattern; once applied the checklist
    # reads the antenna's efficiency and its isotropic MEG (half the efficiency, Taga 1990) from it.
    product = flex.team.products.get(name="Cold-chain tracker")
    maren = flex.created_by
    draft = product.draft
    assert not draft.measurement_files.exists()
    services.draft_library_apply(revision=draft, kind=ANTENNA, antenna="ANT1", entry=flex, entry_version=flex.version,
                                 keys=["efficiency_pct"], with_files=True, read_version=draft.version, user=maren)
    measured = finding(product, "EFF-004")
    assert measured["basis"] == "measured" and "tci-flex-f2-cold-chain.csv" in json.dumps(measured["evidence"])
    assert f"MEG {10 * math.log10(efficiency['B12'] / 100 / 2):.1f} dB" in measured["title"]
