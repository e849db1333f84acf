"""The coverage panel (projectapp/designs/coverage_panel.py, view revision_coverage): both directions band by
band, which one limits, what one receive branch fewer costs, every source named, and the assumptions a reader
changes for a what-if. Every number is rules.coverage's; these tests hold the panel to it."""

import pytest
from django.urls import reverse
from django.utils.html import escape

from projectapp.designs import coverage_panel, services
from projectapp.designs.checklists import checklist_for, coverage_rows
from projectapp.reviews.services import revision_submit
from rules.coverage import TABLE_GROUPS
from tests.web.conftest import EXAMPLES


@pytest.fixture
def router(team, author):
    """The demo's Cat 4 field router (B2, B4, B12, B13, B66) with its measured two-port file, submitted."""
    product = services.product_create(team=team, name="Field router", user=author)
    services.measurement_add(revision=product.draft, name="field-router-revA.s2p", user=author,
                             content=(EXAMPLES / "field-router-revA.s2p").read_bytes())
    services.design_import(product=product, text=(EXAMPLES / "field-router.json").read_text(),
                           source="field-router.json", user=author)
    return revision_submit(revision=product.draft, user=author)


def url(revision, **query) -> str:
    base = reverse("revision_coverage", args=[revision.product_id, revision.number])
    return base + ("?" + "&".join(f"{key}={value}" for key, value in query.items()) if query else "")


def rows_of(revision, **assumptions):
    return coverage_rows(checklist_for(revision), **assumptions)


def test_the_panel_shows_both_directions_for_every_band_in_the_tables_groups(client, router, reviewer):
    client.force_login(reviewer)
    page = client.get(router.get_absolute_url()).content.decode()
    rows = rows_of(router)
    assert [row["band"] for row in rows] == ["B2", "B4", "B12", "B13", "B66"]
    for title, entries in TABLE_GROUPS:
        assert title in page
        for _, label, _ in entries:
            assert escape(label) in page, label
    assert "Uplink: device to base station" in page and "Downlink: base station to device" in page
    # A row of the table holds rules.coverage's numbers, one cell per band, formatted as the panel shows them.
    margins = "".join(f'<td class="num">{row["margin_ul_db"]:.1f}</td>' for row in rows)
    assert margins in page


def test_the_sentences_say_which_direction_limits_where_as_the_rows_do(router):
    rows = rows_of(router)
    sentences = coverage_panel.headline(rows)
    uplink_two = [row["band"] for row in rows if row["limiting_two"] == "ul"]
    downlink_one = [row["band"] for row in rows if row["limiting_one"] == "dl"]
    assert uplink_two and f"the uplink in {', '.join(uplink_two)}" in sentences[0]
    if downlink_one:
        assert f"the downlink in {', '.join(downlink_one)}" in " ".join(sentences[:2])
    losing = [row for row in rows if row["area_share_pct"] is not None and row["area_share_pct"] < 99.5]
    for row in losing:
        assert f"{row['band']} to {row['area_share_pct']:.0f} % of the two-antenna area" in " ".join(sentences)
    first = rows[0]
    assert (f"power class {first['power_class']} ({first['max_output_dbm']:g} dBm conducted) with the main "
            f"antenna's cable loss of {first['cable_loss_db']:g} dB") in sentences[-1]


def test_every_input_names_its_source(router):
    rows = rows_of(router)
    sources = dict(coverage_panel.sources(rows, {}))
    assert "3GPP TR 38.901 Table 7.4.1-1" in sources["Path loss"]
    assert sources["Uplink target"] == rows[0]["mcl_ul_source"] and "TR 36.888" in sources["Uplink target"]
    assert sources["Downlink target"] == rows[0]["mcl_dl_source"]
    assert "TS 36.101" in sources["Power class"]
    assert "TR 38.875" in sources["One receive branch fewer"]
    assert "field-router-revA.s2p" in sources["Envelope correlation"], "the pair's measured ECC decides"
    assert all(source for source in sources.values())


def test_changed_assumptions_recompute_the_panel_as_a_what_if(client, router, reviewer):
    client.force_login(reviewer)
    response = client.get(url(router, scenario="rma", reference_distance_km="3", los="los"), HTTP_HX_REQUEST="true")
    page = response.content.decode()
    assert response.status_code == 200 and page.lstrip().startswith('<section id="coverage"')
    expected = rows_of(router, scenario="rma", reference_distance_km=3.0, los=True)
    assert expected[0]["model_label"] == "TR 38.901 RMa (rural macro) LOS"
    assert "TR 38.901 RMa (rural macro) LOS" in page and "entered on this panel (what-if)" in page
    assert "What-if:" in page and "keep the defaults" in page
    assert "".join(f'<td class="num">{row["margin_ul_db"]:.1f}</td>' for row in expected) in page
    revision_page = client.get(router.get_absolute_url()).content.decode()
    assert "What-if:" not in revision_page and "TR 38.901 UMa (urban macro) NLOS" in revision_page, (
        "a what-if is not kept: the revision's own panel keeps the defaults")


def test_an_entry_loss_and_an_assumed_ecc_reach_the_budget(router):
    form = coverage_panel.CoverageAssumptionsForm({"entry_loss_db": "25", "ecc": "0.2", "outage_pct": "10"}).read()
    overrides = form.overrides("indoor")
    assert overrides == {"entry_loss_db": {"indoor": 25.0}, "ecc": 0.2, "outage_probability": pytest.approx(0.1)}
    rows = rows_of(router, **overrides)
    assert rows[0]["entry_loss_db"] == 25.0 and rows[0]["outage_pct"] == pytest.approx(10.0)


@pytest.mark.parametrize(("query", "message"), [
    ({"mobile_height_m": "tall"}, "mobile_height_m: expected a device height in m from 0.5 to 30; this filter was left out"),
    ({"ecc": "1.5"}, "ecc: expected an envelope correlation from 0 to 1; this filter was left out"),
    ({"scenario": "moon"}, "scenario: expected one of uma, umi, rma; this filter was left out"),
    # TR 38.901 Table 7.4.1-1: UMa is given for 10 m to 5 km
    ({"reference_distance_km": "8"}, "reference_distance_km: TR 38.901 UMa (urban macro) is valid for "
                                     "reference_distance_km from 0.01 to 5; got 8; the defaults are shown instead"),
])
def test_a_value_the_form_or_the_model_refuses_is_named_and_the_panel_still_answers(client, router, reviewer, query,
                                                                                     message):
    client.force_login(reviewer)
    response = client.get(url(router, **query))
    assert response.status_code == 400
    page = response.content.decode()
    assert message in page and "Coverage: uplink and downlink" in page


def test_the_panel_page_works_without_javascript_and_only_for_the_team(client, router, reviewer, outsider):
    client.force_login(reviewer)
    page = client.get(url(router, base_gain_db="18")).content.decode()
    assert "<html" in page and "Range with one and two receive antennas" in page
    client.force_login(outsider)
    assert client.get(url(router)).status_code == 404
    client.logout()
    assert client.get(url(router)).status_code == 302


def test_the_chart_says_which_direction_limits_each_band(router):
    from projectapp.figures.charts import coverage_chart

    rows = rows_of(router)
    description = coverage_chart(rows).layout.description
    for row in rows:
        one, two = ({"ul": "uplink", "dl": "downlink"}[row[key]] for key in ("limiting_one", "limiting_two"))
        expected = (f"the {one} limits with either" if one == two else
                    f"the {one} limits with one and the {two} with two")
        assert f"{row['band']}: " in description and expected in description
