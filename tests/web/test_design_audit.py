"""Every change to a design or its files is in the product's audit trail: who, when, which section or file,
and the document paths that changed with their values before and after. Saving what is already stored
writes nothing (the page cache relies on an unchanged state)."""

from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from projectapp.audit.models import AuditEvent
from projectapp.designs import services
from tests.web.conftest import EXAMPLES
from tests.web.test_draft_versions import draft_of, page_form, save, signed_in

GOOD_S2P = (EXAMPLES / "field-router-revA.s2p").read_bytes()


def design_events(product):
    return list(AuditEvent.objects.filter(product=product).exclude(action__in=["submitted"]).order_by("id"))


def test_creating_a_product_and_importing_a_design_are_recorded(product, author):
    created, imported = design_events(product)
    assert (created.action, created.actor, created.draft_version) == ("draft-started", author, 1)
    assert imported.action == "imported" and "hive-gateway.json" in imported.summary
    assert imported.draft_version == 2 and imported.revision == draft_of(product)
    # from the blank document to the example: the paths that changed, before and after
    assert imported.changes["modem.category"] == [None, "cat-1"]  # a new product has no category chosen
    assert imported.changes["product.name"] == ["Hive gateway", "Tallow Creek hive gateway"]
    assert imported.changes["antennas"][0] == [] and len(imported.changes["antennas"][1]) == 2


def test_a_section_save_records_who_which_section_and_each_changed_path(product, author):
    client = signed_in(author)
    data = page_form(client, product, "antennas")
    data["antennas[1].position_mm[0]"] = ["95"]
    data["antennas[0].name"] = ["ANT-A"]
    save(client, product, "antennas", data, HTTP_HX_REQUEST="true")
    event = design_events(product)[-1]
    assert (event.action, event.actor, event.draft_version) == ("section-saved", author, 3)
    assert "Antennas" in event.summary
    assert event.changes == {"antennas[0].name": ["MAIN", "ANT-A"],
                             "antennas[1].position_mm": [[60, 10, 12], [95, 10, 12]]}


def test_saving_identical_values_writes_no_event_and_keeps_the_state(product, author):
    client = signed_in(author)
    draft = draft_of(product)
    before = (len(design_events(product)), draft.version, draft.cache_identity)
    for slug in ("product", "enclosure", "antennas", "deployment"):
        assert save(client, product, slug, page_form(client, product, slug),
                    HTTP_HX_REQUEST="true").status_code == 200
    draft = draft_of(product)
    assert (len(design_events(product)), draft.version, draft.cache_identity) == before


def test_uploads_port_maps_and_removals_by_a_reviewer_are_recorded(client, product, reviewer):
    client.force_login(reviewer)
    client.post(reverse("measurement_upload", args=[product.pk]),
                {"touchstone": SimpleUploadedFile("pair.s2p", GOOD_S2P)})
    version = draft_of(product).version
    client.post(reverse("measurement_ports", args=[product.pk]),
                {"file": "pair.s2p", "port_count": "2", "port-0": "DIV", "port-1": "MAIN", "version": version})
    client.post(reverse("measurement_remove", args=[product.pk]), {"file": "pair.s2p", "version": version + 1})
    added, mapped, removed = design_events(product)[-3:]
    digest = services.MeasurementFile.digest(GOOD_S2P)
    assert (added.action, added.actor) == ("file-added", reviewer) and "pair.s2p" in added.summary
    assert added.changes["file"] == [None, f"pair.s2p: {len(GOOD_S2P)} bytes, SHA-256 {digest}"]
    assert added.changes["measurements"] == [None, [{"file": "pair.s2p", "ports": ["MAIN", "DIV"]}]]
    assert mapped.action == "file-mapped"
    assert mapped.changes == {"measurements[0].ports": [["MAIN", "DIV"], ["DIV", "MAIN"]]}
    assert removed.action == "file-removed" and removed.changes["file"][1] is None
    assert [added.draft_version, mapped.draft_version, removed.draft_version] == [3, 4, 5]


def test_a_new_draft_is_recorded_with_where_it_came_from(submitted_product, author):
    draft = services.draft_get_or_start(product=submitted_product, user=author)
    event = design_events(submitted_product)[-1]
    assert event.action == "draft-started" and event.revision == draft
    assert event.summary == "Started draft design revision 2, copied from design revision 1"


def test_the_audit_trail_page_shows_design_edits_with_their_paths(client, product, author, reviewer):
    author_client = signed_in(author)
    save(author_client, product, "deployment", {**page_form(author_client, product, "deployment"),
                                                "deployment.body_distance_mm": "420"})
    client.force_login(reviewer)
    page = client.get(reverse("product_audit", args=[product.pk])).content.decode()
    assert "Saved a questionnaire section" in page and "Saved Deployment of draft design revision 1" in page
    assert "<code>deployment.body_distance_mm</code>: 150 → 420" in page
    assert "Imported a design file" in page and "Started a draft" in page
    assert "version 3" in page


def test_a_long_value_is_shortened_on_the_page_and_kept_whole_in_the_event(client, product, author):
    author_client = signed_in(author)
    name = "N" * 300
    save(author_client, product, "product", {**page_form(author_client, product, "product"), "product.name": name})
    event = design_events(product)[-1]
    assert event.changes["product.name"][1] == name
    page = author_client.get(reverse("product_audit", args=[product.pk])).content.decode()
    assert "N" * 159 + "…" in page and name not in page
