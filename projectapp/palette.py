"""Earshot's colours in one place. The stylesheet's custom properties (earshot.css `:root`, listed in
`CSS_VARIABLES`) mirror them; the drawings (`figures/`) and the PDF record (`signoff/pdf.py`) take them from
here, so the page, the SVG and the PDF agree.

Every pairing the app draws is listed in `PAIRINGS` with the contrast WCAG 2.2 AA asks of it (1.4.3: 4.5:1
for text, 3:1 for large text; 1.4.11: 3:1 for the edges of controls, focus indicators and the lines and
marks of a drawing that carry meaning). `tests/web/test_palette.py` computes each ratio from the WCAG
formula and checks the stylesheet against `CSS_VARIABLES`. A new colour, or an old one on a new
background, gets its row there.

Colour never carries meaning alone: severities are also written out (badges, headings, legends) and the
drawing's lines differ by dash as well as by hue.
"""

# -- surfaces -----------------------------------------------------------------------------------------------
PAPER = "#f7f5f0"  # the page behind the cards
CARD = "#ffffff"
HEAD = "#eef2f4"  # table heads, quiet chips
MASTHEAD = "#1f2a33"  # the header bar (the ink colour)

# -- text and lines -------------------------------------------------------------------------------------------
INK = "#1f2a33"
MUTED = "#52616d"  # secondary text: on every surface and tint above 5:1
LINE = "#c9d3da"  # separators and grid lines, decorative: the text or the control's own edge carries the meaning
CONTROL_EDGE = "#6f7f8c"  # the edge of inputs, selects and plain buttons (1.4.11: 3:1 on card, paper and head)
MASTHEAD_TEXT = "#dfe7ec"
WORDMARK_MARK = "#7fd1c7"

# -- meaning ---------------------------------------------------------------------------------------------------
ACCENT = "#1d6f6a"  # links, primary buttons, "measured"
ACCENT_SOFT = "#e3f1ef"
BLOCKER = "#b3261e"
BLOCKER_SOFT = "#fbe9e7"
WARNING = "#8d5600"  # a deep amber: the earlier #b26a00 reached only 4.23:1 on white and 3.86:1 on its tint
WARNING_SOFT = "#fdf0d8"
NOTE = "#3d5a80"
NOTE_SOFT = "#e8eef6"
OK = "#27704a"

# -- focus -------------------------------------------------------------------------------------------------------
FOCUS = "#1d4f91"  # the focus ring on light surfaces: a blue no other meaning uses
FOCUS_ON_DARK = "#ffd166"  # the focus ring in the header bar

# -- the drawings (figures/placement.py, figures/charts.py) ---------------------------------------------------
BOARD = "#e6efe9"  # the ground plane in the placement drawing
BOARD_EDGE = "#5f8a6c"
ONE_ANTENNA_FILL = "#7b8a96"  # coverage bars of the one-antenna case: quieter than the accent, still 3:1 on white
WHITE = "#ffffff"
PLATE_ALPHA = 0.86  # white plates behind the drawings' labels
NEAR_FIELD_ALPHA = 0.07  # MUTED over the near-field disc
BAND_TINT_ALPHA = {"UL": 0.13, "DL": 0.13, "TDD": 0.16}  # ACCENT, NOTE, MUTED behind a chart's band ranges

SEVERITY = {"blocker": BLOCKER, "warning": WARNING, "note": NOTE}
SEVERITY_SOFT = {"blocker": BLOCKER_SOFT, "warning": WARNING_SOFT, "note": NOTE_SOFT}

CSS_VARIABLES = {
    "--ink": INK, "--muted": MUTED, "--line": LINE, "--control-edge": CONTROL_EDGE, "--paper": PAPER,
    "--card": CARD, "--head": HEAD, "--masthead": MASTHEAD, "--masthead-text": MASTHEAD_TEXT,
    "--wordmark-mark": WORDMARK_MARK, "--accent": ACCENT, "--accent-ink": WHITE, "--accent-soft": ACCENT_SOFT,
    "--blocker": BLOCKER, "--blocker-soft": BLOCKER_SOFT, "--warning": WARNING, "--warning-soft": WARNING_SOFT,
    "--note": NOTE, "--note-soft": NOTE_SOFT, "--ok": OK, "--focus": FOCUS, "--focus-on-dark": FOCUS_ON_DARK,
}

TEXT = 4.5  # WCAG 2.2 1.4.3, normal text
NON_TEXT = 3.0  # WCAG 2.2 1.4.11 (controls, focus, graphics) and 1.4.3 for large text


def _over(colour: str, alpha: float, under: str = WHITE) -> str:
    """`colour` at `alpha` over `under`, as the eye sees it (the drawings' tints and plates)."""
    top, bottom = (tuple(int(value[i:i + 2], 16) for i in (1, 3, 5)) for value in (colour, under))
    return "#" + "".join(f"{round(a * alpha + b * (1 - alpha)):02x}" for a, b in zip(top, bottom, strict=True))


PLATE = _over(WHITE, PLATE_ALPHA, INK)  # the worst case: a plate over an ink line
NEAR_FIELD = _over(MUTED, NEAR_FIELD_ALPHA)
BAND_TINTS = {kind: _over({"UL": ACCENT, "DL": NOTE, "TDD": MUTED}[kind], alpha)
              for kind, alpha in BAND_TINT_ALPHA.items()}

# (foreground, background, the ratio it needs, where it is drawn)
PAIRINGS: list[tuple[str, str, float, str]] = [
    *[(INK, surface, TEXT, "body text") for surface in (PAPER, CARD, HEAD)],
    *[(MUTED, surface, TEXT, "secondary text on surfaces and tints")
      for surface in (PAPER, CARD, HEAD, ACCENT_SOFT, BLOCKER_SOFT, WARNING_SOFT, NOTE_SOFT)],
    *[(ACCENT, surface, TEXT, "links, chips, 'measured', dispositions") for surface in (PAPER, CARD, ACCENT_SOFT)],
    (WHITE, ACCENT, TEXT, "primary buttons"),
    *[(colour, surface, TEXT, f"{name} words: headings, counts, dispositions")
      for name, colour in SEVERITY.items() for surface in (CARD, PAPER, SEVERITY_SOFT[name])],
    *[(WHITE, colour, TEXT, f"{name} badges") for name, colour in SEVERITY.items()],
    (INK, BLOCKER_SOFT, TEXT, "problem boxes"), (INK, WARNING_SOFT, TEXT, "what-if box"),
    (INK, NOTE_SOFT, TEXT, "notices"), (INK, ACCENT_SOFT, TEXT, "actions, flash messages"),
    (OK, CARD, TEXT, "'saved', 'ready to sign'"), (OK, ACCENT_SOFT, NON_TEXT, "verdict edge"),
    (MASTHEAD_TEXT, MASTHEAD, TEXT, "header links"), (WORDMARK_MARK, MASTHEAD, NON_TEXT, "wordmark"),
    *[(CONTROL_EDGE, surface, NON_TEXT, "edges of inputs and buttons") for surface in (CARD, PAPER, HEAD)],
    *[(FOCUS, surface, NON_TEXT, "focus ring")
      for surface in (PAPER, CARD, HEAD, ACCENT_SOFT, BLOCKER_SOFT, WARNING_SOFT, NOTE_SOFT)],
    (FOCUS_ON_DARK, MASTHEAD, NON_TEXT, "focus ring in the header"),
    # the placement drawing and the charts (the same drawings in the PDF)
    *[(colour, surface, NON_TEXT, f"{name} pair and threshold lines")
      for name, colour in {**SEVERITY, "no finding": OK}.items() for surface in (WHITE, BOARD, NEAR_FIELD)],
    *[(INK, surface, TEXT, "drawing labels") for surface in (WHITE, BOARD, PLATE)],
    *[(MUTED, surface, TEXT, "drawing scales and captions") for surface in (WHITE, BOARD, PLATE)],
    (BOARD_EDGE, BOARD, NON_TEXT, "ground-plane edge"), (BOARD_EDGE, WHITE, NON_TEXT, "ground-plane edge"),
    (MUTED, WHITE, NON_TEXT, "near-field and quarter-wave circles"),
    *[(colour, WHITE, TEXT, "band labels above a chart") for colour in (ACCENT, NOTE, MUTED, INK)],
    *[(colour, surface, NON_TEXT, "chart curves and thresholds over the band tints")
      for colour in (NOTE, ACCENT, INK, OK, MUTED, BLOCKER, WARNING) for surface in (WHITE, *BAND_TINTS.values())],
    *[(colour, PLATE, TEXT, "threshold labels") for colour in SEVERITY.values()],
    (ONE_ANTENNA_FILL, WHITE, NON_TEXT, "coverage bars, one antenna"),
    (ACCENT, WHITE, NON_TEXT, "coverage bars, two antennas"),
]
