"""The signed PDF record of a hostile design: the longest texts the forms and the parser take, unbroken words,
CJK and emoji names. It must build, keep every name, and draw each character with a real glyph of a font
it embeds (no boxes)."""

import io
import json
import re
import struct

import pytest
from django.contrib.auth import get_user_model
from pypdf import PdfReader
from reportlab.pdfbase.ttfonts import TTFontFile

from projectapp.designs import services as design_services
from projectapp.reviews.forms import DecisionForm
from projectapp.reviews.services import review_item_decide, revision_submit
from projectapp.signoff import record_fonts, services
from projectapp.signoff.models import SignedRecord
from projectapp.teams.models import Membership, Role, Team
from rules.design import TEXT_LIMITS
from tests.web.conftest import EXAMPLES, PASSWORD, signing_request

MAIN = "主天线-MAIN 📡"  # Chinese and an emoji
DIV = "분집 DIV 😀 ダイバーシティ"  # Korean, an emoji, Japanese katakana
# The parser's longest antenna name (rules.design.TEXT_LIMITS), no space: Greek, Cyrillic, accented Latin
FAR = ("Ωmega-Жук-Zoë-" + "x" * 986)[:TEXT_LIMITS["antennas[].name"]]
PRODUCT = ("Tallow Creek 蜂箱网关 🐝 " + "Kästchen" * 20)[:120]  # the product form's limit
TEAM = ("Tallow Creek Instruments 测试 " + "y" * 120)[:120]
FIRST_NAME = ("Inès 井上 " + "Ł" * 150)[:150]  # Django's first_name and last_name limits
LAST_NAME = ("O'Brien-Łukasz 👩‍🔧 " + "z" * 150)[:149]  # + one letter per person: 150
MAX_FORM_CHARS = DecisionForm.base_fields["justification"].max_length
UNBROKEN = "長" * (MAX_FORM_CHARS // 2) + "q" * (MAX_FORM_CHARS - MAX_FORM_CHARS // 2)
NORMAL = "\n\n".join(["Tested on the pilot rig: the chamber run showed 14 dB of isolation in B20 and the "
                      "efficiency loss is inside the link budget for the orchard sites."] * 12)[:2000]


def hostile_document() -> dict:
    document = json.loads((EXAMPLES / "hive-gateway.json").read_text())
    document["product"]["name"] = PRODUCT
    document["antennas"][0]["name"] = MAIN
    document["antennas"][1]["name"] = DIV
    document["enclosure"]["size_mm"] = [400, 80, 30]
    # far from the others (no finding names it), so its name fits the review item's subjects column
    document["antennas"].append({"name": FAR, "role": "receive", "position_mm": [380, 70, 12],
                                 "polarization": [0, 0, 1], "ranges_mhz": [[790, 960], [1710, 2200]],
                                 "peak_gain_dbi": 1.0})
    document["measurements"] = [{"file": "field-router-revA.s2p", "ports": [MAIN, DIV]}]  # charts with CJK legends
    return document


@pytest.fixture
def hostile(db):
    team = Team.objects.create(name=TEAM)
    people = {}
    for role in (Role.AUTHOR, Role.REVIEWER, Role.APPROVER):
        people[role.value] = get_user_model().objects.create_user(
            username=f"{role.value}-h", password=PASSWORD, first_name=FIRST_NAME, last_name=LAST_NAME + role.value[0])
        Membership.objects.create(team=team, user=people[role.value], role=role)
    author = people["author"]
    product = design_services.product_create(team=team, name=PRODUCT, user=author)
    draft = design_services.draft_get_or_start(product=product, user=author)
    design_services.measurement_add(revision=draft, name="field-router-revA.s2p",
                                    content=(EXAMPLES / "field-router-revA.s2p").read_bytes(), user=author)
    design_services.design_import(product=product, text=json.dumps(hostile_document(), ensure_ascii=False),
                                  source="hostile.json", user=author)
    revision = revision_submit(revision=product.draft, user=author)
    for item in revision.review_items.filter(kind="raised").order_by("id"):
        text = UNBROKEN if item.severity == "blocker" else NORMAL if item.severity == "warning" else "👩‍🔧 ✓ 検査済み"
        disposition = "waived" if item.severity != "note" else "not-applicable"
        assert DecisionForm({"disposition": disposition, "justification": text, "version": item.version}).is_valid()
        review_item_decide(item=item, user=people["approver"], disposition=disposition, justification=text,
                           expected_version=item.version)
    return revision, people


def sign_all(revision, people) -> bytes:
    for role in ("author", "reviewer", "approver"):
        services.revision_sign(revision=revision, user=people[role], role=role, password=PASSWORD, request=signing_request())
    with SignedRecord.objects.get(revision=revision).pdf.open("rb") as handle:
        return handle.read()


def squeezed(text: str) -> str:
    return "".join(text.split())


def in_order(value: str, text: str, *, most_pieces: int = 6) -> bool:
    """`value` is in `text` whole, or in a few pieces in order: a table cell or paragraph that continues on
    the next page has the footer and the repeated header in between."""
    position, pieces = 0, 0
    while value:
        longest = next((n for n in range(len(value), 0, -1) if text.find(value[:n], position) >= 0), 0)
        if not longest or pieces == most_pieces:
            return False
        position = text.find(value[:longest], position) + longest
        value, pieces = value[longest:], pieces + 1
    return True


# -- what a font subset in the PDF really draws ----------------------------------------------------------------

def _subset_glyph_ids(font_file: bytes) -> list[int]:
    """Code → glyph id of a subset reportlab embedded (one format 6 cmap, first code 0); a character the
    source font lacks maps to glyph 0, .notdef, the box."""
    tables = {}
    for index in range(struct.unpack(">H", font_file[4:6])[0]):
        tag, _, offset, _ = struct.unpack(">4sIII", font_file[12 + 16 * index:28 + 16 * index])
        tables[tag] = offset
    cmap = tables[b"cmap"]
    subtable = cmap + struct.unpack(">I", font_file[cmap + 8:cmap + 12])[0]
    fmt, _, _, first, count = struct.unpack(">5H", font_file[subtable:subtable + 10])
    assert (fmt, first) == (6, 0)
    return list(struct.unpack(f">{count}H", font_file[subtable + 10:subtable + 10 + 2 * count]))


def drawn_characters(content: bytes) -> dict[str, set[str]]:
    """For each embedded TrueType font (by name), the characters it draws with a real glyph: one that is
    not .notdef and has an outline (from the subset's cmap and its glyph table)."""
    drawn: dict[str, set[str]] = {}
    for page in PdfReader(io.BytesIO(content)).pages:
        for font in page["/Resources"]["/Font"].values():
            font = font.get_object()
            if font["/Subtype"] != "/TrueType":
                continue
            name = str(font["/BaseFont"]).split("+", 1)[1]
            data = font["/FontDescriptor"]["/FontFile2"].get_data()
            glyph_ids = _subset_glyph_ids(data)
            offsets = TTFontFile(io.BytesIO(data)).glyphPos  # loca: glyph n's outline is offsets[n]..[n+1]
            cmap = font["/ToUnicode"].get_data().decode()
            for code, target in re.findall(r"<([0-9A-F]{2})> <([0-9A-F]+)>", cmap):
                glyph = glyph_ids[int(code, 16)]
                if glyph and offsets[glyph + 1] > offsets[glyph]:
                    drawn.setdefault(name, set()).add(bytes.fromhex(target).decode("utf-16-be"))
    return drawn


def test_a_hostile_design_builds_a_record_that_keeps_every_name(hostile):
    revision, people = hostile
    content = sign_all(revision, people)
    text = " ".join(page.extract_text() for page in PdfReader(io.BytesIO(content)).pages)
    flat = squeezed(text)
    for value in (MAIN, DIV, FAR, PRODUCT, TEAM, UNBROKEN, NORMAL, FIRST_NAME, LAST_NAME + "a"):
        assert in_order(squeezed(value), flat), value[:40]
    assert "could not be drawn" not in text  # every figure (placement, three charts, coverage) is there
    assert "Return loss" in text and "Envelope correlation" in text
    drawn = drawn_characters(content)
    everything = set().union(*drawn.values())
    missing = {char for char in MAIN + DIV + FAR + PRODUCT + FIRST_NAME + LAST_NAME
               if not char.isspace() and char not in everything and char != "\u200d"}
    assert missing == set()
    # each script came from the font that covers it (fonts/README.md)
    assert {"主", "분", "ダ"} <= drawn["DroidSansFallback"]
    assert {"Ω", "Ж", "ë", "Ł"} <= drawn["DejaVuSans"] | drawn.get("DejaVuSans-Bold", set())
    assert "🐝" in drawn["Symbola"] and "📡" in drawn["Symbola"]
    assert len(content) < 1_000_000  # the fonts are subset: benchmarks/pdf_record.py keeps the same target


def test_characters_no_font_has_print_as_code_points(db):
    # Devanagari (needs shaping, which reportlab does not do), a control character, a lone surrogate
    assert record_fonts.markup("नम\x07\ud800") == "[U+0928][U+092E][U+0007][U+D800]"
    # a zero width joiner stays with the emoji it joins; a lone variation selector no font has is dropped
    assert record_fonts.runs("👩\u200d🔧") == [(record_fonts.SYMBOLS, "👩\u200d🔧")]
    assert record_fonts.markup("a < b & c\nd") == "a &lt; b &amp; c<br/>d"

