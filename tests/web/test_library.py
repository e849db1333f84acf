"""The parts library: entries checked by the design parser, versioned, audited, retired instead of deleted,
exported and imported; and its pages, for the team's editors, its other members and outsiders.

Check values: band edges from 3GPP TS 36.101 Table 5.5-1 (B12 UL 699-716 MHz, B2 UL 1850-1910 MHz); the
Touchstone file is scikit-rf's shipped `ring slot measured.s1p` (a real one-port measurement); SHA-256 from
Python's hashlib. Part names and figures are invented for these tests.
"""

import hashlib
import json
from pathlib import Path

import pytest
import skrf
from django.core.exceptions import PermissionDenied
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from projectapp.audit.models import AuditEvent
from projectapp.library import services
from projectapp.library.forms import PART_FIELDS
from projectapp.library.models import Entry, EntryDeletionError
from projectapp.library.parts import ANTENNA, MODULE, part_problems
from projectapp.teams.models import Role, Team
from rules.design import FORMAT, DesignError, parse_design
from tests.web.conftest import make_user

RING_SLOT = (Path(skrf.__file__).parent / "data" / "ring slot measured.s1p").read_bytes()
WHIP = {"mounting": "external", "ranges_mhz": [[698, 960], [1710, 2690]], "peak_gain_dbi": 2.5,
        "efficiency_pct": {"B12": 38, "B2": 55}, "size_mm": [110, 12, 12], "cable_loss_db": 0.4}
MODEM = {"category": "cat-m1", "bands": ["B2", "B4", "B12", "B13"], "rx_ports": 1,
         "gain_limits_dbi": {"B2": 6.0, "B12": 4.5}, "power_class": 3}


@pytest.fixture
def editor(reviewer):
    return reviewer  # reviewers change the library as authors do


@pytest.fixture
def whip(team, author):
    return services.entry_create(team=team, kind=ANTENNA, name="Sedge whip 7", values=dict(WHIP), user=author,
                                 description="External whip on SMA")


def history(entry):
    return list(AuditEvent.objects.filter(subject=entry.audit_subject).order_by("id"))


# -- values through the design parser ------------------------------------------------------------------------

def test_values_are_checked_by_the_design_parser_and_problems_name_the_field():
    problems = part_problems(ANTENNA, {**WHIP, "efficiency_pct": {"B12": 120}, "ranges_mhz": [[960, 698]],
                                       "position_mm": [1, 2, 3], "colour": "black"})
    found = {problem.path: problem.message for problem in problems}
    assert found["efficiency_pct.B12"] == "expected a number at least 0 and at most 100 %, got 120"
    assert found["ranges_mhz[0]"].startswith("expected [low, high] with low below high")
    assert "belongs to a design" in found["position_mm"]
    assert found["colour"] == f"not a field of an antenna in {FORMAT}"


def test_a_module_needs_what_a_designs_modem_needs():
    found = {problem.path for problem in part_problems(MODULE, {"rx_ports": 1})}
    assert {"category", "bands"} <= found
    assert part_problems(MODULE, MODEM) == []
    # an NR band with an LTE category is refused as the parser refuses it in a design
    assert [p.path for p in part_problems(MODULE, {**MODEM, "bands": ["B2", "n71"]})] == ["bands[1]"]


@pytest.mark.parametrize("kind", [ANTENNA, MODULE])
def test_the_library_accepts_a_field_exactly_when_a_design_does(kind):
    """The form's fields and the parser agree: a key the parser lists as ignored is refused, any other is not
    (so a field added to rules.design is accepted here without a change)."""
    stand_in = {"category": "cat-1", "bands": ["B1"]}
    for spec in PART_FIELDS[kind]:
        if kind == ANTENNA:
            document = {"format": FORMAT, "product": {"name": "x"}, "modem": stand_in,
                        "antennas": [{"name": "A", "role": "main", spec.key: None}]}
        else:
            document = {"format": FORMAT, "product": {"name": "x"}, "modem": {spec.key: None, **stand_in},
                        "antennas": []}
        ignored = bool(parse_design(document).ignored_paths)
        refused = any(problem.message.startswith("not a field") for problem in
                      part_problems(kind, {**({} if kind == ANTENNA else MODEM), spec.key: None}))
        assert refused == ignored, spec.key


# -- versions and history -------------------------------------------------------------------------------------

def test_every_change_makes_a_new_version_with_who_and_what_in_the_audit_trail(whip, author, reviewer):
    assert whip.version == 1 and whip.created_by == author
    changed = services.entry_update(entry=whip, values={**WHIP, "peak_gain_dbi": 3.1}, description=whip.description,
                                    read_version=1, user=reviewer)
    assert changed.version == 2 and changed.updated_by == reviewer
    created, edited = history(whip)
    assert created.action == AuditEvent.Action.PART_CREATED and created.team_id == whip.team_id
    assert created.product is None
    assert edited.actor == reviewer
    assert edited.changes == {"values.peak_gain_dbi": [2.5, 3.1], "version": [1, 2]}


def test_saving_the_same_values_again_writes_nothing(whip, author):
    again = services.entry_update(entry=whip, values=dict(WHIP), description=whip.description, read_version=1,
                                  user=author)
    assert again.version == 1 and len(history(whip)) == 1


def test_a_change_read_at_an_older_version_is_refused_and_stores_nothing(whip, author, reviewer):
    services.entry_update(entry=whip, values={**WHIP, "cable_loss_db": 0.8}, description="", read_version=1,
                          user=reviewer)
    with pytest.raises(services.EntryConflict) as raised:
        services.entry_update(entry=whip, values={**WHIP, "peak_gain_dbi": 4.0}, description="", read_version=1,
                              user=author)
    assert raised.value.entry.version == 2
    stored = Entry.objects.get(pk=whip.pk)
    assert stored.values["cable_loss_db"] == 0.8 and stored.values["peak_gain_dbi"] == 2.5


def test_invalid_values_are_refused_with_their_paths_and_nothing_changes(whip, author):
    with pytest.raises(services.PartInvalid) as raised:
        services.entry_update(entry=whip, values={**WHIP, "size_mm": [110, 0, 12]}, description="", read_version=1,
                              user=author)
    assert [problem.path for problem in raised.value.problems] == ["values.size_mm"]
    assert Entry.objects.get(pk=whip.pk).version == 1


def test_names_are_unique_in_a_team_and_another_team_may_use_the_same(whip, team, author, outsider, other_team):
    with pytest.raises(services.PartInvalid, match="already has a part named 'Sedge whip 7'"):
        services.entry_create(team=team, kind=MODULE, name="Sedge whip 7", values=MODEM, user=author)
    other = services.entry_create(team=other_team, kind=ANTENNA, name="Sedge whip 7", values={}, user=outsider)
    assert other.team == other_team


def test_entries_are_retired_never_deleted(whip, author):
    with pytest.raises(EntryDeletionError):
        whip.delete()
    retired = services.entry_retire(entry=whip, retired=True, user=author)
    assert retired.is_retired and retired.version == 1  # the values didn't change
    restored = services.entry_retire(entry=whip, retired=False, user=author)
    assert not restored.is_retired
    assert [event.action for event in history(whip)][-2:] == [AuditEvent.Action.PART_RETIRED,
                                                              AuditEvent.Action.PART_RESTORED]


def test_a_member_without_the_author_or_reviewer_role_cannot_change_the_library(whip, approver, team):
    with pytest.raises(PermissionDenied):
        services.entry_create(team=team, kind=ANTENNA, name="Reed patch", values={}, user=approver)
    with pytest.raises(PermissionDenied):
        services.entry_update(entry=whip, values={}, description="", read_version=1, user=approver)
    with pytest.raises(PermissionDenied):
        services.entry_retire(entry=whip, retired=True, user=approver)


def test_files_are_kept_with_their_sha256_and_must_read_as_touchstone(whip, author):
    stored = services.entry_file_add(entry=whip, name="ring-slot.s1p", content=RING_SLOT, read_version=1,
                                     user=author)
    assert stored.sha256 == hashlib.sha256(RING_SLOT).hexdigest()
    assert Entry.objects.get(pk=whip.pk).version == 2
    with pytest.raises(services.PartInvalid) as raised:
        services.entry_file_add(entry=whip, name="notes.s1p", content=b"this is not a network\n", read_version=2,
                                user=author)
    assert raised.value.problems[0].message.startswith("notes.s1p")
    assert whip.files.count() == 1


def test_a_duplicate_starts_at_version_1_with_the_values_and_files(whip, author):
    services.entry_file_add(entry=whip, name="ring-slot.s1p", content=RING_SLOT, read_version=1, user=author)
    copy = services.entry_duplicate(entry=Entry.objects.get(pk=whip.pk), name="Sedge whip 7 short", user=author)
    assert copy.version == 1 and copy.values == WHIP
    assert [(f.name, f.sha256) for f in copy.files.all()] == [(f.name, f.sha256) for f in whip.files.all()]


# -- export and import -------------------------------------------------------------------------------------------

def test_export_then_import_into_another_team_exports_the_same_text(whip, team, author, outsider, other_team):
    services.entry_file_add(entry=whip, name="ring-slot.s1p", content=RING_SLOT, read_version=1, user=author)
    module = services.entry_create(team=team, kind=MODULE, name="Marsh M1 module", values=MODEM, user=author)
    services.entry_retire(entry=module, retired=True, user=author)
    text = services.library_export_text(team=team)
    document = json.loads(text)
    assert document["format"] == "earshot-library/1"
    assert document["antennas"][0]["files"][0]["sha256"] == hashlib.sha256(RING_SLOT).hexdigest()

    summary = services.library_import(team=other_team, text=text, source="tallow.json", user=outsider)
    assert sorted(summary.created) == ["Marsh M1 module", "Sedge whip 7"]
    assert services.library_export_text(team=other_team) == text
    assert Entry.objects.get(team=other_team, name="Marsh M1 module").is_retired


def test_importing_the_libraries_own_export_changes_nothing(whip, team, author):
    text = services.library_export_text(team=team)
    summary = services.library_import(team=team, text=text, source="again.json", user=author)
    assert summary.unchanged == ["Sedge whip 7"] and summary.changed == []
    assert Entry.objects.get(pk=whip.pk).version == 1 and len(history(whip)) == 1


def test_an_import_changes_an_existing_entry_to_match_and_counts_a_version(whip, team, author):
    document = json.loads(services.library_export_text(team=team))
    document["antennas"][0]["values"]["peak_gain_dbi"] = {"B12": 1.8, "B2": 3.1} if _gain_per_band() else 3.1
    summary = services.library_import(team=team, text=json.dumps(document), source="new.json", user=author)
    assert summary.changed == ["Sedge whip 7"]
    assert Entry.objects.get(pk=whip.pk).version == 2


def _gain_per_band() -> bool:
    return not part_problems(ANTENNA, {"peak_gain_dbi": {"B12": 1.8}})


def test_a_bad_import_lists_every_problem_with_its_path_and_stores_nothing(whip, team, author):
    document = {
        "format": "earshot-library/1",
        "antennas": [
            {"name": "Reed patch", "values": {"efficiency_pct": {"B12": -3}}},
            {"name": "Reed patch", "values": {}},
            {"name": "Sedge whip 7", "values": dict(WHIP),
             "files": [{"name": "x.s1p", "text": "not touchstone", "sha256": "0" * 64}]},
        ],
        "modules": [{"name": "Sedge whip 7", "values": {"category": "cat-99", "bands": ["B12"]}},
                    {"name": "", "values": MODEM, "colour": "red"}],
    }
    with pytest.raises(services.PartInvalid) as raised:
        services.library_import(team=team, text=json.dumps(document), source="bad.json", user=author)
    paths = [problem.path for problem in raised.value.problems]
    assert "antennas[0].values.efficiency_pct.B12" in paths
    assert "antennas[1].name" in paths  # listed twice
    assert "antennas[2].files[0].sha256" in paths
    assert "modules[0].name" in paths  # an antenna in the library
    assert "modules[0].values.category" in paths
    assert {"modules[1].name", "modules[1].colour"} <= set(paths)
    assert Entry.objects.filter(team=team).count() == 1 and Entry.objects.get(pk=whip.pk).version == 1
    with pytest.raises(services.PartInvalid, match="not valid JSON"):
        services.library_import(team=team, text="{", source="cut.json", user=author)


# -- pages ---------------------------------------------------------------------------------------------------------

def test_the_list_searches_names_and_descriptions_and_leaves_retired_parts_out(client, whip, team, author):
    module = services.entry_create(team=team, kind=MODULE, name="Marsh M1 module", values=MODEM, user=author,
                                   description="LTE-M module, half duplex")
    client.force_login(author)
    page = client.get(reverse("library_list", args=[team.pk]), {"q": "half duplex"}).content.decode()
    assert "Marsh M1 module" in page and "Sedge whip 7" not in page
    services.entry_retire(entry=module, retired=True, user=author)
    assert "Marsh M1 module" not in client.get(reverse("library_list", args=[team.pk])).content.decode()
    shown = client.get(reverse("library_list", args=[team.pk]), {"retired": "on"}).content.decode()
    assert "Marsh M1 module" in shown
    assert client.get(reverse("library_list", args=[team.pk]), {"q": "x" * 500}).status_code == 400


def test_editing_on_the_page_puts_the_parsers_problems_beside_the_field(client, whip, author):
    client.force_login(author)
    form = {"version": 1, "description": "", "ranges_mhz": "698-960", "efficiency_pct": "B12: 38, B2: 140",
            "mounting": "external"}
    response = client.post(reverse("library_entry", args=[whip.pk]), form)
    assert response.status_code == 400
    assert "efficiency_pct.B2: expected a number at least 0 and at most 100 %, got 140" in response.content.decode()
    assert Entry.objects.get(pk=whip.pk).version == 1
    response = client.post(reverse("library_entry", args=[whip.pk]), {**form, "efficiency_pct": "B12: 38, B2: 55"})
    assert response.status_code == 302
    assert Entry.objects.get(pk=whip.pk).values == {"mounting": "external", "ranges_mhz": [[698, 960]],
                                                    "efficiency_pct": {"B12": 38, "B2": 55}}


def test_a_stale_edit_is_refused_with_409_and_keeps_what_was_typed(client, whip, author, reviewer):
    services.entry_update(entry=whip, values={**WHIP, "cable_loss_db": 1.0}, description="", read_version=1,
                          user=reviewer)
    client.force_login(author)
    response = client.post(reverse("library_entry", args=[whip.pk]),
                           {"version": 1, "description": "typed by me", "ranges_mhz": "700-960"})
    assert response.status_code == 409
    assert "typed by me" in response.content.decode() and "changed since you opened it" in response.content.decode()
    assert Entry.objects.get(pk=whip.pk).description == ""


def test_team_members_read_editors_change_and_others_get_404(client, whip, team, author, approver, outsider):
    entry_url = reverse("library_entry", args=[whip.pk])
    client.force_login(approver)  # in the team, neither author nor reviewer
    page = client.get(entry_url)
    assert page.status_code == 200 and "Sedge whip 7" in page.content.decode()
    assert "Change the values" not in page.content.decode()
    writes = [(entry_url, {"version": 1}), (reverse("library_entry_retire", args=[whip.pk]), {"retired": "1"}),
              (reverse("library_entry_duplicate", args=[whip.pk]), {"name": "Copy"}),
              (reverse("library_file_add", args=[whip.pk]), {"version": 1}),
              (reverse("library_file_remove", args=[whip.pk]), {"version": 1, "name": "x"}),
              (reverse("library_antenna_create", args=[team.pk]), {"name": "New"}),
              (reverse("library_import", args=[team.pk]), {})]
    for url, data in writes:
        assert client.post(url, data).status_code == 403, url
    assert client.get(reverse("library_module_create", args=[team.pk])).status_code == 403
    assert client.get(reverse("library_export", args=[team.pk])).status_code == 200  # reading is for everyone
    assert not Entry.objects.get(pk=whip.pk).is_retired and Entry.objects.count() == 1

    client.force_login(outsider)
    for url in (entry_url, reverse("library_list", args=[team.pk]), reverse("library_export", args=[team.pk])):
        assert client.get(url).status_code == 404, url
    for url, data in writes:
        assert client.post(url, data).status_code == 404, url
    assert "Sedge whip 7" not in client.get(reverse("library_index"), follow=True).content.decode()


def test_a_file_uploaded_on_the_page_is_kept_and_downloads_as_uploaded(client, whip, author):
    client.force_login(author)
    upload = SimpleUploadedFile("ring slot measured.s1p", RING_SLOT)
    response = client.post(reverse("library_file_add", args=[whip.pk]), {"version": 1, "file": upload})
    assert response.status_code == 302
    stored = whip.files.get()
    download = client.get(reverse("library_file_download", args=[whip.pk, stored.pk]))
    assert b"".join(download.streaming_content) == RING_SLOT
    bad = client.post(reverse("library_file_add", args=[whip.pk]),
                      {"version": 2, "file": SimpleUploadedFile("photo.s1p", b"\x89PNG\r\n\x1a\n\xff\xfe")})
    assert bad.status_code == 400 and "nothing was stored" in bad.content.decode()


def test_the_import_page_lists_every_problem_and_a_good_file_imports(client, team, author):
    client.force_login(author)
    bad = SimpleUploadedFile("bad.json", json.dumps({"format": "earshot-library/2", "modules": [{"name": "M"}]})
                             .encode())
    response = client.post(reverse("library_import", args=[team.pk]), {"library_file": bad})
    text = response.content.decode()
    assert response.status_code == 400 and "format: expected" in text and "modules[0].values" in text
    good = {"format": "earshot-library/1", "modules": [{"name": "Marsh M1 module", "values": MODEM}]}
    response = client.post(reverse("library_import", args=[team.pk]),
                           {"library_file": SimpleUploadedFile("good.json", json.dumps(good).encode())})
    assert response.status_code == 302 and Entry.objects.get(team=team).name == "Marsh M1 module"


def test_a_person_in_two_teams_chooses_a_library_and_one_team_goes_straight_to_its_own(client, team, author):
    client.force_login(author)
    assert client.get(reverse("library_index")).headers["Location"] == reverse("library_list", args=[team.pk])
    second = Team.objects.create(name="Larchmere Metering")
    make_user("both", second, Role.AUTHOR).memberships.create(team=team, role=Role.AUTHOR)
    client.force_login(get_user("both"))
    page = client.get(reverse("library_index")).content.decode()
    assert "Larchmere Metering" in page and "Tallow Creek Instruments" in page


def get_user(username):
    from django.contrib.auth import get_user_model

    return get_user_model().objects.get(username=username)


def test_the_parser_checks_a_designs_library_note():
    document = {"format": FORMAT, "product": {"name": "x"}, "modem": {"category": "cat-1", "bands": ["B1"],
                                                                       "library": {"name": "M", "version": 0}},
                "antennas": [{"name": "A", "role": "main", "library": {"version": 2}}]}
    with pytest.raises(DesignError) as raised:
        parse_design(document)
    assert {p.path for p in raised.value.problems} == {"modem.library.version", "antennas[0].library.name"}


def test_an_import_with_thousands_of_problems_lists_the_first_ones_and_counts_the_rest(client, team, author):
    values = {"efficiency_pct": {f"X{index}": 1 for index in range(3000)}}  # 3000 unknown bands
    document = {"format": "earshot-library/1", "antennas": [{"name": "Huge", "values": values}]}
    client.force_login(author)
    response = client.post(reverse("library_import", args=[team.pk]),
                           {"library_file": SimpleUploadedFile("huge.json", json.dumps(document).encode())})
    text = response.content.decode()
    assert response.status_code == 400 and "and 2800 more problems like these" in text
    assert not Entry.objects.filter(team=team).exists()


def test_a_parts_values_are_bounded_in_size(team, author):
    values = {"ranges_mhz": [[700 + index, 701 + index] for index in range(20000)]}
    with pytest.raises(services.PartInvalid, match="expected at most 100 kB of values"):
        services.entry_create(team=team, kind=ANTENNA, name="Too long", values=values, user=author)
