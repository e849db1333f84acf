"""The terminal checklist: text from the design (names, revision, ignored keys) can't drive the terminal."""

import re

from rules.terminal_text import printable, printable_json
from rules.text_report import render_text
from tests.rules.design_builders import antenna, design, run

FAKE_ALL_CLEAR = "\r\x1b[2K0 blockers  0 warnings  0 notes\x1b[8m"


def test_printable_shows_control_characters_surrogates_and_bidi_overrides_as_escapes():
    assert printable("A\rB\x1b[2K\x00\x7f\x9b\ud800\u202eZ\u2028") == \
        "A\\rB\\x1b[2K\\x00\\x7f\\x9b\\ud800\\u202eZ\\u2028"
    assert printable("Tallow Creek — λ/4 ü 📶 \u200d") == "Tallow Creek — λ/4 ü 📶 \u200d"  # ordinary text stays


def test_printable_json_keeps_the_value_and_escapes_what_a_terminal_would_obey():
    import json

    value = {"name": "A\x1b[2K\x9b\ud800é"}
    text = printable_json(json.dumps(value, ensure_ascii=False))
    assert json.loads(text) == value
    assert "é" in text and not re.search("[\x00-\x1f\x7f-\x9f\ud800-\udfff]", text)
    text.encode("utf-8")  # no lone surrogate left


def test_names_cannot_forge_lines_in_the_text_checklist():
    document = design("cat-1", antennas=[antenna("A" + FAKE_ALL_CLEAR), antenna("B", "receive", (75, 20, 10))],
                      product={"name": "Widget" + FAKE_ALL_CLEAR, "revision": "1\r"})
    document["extra\x1b]0;title\x07"] = 1  # an ignored key is listed too
    text = render_text(run(document), ignored_paths=["extra\x1b]0;title\x07"])
    assert not re.search("[\x00-\x09\x0b-\x1f\x7f-\x9f]", text), "only line feeds may reach the terminal"
    assert "A\\r\\x1b[2K0 blockers" in text and "Widget\\r\\x1b[2K0 blockers" in text
    assert not any(line.startswith("0 blockers") for line in text.splitlines())
    text.encode("utf-8")
