"""The terms page and the "what is this?" links to it from the pages where the terms appear."""

from html.parser import HTMLParser

import pytest
from django.urls import reverse
from django.utils.html import escape

from projectapp.designs import questionnaire
from projectapp.designs.templatetags.terms import KEY_TERMS
from projectapp.reviews import services as review_services
from rules.coverage import TABLE_COLUMNS
from rules.glossary import glossary, terms


class Links(HTMLParser):
    """Every id and every href on a page, and the text of each <summary>."""

    def __init__(self, html: str):
        super().__init__()
        self.ids: list[str] = []
        self.hrefs: list[str] = []
        self.summaries: list[str] = []
        self._in_summary = False
        self.feed(html)

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        if "id" in attributes:
            self.ids.append(attributes["id"])
        if tag == "a" and "href" in attributes:
            self.hrefs.append(attributes["href"])
        if tag == "summary":
            self._in_summary = True
            self.summaries.append("")

    def handle_endtag(self, tag):
        if tag == "summary":
            self._in_summary = False

    def handle_data(self, data):
        if self._in_summary:
            self.summaries[-1] += data


def page(client, user, url: str) -> str:
    client.force_login(user)
    response = client.get(url)
    assert response.status_code == 200, url
    return response.content.decode()


def term_anchors(html: str) -> list[str]:
    prefix = reverse("term_list") + "#"
    return [href[len(prefix):] for href in Links(html).hrefs if href.startswith(prefix)]


def test_the_terms_page_needs_a_log_in(client, db):
    response = client.get(reverse("term_list"))
    assert response.status_code == 302 and response.headers["Location"].startswith(reverse("login"))


def test_every_term_renders_once_under_a_unique_anchor(client, author):
    html = page(client, author, reverse("term_list"))
    ids = Links(html).ids
    assert len(ids) == len(set(ids)), "every id on the page is unique"
    for entry in terms().values():
        assert ids.count(entry.anchor) == 1
        assert escape(entry.plain) in html and escape(entry.term) in html
        if entry.why:
            assert escape(entry.why) in html
        if entry.source:
            assert escape(entry.source) in html
    for group in glossary():
        assert f"group-{group.id}" in ids and escape(group.title) in html
    # the index at the top links to every entry
    assert set(term_anchors(html)) | {href[1:] for href in Links(html).hrefs if href.startswith("#")} >= {
        entry.anchor for entry in terms().values()}


def test_the_header_and_the_rules_page_link_to_the_terms_page(client, author):
    for url in (reverse("product_list"), reverse("rule_list")):
        assert reverse("term_list") in Links(page(client, author, url)).hrefs, url


def test_every_term_a_question_names_exists_and_the_questionnaire_explains_it(client, author, product):
    named = [question for section in questionnaire.SECTIONS for question in section.questions if question.term]
    assert {"ue-category", "band", "polarization", "ground-plane", "dbi", "efficiency"} <= {q.term for q in named}
    html = page(client, author, reverse("draft_edit", args=[product.pk]))
    links = Links(html)
    for question in named:
        entry = terms()[question.term]  # a KeyError here is a question naming a term the list lacks
        if not question.applies_to(product.draft.document):
            continue  # not asked for this category (LTE-M's duplex question on a Cat 1 design)
        assert f"What does “{entry.term}” mean?" in links.summaries, question.key
        assert escape(entry.plain) in html
        assert entry.anchor in term_anchors(html)


@pytest.mark.parametrize("view", ["draft_edit", "revision_detail"])
def test_band_table_and_evidence_keys_link_to_their_terms(client, author, product, view):
    args = [product.pk] if view == "draft_edit" else [product.pk, product.latest.number]
    anchors = set(term_anchors(page(client, author, reverse(view, args=args))))
    # band table headers (hive-gateway: B3, B8, B20) and the separation finding's evidence (SEP-001)
    assert {"term-band", "term-duplex", "term-uplink-downlink", "term-wavelength", "term-quarter-wave",
            "term-near-field", "term-polarization", "term-severity"} <= anchors


def test_every_link_to_a_term_on_the_pages_lands_on_an_entry(client, author, reviewer, product):
    known = {entry.anchor for entry in terms().values()}
    seen = set(term_anchors(page(client, author, reverse("draft_edit", args=[product.pk]))))
    revision = review_services.revision_submit(revision=product.draft, user=author)
    for url in (reverse("revision_detail", args=[product.pk, revision.number]),
                reverse("revision_review", args=[product.pk, revision.number]),
                reverse("signoff_page", args=[product.pk, revision.number]),
                reverse("review_item", args=[revision.review_items.first().pk])):
        seen |= set(term_anchors(page(client, reviewer, url)))
    assert seen <= known
    assert {"term-waiver", "term-disposition", "term-sign-off", "term-severity", "term-ue-category"} <= seen


def test_evidence_keys_and_coverage_columns_name_only_terms_that_exist():
    assert set(KEY_TERMS.values()) <= set(terms())
    assert {"mcl_dl_db", "mcl_ul_db", "margin_one_db", "band"} <= {key for key, _, _ in TABLE_COLUMNS}
    assert {key for key, _, _ in TABLE_COLUMNS if key in KEY_TERMS} >= {"mcl_dl_db", "margin_one_db"}


def test_a_term_link_works_without_javascript_and_is_not_hover_only(client, author, product):
    html = page(client, author, reverse("draft_edit", args=[product.pk]))
    assert 'class="term-help"' in html and "<details" in html  # a native disclosure, keyboard-operable
    assert 'class="term"' in html
    start = html.index('class="term-help"')
    assert "title=" not in html[start:html.index("</details>", start)]
