"""Palette, fonts and sizes shared by every chart kind.

Figures are drawn at the size they print (A4 text width), so 8 pt in the theme
is 8 pt on paper. Colours are Okabe & Ito (2008). Not all of them reach 3:1 on white
(WCAG 2.1, 1.4.11): orange 2.25:1, sky blue 2.31:1 and yellow 1.32:1 fail, so marks use
the other five and a dark grey (figures/review.py checks every figure during a build).
"""

from __future__ import annotations

import base64
import io
import math
import re
import textwrap
import warnings
from contextlib import contextmanager
from dataclasses import dataclass

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from briefgen.figures import review  # noqa: E402

# Okabe & Ito (2008), "Color Universal Design".
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
INK = "#1a1a1a"
MUTED = "#595959"  # 7:1 on white: text-safe gray
BOX_FILL = "#cfe3f1"  # light tint of Okabe-Ito blue; the box edge carries the contrast
LINE = OKABE_ITO["blue"]
ACCENT = OKABE_ITO["vermillion"]
# Vermillion reaches 3.87:1 on white: enough for a line, not for text (4.5:1, WCAG 2.1,
# 1.4.3). Text beside an accent line takes the same hue darkened to 4.5:1.
ACCENT_TEXT = "#c25600"
BAND = "#9ecae9"  # a light fill; the band's edge in LINE carries its 3:1
# A sampled point at POINT_ALPHA still reaches 3:1 on white on its own (3.35:1).
POINT = "#404040"
POINT_ALPHA = 0.6

TEXT_WIDTH_IN = 6.7  # A4 (210 mm) less 2 × 20 mm margins ≈ 170 mm
# Page 1's chart still fits under its findings on A4 and Letter (measured on the demo: about
# 80 mm are left below eight findings and the family sentence).
LEAD_HEIGHT_IN = 2.4
# One row per level in charts by group: 0.34 in in a section; on page 1 rows close up, but
# never below 0.15 in (11 pt), which still leaves room between 8 pt level names.
ROW_IN = 0.34
COMPACT_ROW_MIN_IN = 0.15
CHART_FRAME_IN = 0.9  # titles, tick labels and the axis label around the rows
MIN_FONT_PT = 8

RC = {
    "font.family": "DejaVu Sans",
    "font.size": 8.5,
    "axes.titlesize": 9.5,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.labelsize": 8.5,
    "axes.edgecolor": MUTED,
    "axes.labelcolor": INK,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": "#e3e3e3",
    "grid.linewidth": 0.6,
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "xtick.color": INK,
    "ytick.color": INK,
    "legend.fontsize": 8,
    "legend.frameon": False,
    "svg.fonttype": "none",  # keep text as text: searchable and read aloud in the PDF
    "svg.hashsalt": "briefgen",  # stable element ids, so builds are byte-identical
    # Level names and labels are data text: "$5 to $10" is a price range, not math markup.
    "text.parse_math": False,
    "figure.dpi": 100,
}


@dataclass(frozen=True, slots=True)
class Chart:
    """A drawn figure: SVG text plus the words that travel with it."""

    key: str
    title: str
    svg: str
    alt: str
    caption: str
    # Names of the chart-choice rules that shaped it (briefgen.figures.rules), for stats.json.
    rules: tuple[str, ...] = ()
    # Values marked past the drawn edge of a box axis (box plots only), for stats.json.
    past_edge: int | None = None

    @property
    def data_uri(self) -> str:
        encoded = base64.b64encode(self.svg.encode("utf-8")).decode("ascii")
        return f"data:image/svg+xml;base64,{encoded}"


LABEL_LINE_CHARACTERS = 26  # a level name on an axis or in a legend: two lines at most
LABEL_LINES = 2


def short_label(text: str) -> str:
    """A level name as a chart label: wrapped to two short lines, cut with "…" beyond.

    A 60-character name drawn whole squeezes the panels off the figure; the caption or
    the table beside the chart gives the name in full.
    """
    text = str(text)
    lines = textwrap.wrap(text, LABEL_LINE_CHARACTERS, break_long_words=True) or [text]
    if len(lines) > LABEL_LINES:
        lines = lines[:LABEL_LINES]
        lines[-1] = lines[-1][: LABEL_LINE_CHARACTERS - 1].rstrip() + "…"
    return "\n".join(lines)


def shortened(texts) -> bool:
    """Whether any of ``texts`` loses characters as a chart label (for the caption)."""
    return any(short_label(t).endswith("…") for t in texts)


SHORTENED_NOTE = "Long names are shortened in the chart; the table gives them in full."


@contextmanager
def themed():
    """Apply the theme without leaking it into the caller's matplotlib state."""
    with matplotlib.rc_context(RC):
        yield


def rows_height(levels: int, row_in: float = ROW_IN) -> float:
    """Height of a chart with one row per level (at least two rows, so it never looks cut)."""
    return CHART_FRAME_IN + row_in * max(levels, 2)


def compact_row_in(levels: int) -> float | None:
    """Row height that fits ``levels`` rows into page 1's chart, or None when they cannot fit."""
    # Rounded down to a thousandth of an inch, so the rows never add up past the limit.
    row_in = min(
        ROW_IN, math.floor(1000 * (LEAD_HEIGHT_IN - CHART_FRAME_IN) / max(levels, 2)) / 1000
    )
    return row_in if row_in >= COMPACT_ROW_MIN_IN else None


def new_figure(height_in: float, width_in: float = TEXT_WIDTH_IN) -> Figure:
    """An explicit Figure (no pyplot state), sized as it will print."""
    return Figure(figsize=(width_in, height_in), layout="constrained")


def to_svg(figure: Figure) -> str:
    """The figure as SVG text; during a build it is reviewed first (figures/review.py)."""
    buffer = io.StringIO()
    # dpi only affects rasterized artists (dense scatter points), keeping files small.
    with warnings.catch_warnings():
        # Labels in scripts the bundled font lacks (e.g. CJK) render as boxes; the text
        # itself stays in the SVG and the HTML, so the console warning is silenced.
        warnings.filterwarnings("ignore", message="Glyph .* missing from font")
        figure.savefig(buffer, format="svg", metadata={"Date": None}, dpi=200)
    # The review walks the Figure's artists, not the SVG text, once savefig has laid it out.
    checked = (
        review.review_figure(figure, TEXT_WIDTH_IN, MIN_FONT_PT, drawn=True)
        if review.active()
        else None
    )
    plt.close(figure)
    svg = _stable_ids(_XML_INVALID.sub("", buffer.getvalue()))
    if checked is not None:
        review.record(svg, checked)
    return svg


# Characters XML 1.0 forbids; one in a label (a column name typed with an escape in the
# YAML) would make the SVG unreadable and the figure vanish from the PDF.
_XML_INVALID = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


_CLIP_ID = re.compile(r'id="(p[0-9a-f]{10})"')


def _stable_ids(svg: str) -> str:
    """Number clip-path ids in order of appearance.

    matplotlib derives some clip ids from object addresses, which change from run to
    run even with a fixed svg.hashsalt; renumbering makes the bytes repeatable.
    """
    for number, old in enumerate(dict.fromkeys(_CLIP_ID.findall(svg)), start=1):
        svg = svg.replace(old, f"clip{number}")
    return svg
