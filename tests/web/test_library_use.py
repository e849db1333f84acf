"""Using library parts in a design: the questionnaire fills an antenna or the modem from an entry (values
copied, the entry's name and version noted, its files copied as measurements, one versioned audited write),
and a newer version of the entry reaches a draft only when its author reviews and applies it; a submitted
revision never changes.

Check values: B3 UL 1710-1785 / DL 1805-1880 MHz, B8 UL 880-915 / DL 925-960 MHz, B20 UL 832-862 / DL 791-821
MHz (3GPP TS 36.101 Table 5.5-1); the Touchstone file is scikit-rf's shipped one-port `ring slot measured.s1p`.
Part names and figures are invented for these tests.
"""

from pathlib import Path

import pytest
import skrf
from django.urls import reverse

from projectapp.audit.models import AuditEvent
from projectapp.designs import questionnaire, services
from projectapp.designs.models import Revision
from projectapp.library import services as library
from projectapp.library.parts import ANTENNA, MODULE
from projectapp.reviews.services import revision_submit
from rules.design import parse_design
from rules.touchstone import parse_touchstone
from tests.web.test_draft_versions import HTMX, draft_of, page_form, save, signed_in

RING_SLOT = (Path(skrf.__file__).parent / "data" / "ring slot measured.s1p").read_bytes()
REED = {"mounting": "internal", "ranges_mhz": [[698, 960], [1710, 2690]], "peak_gain_dbi": 1.2,
        "efficiency_pct": {"B3": 58, "B8": 41, "B20": 37}, "size_mm": [42, 9, 3], "polarization": [0, 1, 0]}
MODULE_VALUES = {"category": "cat-1", "bands": ["B1", "B3", "B8", "B20", "B28"], "rx_ports": 2,
                 "gain_limits_dbi": {"B3": 5.5, "B8": 3.5, "B20": 3.5}, "power_class": 3}


@pytest.fixture
def reed(team, author):
    entry = library.entry_create(team=team, kind=ANTENNA, name="Reed flex 2", values=dict(REED), user=author)
    library.entry_file_add(entry=entry, name="reed-flex.s1p", content=RING_SLOT, read_version=1, user=author)
    return type(entry).objects.get(pk=entry.pk)


@pytest.fixture
def marsh(team, author):
    return library.entry_create(team=team, kind=MODULE, name="Marsh C1 module", values=dict(MODULE_VALUES),
                                user=author)


def fill(client, product, slug: str, target: str, entry, **extra):
    data = {**page_form(client, product, slug), "action": f"library:{target}", f"library-{target}-entry": entry.pk}
    return save(client, product, slug, data, **extra)


def test_the_questionnaire_offers_the_teams_parts_not_retired_ones(client, product, author, reed, marsh, team):
    library.entry_create(team=team, kind=ANTENNA, name="Old stub", values={}, user=author)
    library.entry_retire(entry=type(reed).objects.get(name="Old stub"), retired=True, user=author)
    page = signed_in(author).get(reverse("draft_edit", args=[product.pk])).content.decode()
    assert 'name="library-0-entry"' in page and 'name="library-new-entry"' in page
    assert 'name="library-modem-entry"' in page
    assert "Reed flex 2 (v2)" in page and "Marsh C1 module (v1)" in page and "Old stub" not in page


def test_filling_an_antenna_copies_the_values_notes_the_entry_and_copies_its_files(product, author, reed):
    client = signed_in(author)
    before = draft_of(product)
    answer = fill(client, product, "antennas", "1", reed)
    assert answer.status_code == 302
    draft = draft_of(product)
    div = draft.document["antennas"][1]
    # the design's own name, role and feed position stay; the part's values replace the old ones
    assert (div["name"], div["role"], div["position_mm"]) == ("DIV", "receive", [60, 10, 12])
    assert {key: div[key] for key in REED} == REED
    assert div["library"] == {"name": "Reed flex 2", "version": 2}
    assert draft.document["antennas"][0] == before.document["antennas"][0]
    parse_design(draft.document)  # still a valid design; the engine ignores the note

    kept = draft.measurement_files.get()
    assert (kept.name, kept.sha256) == ("reed-flex.s1p", reed.files.get().sha256)
    assert parse_touchstone(kept.read_text(), source=kept.name).port_count == 1
    assert draft.document["measurements"] == [{"file": "reed-flex.s1p", "ports": ["DIV"]}]

    assert draft.version == before.version + 1  # one write
    event = AuditEvent.objects.filter(revision=draft).order_by("-id").first()
    assert event.action == AuditEvent.Action.LIBRARY_FILLED and event.draft_version == draft.version
    assert event.changes["antennas[1].library"] == [None, {"name": "Reed flex 2", "version": 2}]
    assert event.changes["antennas[1].peak_gain_dbi"] == [1.5, 1.2]
    assert event.changes["file"][1].startswith("reed-flex.s1p")
    assert {"antennas", "measurements"} <= {part for part, version in draft.section_versions.items()
                                           if version == draft.version}


def test_a_filled_value_stays_editable_and_its_edit_keeps_the_note(product, author, reed):
    client = signed_in(author)
    fill(client, product, "antennas", "0", reed)
    form = page_form(client, product, "antennas")
    assert form["antennas[0].peak_gain_dbi"] == ["1.2"]
    form["antennas[0].peak_gain_dbi"] = ["0.9"]
    assert save(client, product, "antennas", form).status_code == 302
    main = draft_of(product).document["antennas"][0]
    assert main["peak_gain_dbi"] == 0.9 and main["library"] == {"name": "Reed flex 2", "version": 2}


def test_add_from_library_makes_a_new_row(product, author, reed):
    client = signed_in(author)
    assert fill(client, product, "antennas", "new", reed, **HTMX).status_code == 200  # htmx: a client redirect
    antennas = draft_of(product).document["antennas"]
    assert [a["name"] for a in antennas] == ["MAIN", "DIV", "ANT1"]
    assert antennas[2]["role"] == "receive" and antennas[2]["library"]["name"] == "Reed flex 2"


def test_filling_the_modem_keeps_the_bands_the_design_chose_that_the_module_has(product, author, marsh):
    client = signed_in(author)
    answer = fill(client, product, "product", "modem", marsh, **HTMX)
    assert answer.status_code == 200 and "Modem filled from library part" in answer.content.decode()
    modem = draft_of(product).document["modem"]
    assert modem["bands"] == ["B3", "B8", "B20"]  # the design's choice; the module supports them all
    assert modem["gain_limits_dbi"] == MODULE_VALUES["gain_limits_dbi"]
    assert modem["operator_single_antenna_approval"] is False  # the design's own answer stays
    assert modem["library"] == {"name": "Marsh C1 module", "version": 1}


def test_a_fill_on_a_stale_section_is_refused_and_nothing_changes(product, author, reed):
    client = signed_in(author)
    stale = page_form(client, product, "antennas")
    form = page_form(client, product, "antennas")
    form["antennas[0].cable_loss_db"] = ["0.5"]
    save(client, product, "antennas", form)
    before = draft_of(product)
    answer = save(client, product, "antennas", {**stale, "action": "library:0", "library-0-entry": reed.pk}, **HTMX)
    assert answer.status_code == 409
    after = draft_of(product)
    assert (after.version, after.document) == (before.version, before.document)
    assert not after.measurement_files.exists()


def test_another_teams_or_a_retired_part_cannot_be_filled_in(product, author, reed, outsider, other_team):
    theirs = library.entry_create(team=other_team, kind=ANTENNA, name="Larch whip", values={}, user=outsider)
    library.entry_retire(entry=reed, retired=True, user=author)
    client = signed_in(author)
    before = draft_of(product).version
    for entry in (theirs, reed):
        answer = fill(client, product, "antennas", "0", entry, **HTMX)
        assert answer.status_code == 400
        assert "expected a part of the team" in answer.content.decode()
    assert draft_of(product).version == before


def test_a_newer_library_version_is_offered_and_reaches_the_draft_only_when_applied(product, author, reviewer, reed):
    client = signed_in(author)
    fill(client, product, "antennas", "0", reed)
    filled = draft_of(product)
    library.entry_update(entry=reed, values={**REED, "peak_gain_dbi": 1.6, "efficiency_pct": {"B3": 60}},
                         description="", read_version=2, user=reviewer)
    assert draft_of(product).document == filled.document  # nothing reaches the draft by itself

    page = client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    assert "Library entry <strong>Reed flex 2</strong> changed (v2 → v3)" in page
    review_url = reverse("draft_library_update", args=[product.pk])
    review = client.get(review_url, {"part": "antenna", "antenna": "MAIN"}).content.decode()
    assert "changed (v2 → v3)" in review and 'value="peak_gain_dbi"' in review and 'value="efficiency_pct"' in review

    # the author takes the new gain and keeps the draft's efficiency figures
    answer = client.post(review_url, {"part": "antenna", "antenna": "MAIN", "entry_version": 3,
                                      "version": filled.version, "apply": ["peak_gain_dbi"]})
    assert answer.status_code == 302
    main = draft_of(product).document["antennas"][0]
    assert main["peak_gain_dbi"] == 1.6 and main["efficiency_pct"] == REED["efficiency_pct"]
    assert main["library"] == {"name": "Reed flex 2", "version": 3}
    event = AuditEvent.objects.filter(revision=filled).order_by("-id").first()
    assert event.action == AuditEvent.Action.LIBRARY_APPLIED and "version 2 → 3" in event.summary
    assert "changed (v2 → v3)" not in client.get(reverse("draft_edit", args=[product.pk])).content.decode()


def test_applying_a_version_that_changed_again_meanwhile_is_refused(product, author, reviewer, reed):
    client = signed_in(author)
    fill(client, product, "antennas", "0", reed)
    library.entry_update(entry=reed, values={**REED, "peak_gain_dbi": 1.6}, description="", read_version=2,
                         user=reviewer)
    shown = draft_of(product)
    library.entry_update(entry=reed, values={**REED, "peak_gain_dbi": 9.0}, description="", read_version=3,
                         user=reviewer)
    answer = client.post(reverse("draft_library_update", args=[product.pk]),
                         {"part": "antenna", "antenna": "MAIN", "entry_version": 3, "version": shown.version,
                          "apply": ["peak_gain_dbi"]})
    assert answer.status_code == 409 and "changed again" in answer.content.decode()
    assert draft_of(product).document == shown.document


def test_a_submitted_revision_keeps_its_values_and_is_offered_nothing(client, team, author, reviewer, reed):
    product = services.product_create(team=team, name="Culvert level sensor", user=author)
    draft = product.draft
    document = {"format": "earshot-design/1", "product": {"name": "Culvert level sensor"},
                "modem": {"category": "cat-m1", "bands": ["B20"]},
                "antennas": [{"name": "ANT1", "role": "main", "ranges_mhz": [[698, 960]],
                              "library": {"name": "Reed flex 2", "version": 2}}]}
    services.draft_save_document(revision=draft, document=document, user=author)
    submitted = revision_submit(revision=draft, user=author)
    library.entry_update(entry=reed, values={**REED, "peak_gain_dbi": 1.6}, description="", read_version=2,
                         user=reviewer)
    client.force_login(author)
    page = client.get(reverse("revision_detail", args=[product.pk, submitted.number])).content.decode()
    assert "changed (v2" not in page
    with pytest.raises(services.DraftGone):
        services.draft_library_apply(revision=submitted, kind=ANTENNA, antenna="ANT1", entry=reed, entry_version=3,
                                     keys=["peak_gain_dbi"], with_files=False, read_version=1, user=author)
    assert Revision.objects.get(pk=submitted.pk).document == document
    # with no draft, the review page says so instead of offering anything
    assert client.get(reverse("draft_library_update", args=[product.pk]),
                      {"part": "antenna", "antenna": "ANT1"}).status_code == 404


def test_the_review_page_needs_the_author_role_and_a_target(client, product, author, reviewer, approver):
    url = reverse("draft_library_update", args=[product.pk])
    client.force_login(approver)
    assert client.get(url, {"part": "modem"}).status_code == 403
    client.force_login(author)
    answer = client.get(url, {"part": "antenna"})
    assert answer.status_code == 400 and "antenna: expected the name of the antenna" in answer.content.decode()
    assert "Nothing to review" in client.get(url, {"part": "modem"}).content.decode()


def test_the_section_pickers_are_part_of_the_cached_draft_page(product, author, team):
    client = signed_in(author)
    assert "Sedge" not in client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    library.entry_create(team=team, kind=ANTENNA, name="Sedge whip 7", values={}, user=author)
    assert "Sedge whip 7 (v1)" in client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    assert questionnaire.ANTENNAS.slug == "antennas"
