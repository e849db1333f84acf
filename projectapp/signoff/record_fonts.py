"""The signed record's fonts, embedded in every PDF, and the split of text into runs by the font that has
each character, so the record keeps every name (CJK, emoji, accented Latin, Greek, Cyrillic...).

DejaVu Sans draws text; Droid Sans Fallback (CJK ideographs, kana, Hangul) and Symbola (emoji and other
symbols) draw what it lacks. The files ship in `fonts/` with their licences (fonts/README.md), so a lone
clone needs no system fonts; reportlab embeds a subset of each TrueType font, only the glyphs a record uses.

reportlab has no per-glyph fallback of its own: a character missing from a paragraph's font prints as a
box. `markup()` (paragraph text) and `embed_drawing_text()` (the figures, laid out with the standard PDF
fonts) therefore pick a font per character: the first of the list that has it. A visible character no
font has (a combining mark included), a control character or a lone surrogate prints as its code point,
`[U+0915]`, so nothing is dropped silently; a joiner or variation selector no font has is invisible
anyway and is left out.

Not done: shaping and bidirectional order. reportlab draws glyphs one after another in logical order, so
Arabic letters don't join, Hebrew and Arabic read left to right, and Indic scripts (which need shaping)
print as code points. Every character is still there for a reader that extracts the text.
"""

import copy
import threading
import unicodedata
from functools import lru_cache
from pathlib import Path
from xml.sax.saxutils import escape

from reportlab.graphics.shapes import Group, String
from reportlab.lib.fonts import addMapping
from reportlab.pdfbase import pdfmetrics, ttfonts
from reportlab.pdfbase.ttfonts import TTFont

FONT_DIR = Path(__file__).resolve().parent / "fonts"
SANS = "EarshotSans"
SANS_BOLD = "EarshotSans-Bold"
CJK = "EarshotCJK"
SYMBOLS = "EarshotSymbols"
FILES = {SANS: "DejaVuSans.ttf", SANS_BOLD: "DejaVuSans-Bold.ttf", CJK: "DroidSansFallback.ttf",
         SYMBOLS: "Symbola_hint.ttf"}
FALLBACKS = (CJK, SYMBOLS)  # tried in this order for a character the text font lacks
MARKS = ("Mn", "Me", "Cf")  # combining marks and format characters: they belong to the glyph before them
FORMAT = "Cf"  # joiners, variation selectors: invisible, so left out when no font has them
MIN_FIGURE_TEXT_SCALE = 0.7  # figure text in fallback fonts shrinks at most this much to keep its space

_lock = threading.Lock()
_coverage: dict[str, frozenset[int]] = {}


def _register(name: str, family: str) -> frozenset[int]:
    font = TTFont(name, str(FONT_DIR / FILES[name]))
    pdfmetrics.registerFont(font)
    if family == name:  # a fallback: its one face also stands for bold and italic
        for bold in (0, 1):
            for italic in (0, 1):
                addMapping(family, bold, italic, name)
    return frozenset(font.face.charToGlyph)


def coverage(name: str) -> frozenset[int]:
    """The code points a font has glyphs for; registers it with reportlab on first use (the CJK font takes
    a tenth of a second to read, so it is read only when a record needs it)."""
    found = _coverage.get(name)
    if found is not None:
        return found
    with _lock:
        if name not in _coverage:
            if name in (SANS, SANS_BOLD):
                regular, bold = _register(SANS, SANS), _register(SANS_BOLD, SANS)
                for italic in (0, 1):
                    addMapping(SANS, 0, italic, SANS)
                    addMapping(SANS, 1, italic, SANS_BOLD)
                # Runs in the text font are drawn regular or bold, so only what both faces have counts.
                _coverage[SANS] = _coverage[SANS_BOLD] = regular & bold
            else:
                _coverage[name] = _register(name, name)
        return _coverage[name]


def _utf16_hex(code: int) -> str:
    data = chr(code).encode("utf-16-be", errors="surrogatepass")
    return data.hex().upper()


def to_unicode_cmap(fontname: str, subset: list[int]) -> str:
    """reportlab's ToUnicode CMap of a font subset (ttfonts.makeToUnicodeCMap), with one fix: a character
    above U+FFFF is written as its UTF-16 surrogate pair. reportlab writes five hex digits (`<1F600>`),
    which PDF readers reject, so emoji could not be copied, searched or checked in a record."""
    return "\n".join([
        "/CIDInit /ProcSet findresource begin", "12 dict begin", "begincmap", "/CIDSystemInfo",
        f"<< /Registry ({fontname})", f"/Ordering ({fontname})", "/Supplement 0", ">> def",
        f"/CMapName /{fontname} def", "/CMapType 2 def", "1 begincodespacerange",
        f"<00> <{len(subset) - 1:02X}>", "endcodespacerange", f"{len(subset)} beginbfchar",
        *[f"<{index:02X}> <{_utf16_hex(code)}>" for index, code in enumerate(subset)],
        "endbfchar", "endcmap", "CMapName currentdict /CMap defineresource pop", "end", "end",
    ])


def register() -> None:
    """Makes the text fonts known to reportlab; call before laying out a record."""
    ttfonts.makeToUnicodeCMap = to_unicode_cmap  # type: ignore[assignment]  # TTFont.addObjects calls it
    coverage(SANS)


def marker(char: str) -> str:
    return f"[U+{ord(char):04X}]"


@lru_cache(maxsize=65536)
def font_for(char: str) -> str | None:
    """The first font that has a glyph for `char`, or None."""
    code = ord(char)
    if code in coverage(SANS):
        return SANS
    for name in FALLBACKS:
        if code in coverage(name):
            return name
    return None


def _printable(char: str) -> str:
    if char == "\t":
        return " "
    if char != "\n" and unicodedata.category(char) in ("Cc", "Cs", "Co", "Cn"):
        return marker(char)  # control character, lone surrogate, private use or unassigned: its code point
    return char


def printable(text: str) -> str:
    """`text` with control characters, lone surrogates and the like as code points (for PDF metadata)."""
    return "".join(_printable(char) for char in text).replace("\n", " ")


def runs(text: str, *, base: str = SANS) -> list[tuple[str, str]]:
    """`text` as (font, piece) runs: the text font `base` (SANS or SANS_BOLD) where it has the glyph, else
    the first fallback that has it. Newlines are kept; see the module docstring for the rest."""
    if text.isascii() and text.isprintable():
        return [(base, text)]  # the common case: DejaVu has every printable ASCII character
    pieces: list[tuple[str, list[str]]] = []
    for original in text:
        char = _printable(original)
        if char == "\n":
            font: str | None = pieces[-1][0] if pieces else base
        elif len(char) > 1:
            font = base
        else:
            font = font_for(char)
            if font == SANS:
                font = base
            category = unicodedata.category(char)
            if category in MARKS and pieces and ord(char) in coverage(pieces[-1][0]):
                font = pieces[-1][0]  # a mark or joiner stays with the glyph it belongs to
            elif font is None and category == FORMAT:
                continue
            if font is None:
                char, font = marker(char), base
        if pieces and pieces[-1][0] == font:
            pieces[-1][1].append(char)
        else:
            pieces.append((font, [char]))
    return [(font, "".join(chars)) for font, chars in pieces]


def markup(text: object, *, base: str = SANS) -> str:
    """Paragraph markup for plain text: escaped, newlines as line breaks, runs in the fonts that have them."""
    value = "" if text is None else str(text)
    parts = []
    for font, piece in runs(value, base=base):
        piece = escape(piece).replace("\n", "<br/>")
        parts.append(piece if font == base else f'<font face="{font}">{piece}</font>')
    return "".join(parts)


def text_width(text: str, *, base: str = SANS, size: float) -> float:
    return sum(pdfmetrics.stringWidth(piece, font, size) for font, piece in runs(text, base=base))


def fit(text: str, *, base: str = SANS, size: float, width: float) -> str:
    """`text`, cut with an ellipsis so it fits `width` points."""
    if text_width(text, base=base, size=size) <= width:
        return text
    low, high = 0, len(text)
    while low < high:  # the longest prefix that fits with the ellipsis
        middle = (low + high + 1) // 2
        if text_width(text[:middle] + "…", base=base, size=size) <= width:
            low = middle
        else:
            high = middle - 1
    return text[:low] + "…"


def draw_text(canvas, x: float, y: float, text: str, *, base: str = SANS, size: float,
              anchor: str = "start") -> None:
    """Draws one line on a canvas, each run in its font; `anchor` is start or end."""
    pieces = runs(text.replace("\n", " "), base=base)
    if anchor == "end":
        x -= sum(pdfmetrics.stringWidth(piece, font, size) for font, piece in pieces)
    for font, piece in pieces:
        canvas.setFont(font, size)
        canvas.drawString(x, y, piece)
        x += pdfmetrics.stringWidth(piece, font, size)


# -- the figures: drawn with the standard PDF fonts (their layout uses those fonts' widths) -------------------

@lru_cache(maxsize=8192)
def _standard_font_draws(font_name: str, char: str) -> bool:
    """Whether a standard (Type 1) font, or the Symbol and ZapfDingbats fonts reportlab substitutes for it,
    has `char`; reportlab prints a box for anything else."""
    font = pdfmetrics.getFont(font_name)
    if isinstance(font, TTFont):
        return ord(char) in coverage(font_name)
    for candidate in (font, *getattr(font, "substitutionFonts", ())):
        try:
            char.encode(candidate.encName)
        except (UnicodeEncodeError, LookupError):
            continue
        return True
    return False


def _string_runs(node: String) -> Group | None:
    text = node.text
    if text.isascii() and text.isprintable():
        return None
    base = SANS_BOLD if "Bold" in node.fontName else SANS
    pieces: list[tuple[str, str]] = []
    other: list[str] = []

    def flush() -> None:
        if other:
            pieces.extend(runs("".join(other).replace("\n", " "), base=base))
            other.clear()

    for char in text:
        if char.isprintable() and _standard_font_draws(node.fontName, char):
            flush()
            if pieces and pieces[-1][0] == node.fontName:
                pieces[-1] = (node.fontName, pieces[-1][1] + char)
            else:
                pieces.append((node.fontName, char))
        else:
            other.append(char)
    flush()
    if all(font == node.fontName for font, _ in pieces):
        return None
    # The figure was laid out with the standard font's widths (a box for each character it lacks); CJK
    # glyphs are wider, so the string shrinks (to 70 % at most) to keep to the space it was given.
    laid_out = pdfmetrics.stringWidth(text, node.fontName, node.fontSize)
    size = node.fontSize
    widths = [pdfmetrics.stringWidth(piece, font, size) for font, piece in pieces]
    if sum(widths) > laid_out > 0:
        size = node.fontSize * max(MIN_FIGURE_TEXT_SCALE, laid_out / sum(widths))
        widths = [pdfmetrics.stringWidth(piece, font, size) for font, piece in pieces]
    offset = {"middle": sum(widths) / 2, "end": sum(widths), "numeric": sum(widths)}.get(node.textAnchor, 0)
    group = Group()
    x = node.x - offset
    for (font, piece), width in zip(pieces, widths, strict=True):
        part = copy.copy(node)
        part.x, part.text, part.fontName, part.fontSize, part.textAnchor = x, piece, font, size, "start"
        group.add(part)
        x += width
    return group


def embed_drawing_text(drawing):
    """Rewrites, in place, each string of a drawing that its standard font can't print into runs, the
    missing characters in the record's fonts; text the standard fonts print stays as laid out."""
    register()
    stack = [drawing]
    while stack:
        group = stack.pop()
        for index, node in enumerate(group.contents):
            if isinstance(node, String):
                replacement = _string_runs(node)
                if replacement is not None:
                    group.contents[index] = replacement
            elif hasattr(node, "contents"):
                stack.append(node)
    return drawing
