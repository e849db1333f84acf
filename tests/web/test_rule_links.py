"""Every rule id a page shows links to that rule's row on the rules page: checklist, review cards, item page,
dashboard, comparison, audit trail, sign-off page."""

import json

from django.template import Context, Template
from django.urls import reverse

from projectapp.designs import services
from projectapp.reviews import services as review_services
from projectapp.reviews.services import review_item_comment, review_item_decide
from rules.registry import registered_rules
from tests.web.conftest import EXAMPLES
from tests.web.test_term_list import Links, page


def rule_anchors(html: str) -> list[str]:
    prefix = reverse("rule_list") + "#"
    return [href[len(prefix):] for href in Links(html).hrefs if href.startswith(prefix)]


def test_the_rules_page_has_an_anchor_for_every_rule_and_its_product_line(client, author):
    html = page(client, author, reverse("rule_list"))
    ids = Links(html).ids
    for rule in registered_rules():
        assert ids.count(f"rule-{rule.id}") == 1
        assert rule.product_impact.replace("'", "&#x27;") in html


def test_the_checklist_links_every_findings_rule(client, author, product):
    # hive-gateway.json: a close co-polarized pair, a lossy receive antenna, people at 150 mm, the usual notes
    anchors = set(rule_anchors(page(client, author, reverse("draft_edit", args=[product.pk]))))
    assert {f"rule-{rule_id}" for rule_id in ("SEP-001", "EFF-001", "RFX-001", "CRT-001", "CRT-002", "CRT-003")} <= anchors


def test_review_cards_the_item_page_the_dashboard_and_the_sign_off_page_link_rule_ids(client, author, reviewer,
                                                                                      product):
    revision = review_services.revision_submit(revision=product.draft, user=author)
    items = list(revision.review_items.filter(kind="raised"))
    expected = {f"rule-{item.rule_id}" for item in items}
    review = set(rule_anchors(page(client, reviewer, reverse("revision_review", args=[product.pk, 1]))))
    assert expected <= review
    decided_here = {f"rule-{item.rule_id}" for item in items if not hasattr(item, "process_step")}
    assert decided_here and decided_here <= set(rule_anchors(page(client, reviewer, reverse("review_dashboard"))))
    blocker = next(item for item in items if item.severity == "blocker")
    assert f"rule-{blocker.rule_id}" in rule_anchors(page(client, reviewer, reverse("review_item", args=[blocker.pk])))
    signoff = set(rule_anchors(page(client, reviewer, reverse("signoff_page", args=[product.pk, 1]))))
    assert f"rule-{blocker.rule_id}" in signoff  # "what stands in the way" names it


def test_the_audit_trail_links_the_rule_ids_in_its_summaries_and_escapes_the_rest(client, author, reviewer, product):
    revision = review_services.revision_submit(revision=product.draft, user=author)
    item = revision.review_items.filter(kind="raised", severity="warning").first()
    review_item_decide(item=item, user=reviewer, disposition="discussion", justification="", expected_version=1)
    review_item_comment(item=item, user=reviewer, text=f"<b>see {item.rule_id}</b> and ZZZ-999")
    html = page(client, reviewer, reverse("product_audit", args=[product.pk]))
    assert rule_anchors(html).count(f"rule-{item.rule_id}") >= 2  # the decision and the comment
    assert "&lt;b&gt;see " in html and "<b>see" not in html
    assert "ZZZ-999" in html and "rule-ZZZ-999" not in html  # not a rule: left as text


def test_the_comparison_links_new_and_resolved_findings(client, author, product):
    review_services.revision_submit(revision=product.draft, user=author)
    draft = services.draft_get_or_start(product=product, user=author)
    document = json.loads((EXAMPLES / "hive-gateway.json").read_text())
    document["antennas"][1]["position_mm"] = [115, 10, 12]  # 100 mm apart: SEP-001 resolved
    document["deployment"]["body_distance_mm"] = 300  # RFX-001 resolved
    document["enclosure"]["material"] = "mixed"  # ENC-001 new
    services.design_import(product=product, text=json.dumps(document), source="moved.json", user=author,
                           read_version=draft.version)
    review_services.revision_submit(revision=product.draft, user=author)
    html = page(client, author, reverse("revision_compare", args=[product.pk]) + "?from=1&to=2")
    assert {"rule-ENC-001", "rule-SEP-001", "rule-RFX-001"} <= set(rule_anchors(html))


def test_an_id_that_is_no_rule_is_shown_as_text_and_markup_is_escaped():
    rendered = Template('{% load rule_links %}{% rule_link "ABC-123" %}|{% rule_link "SEP-001" %}|'
                        '{{ text|link_rule_ids }}').render(Context({"text": "SEP-001 <i>x</i> GND-0011"}))
    first, second, third = rendered.split("|")
    assert first == "<code>ABC-123</code>"
    assert second == f'<a class="rule-link" href="{reverse("rule_list")}#rule-SEP-001"><code>SEP-001</code></a>'
    assert third.startswith(second) and "&lt;i&gt;x&lt;/i&gt;" in third and "GND-0011" in third
    assert third.count("<a ") == 1
