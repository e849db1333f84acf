"""Text bound for a terminal, made harmless: a design's names and keys are whatever someone typed.

A carriage return or an ANSI escape in an antenna name could rewrite the line it is printed on (a fake
"0 blockers"), a bidirectional override could reorder it, and a lone surrogate can't be encoded at all.
`printable` shows each such character as a Python-style escape (`\\r`, `\\x1b`, `\\u202e`); every other
character, accents, CJK and emoji included, is kept. `printable_json` does the same inside JSON text with
JSON's own escapes, so the value a program reads back is unchanged.
"""

import re

# C0 and C1 control characters and DEL, lone surrogates, line and paragraph separators, and the
# bidirectional marks, embeddings, overrides and isolates (Unicode TR9). Zero-width joiners stay: emoji need them.
UNSAFE = re.compile("[\x00-\x1f\x7f-\x9f\ud800-\udfff\u2028\u2029\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]")
NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}
# In JSON text the line feeds are json.dumps's own indentation (inside strings it escapes C0 itself).
UNSAFE_IN_JSON = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\ud800-\udfff\u2028\u2029\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]")


def _escape(match: re.Match[str]) -> str:
    character = match.group()
    if character in NAMED:
        return NAMED[character]
    code = ord(character)
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def printable(text: str) -> str:
    """`text` with every character that could steer a terminal shown as an escape."""
    return UNSAFE.sub(_escape, text)


def printable_json(text: str) -> str:
    """JSON text (as json.dumps writes it, ensure_ascii=False) with the same characters as \\uXXXX escapes.
    They can only occur inside strings, where the escape means the same character."""
    return UNSAFE_IN_JSON.sub(lambda match: f"\\u{ord(match.group()):04x}", text)
