"""Two-way means as a dot plot: one row per level of one group, one marker per level of the other.

Markers differ in colour (Okabe–Ito), shape and fill, so they stay apart on a
grayscale printer. Cells below the size threshold are left out of the chart
and named in the caption.
"""

from __future__ import annotations

from dataclasses import dataclass

from briefgen.figures.rules import CATEGORICAL_AXIS, NATURAL_ORDER, level_order
from briefgen.figures.theme import (
    MUTED,
    OKABE_ITO,
    SHORTENED_NOTE,
    Chart,
    new_figure,
    short_label,
    shortened,
    themed,
    to_svg,
)
from briefgen.numbers import fmt, fmt_level
from briefgen.present.bounds import cut_note, drawn_interval
from briefgen.present.wording import in_sentence
from briefgen.stats.core.frame import ShownLevels
from briefgen.stats.twoway import CrossCell, CrossTable

# The five Okabe-Ito colours that reach 3:1 on white (orange, sky blue and yellow do not,
# WCAG 2.1, 1.4.11) and a dark grey. Under simulated deuteranomaly, protanomaly and
# tritanomaly the closest pair stays 14.8, 14.0 and 11.7 apart in CAM02-UCS.
SERIES_COLOURS = (
    OKABE_ITO["blue"],
    OKABE_ITO["vermillion"],
    OKABE_ITO["black"],
    OKABE_ITO["reddish_purple"],
    OKABE_ITO["bluish_green"],
    MUTED,
)
SERIES_MARKERS = ("o", "s", "D", "^", "v", "P")
MAX_SERIES = len(SERIES_MARKERS)  # rules.MAX_DOT_SERIES


def _trusted_points(
    cells: list[tuple[float, str, CrossCell | None]],
    serie: str,
    left_out: list[str],
    floor: float | None = None,
) -> list[tuple[float, float, float, float]]:
    """(height, mean, interval low, interval high) for one series' cells large enough to trust.

    Cells below the size threshold are named in ``left_out`` for the caption instead.
    """
    points = []
    for height, row, cell in cells:
        if cell is None or cell.mean is None:
            continue
        if cell.too_small:
            left_out.append(f"{row} with {serie} (n = {cell.n})")
            continue
        points.append((height, cell.mean, *drawn_interval(cell, cell.mean, floor)))
    return points


def _draw_series(
    axes, index: int, serie: str, points: list[tuple[float, float, float, float]]
) -> None:
    """One series' means and intervals, in its own colour, shape and fill."""
    ys = [p[0] for p in points]
    xs = [p[1] for p in points]
    lows = [p[2] for p in points]
    highs = [p[3] for p in points]
    colour = SERIES_COLOURS[index]
    axes.hlines(ys, lows, highs, color=colour, linewidth=1.4)
    axes.plot(
        xs,
        ys,
        SERIES_MARKERS[index],
        color=colour,
        markersize=5,
        label=short_label(serie),
        # Alternate filled and hollow markers so neighbours differ even in grayscale.
        markerfacecolor=colour if index % 2 == 0 else "white",
        markeredgewidth=1.2,
    )


def _caption(
    cross: CrossTable,
    label: str,
    row_name: str,
    series_name: str,
    left_out: list[str],
    order: str,
    dropped: list[str],
) -> str:
    """What the dots show, their order, and which cells and rows were too small to draw."""
    sorted_by = (
        "Rows are in their natural order."
        if order == NATURAL_ORDER
        else "Rows are sorted by their overall mean, highest at the top."
    )
    caption = (
        f"Mean {in_sentence(label)} for each combination of {row_name} and {series_name}, with "
        f"{fmt_level(cross.confidence)} intervals. {sorted_by}"
    )
    if left_out:
        caption += f" Left out, fewer than {cross.min_cell} rows: {', '.join(left_out)}."
    if dropped:
        caption += f" Not drawn, no combination large enough: {', '.join(dropped)}."
    if shortened((*cross.rows, *cross.columns)):
        caption += f" {SHORTENED_NOTE}"
    return caption


def _alt(cross: CrossTable, label: str, decimals: int, row_name: str, series_name: str) -> str:
    """Text alternative for screen readers: the highest trusted cell."""
    top = max(
        (c for c in cross.cells if c.row and c.column and c.mean is not None and not c.too_small),
        key=lambda c: c.mean,
        default=None,
    )
    alt = f"Dot plot of mean {in_sentence(label)} by {row_name} and {series_name}."
    if top is not None:
        alt += f" Highest: {top.row} with {top.column}, {fmt(top.mean, decimals)}."
    return alt


def _kind(shown: ShownLevels | None) -> tuple[bool, str | None]:
    """(numbers in the data, "Other" label) of a group variable, for ``rules.level_order``."""
    return (shown.numeric, shown.other_label) if shown is not None else (False, None)


def _trusted(cell: CrossCell | None) -> bool:
    return cell is not None and cell.mean is not None and not cell.too_small


@dataclass(frozen=True, slots=True)
class Orientation:
    """A two-way table turned so that the variable with more levels runs down the chart.

    ``down``/``across`` are the levels, ``names`` and ``shown`` follow them; ``cell``
    reads a cell by (down, across) whichever way the table was stored.
    """

    cross: CrossTable
    down: tuple[str, ...]
    across: tuple[str, ...]
    names: tuple[str, str]
    shown: tuple[ShownLevels | None, ShownLevels | None]
    transpose: bool

    def cell(self, down: str, across: str) -> CrossCell | None:
        return self.cross.cell(across, down) if self.transpose else self.cross.cell(down, across)

    def margin_means(self) -> dict[str, float | None]:
        """Mean of each level running down, from the table's margins."""
        margins = self.cross.column_margins if self.transpose else self.cross.row_margins
        return {m.column if self.transpose else m.row: m.mean for m in margins}


def orient(
    cross: CrossTable,
    names: tuple[str, str],
    shown: tuple[ShownLevels | None, ShownLevels | None] = (None, None),
) -> Orientation:
    """The table with its longer variable down: rows read better than a crowded axis."""
    if len(cross.columns) > len(cross.rows):
        return Orientation(
            cross, cross.columns, cross.rows, names[::-1], (shown[1], shown[0]), True
        )
    return Orientation(cross, cross.rows, cross.columns, names, shown, False)


@dataclass(frozen=True, slots=True)
class DotLayout:
    """What a two-way dot plot draws: rows top to bottom, series, and what it leaves out.

    ``order`` is the rule that ordered the rows (``rules.NATURAL_ORDER`` or
    ``rules.VALUE_ORDER``); ``dropped`` names rows and series with no cell large enough.
    """

    rows: tuple[str, ...]
    series: tuple[str, ...]
    row_name: str
    series_name: str
    transpose: bool
    order: str
    dropped: tuple[str, ...]


def dot_layout(
    cross: CrossTable,
    names: tuple[str, str],
    shown: tuple[ShownLevels | None, ShownLevels | None] = (None, None),
) -> DotLayout | None:
    """Rows and series of the dot plot: the variable with fewer levels is the series.

    Rows follow ``rules.level_order``: natural order for numeric or numbered levels
    (``shown`` says which variables hold numbers in the data, and their "Other"
    level, which goes last), else by overall mean. A row or series with no trusted
    cell is not drawn, so no row is empty and the legend lists only series that appear.
    None when nothing can be drawn or there are more series than markers.
    """
    turned = orient(cross, names, shown)
    rows, series, cell = turned.down, turned.across, turned.cell
    (row_name, series_name), (row_shown, series_shown) = turned.names, turned.shown
    drawn_rows = [r for r in rows if any(_trusted(cell(r, s)) for s in series)]
    drawn_series = [s for s in series if any(_trusted(cell(r, s)) for r in rows)]
    if not drawn_rows or len(drawn_series) > MAX_SERIES:
        return None
    dropped = [f"{row_name} {r}" for r in rows if r not in drawn_rows]
    dropped += [f"{series_name} {s}" for s in series if s not in drawn_series]
    ordered, order = level_order(drawn_rows, turned.margin_means(), *_kind(row_shown))
    # Series keep their natural order, else label order (no values given: ties by label).
    series_order, _ = level_order(drawn_series, {}, *_kind(series_shown))
    return DotLayout(
        ordered, series_order, row_name, series_name, turned.transpose, order, tuple(dropped)
    )


def cross_chart(
    cross: CrossTable,
    label: str,
    decimals: int,
    names: tuple[str, str],
    shown: tuple[ShownLevels | None, ShownLevels | None] = (None, None),
    floor: float | None = None,
) -> Chart | None:
    """Means with intervals for every trusted cell, laid out by ``dot_layout``.

    ``floor`` cuts the intervals where the target cannot go (``present.bounds``).
    """
    layout = dot_layout(cross, names, shown)
    if layout is None:
        return None
    ordered, series_order = layout.rows, layout.series
    row_name, series_name, order = layout.row_name, layout.series_name, layout.order
    dropped = list(layout.dropped)

    def cell(row: str, serie: str):
        return cross.cell(serie, row) if layout.transpose else cross.cell(row, serie)

    # First row at the top: matplotlib counts positions upwards from the bottom.
    positions = {row: len(ordered) - i for i, row in enumerate(ordered)}
    # Series sit side by side within a row so their intervals never overlap.
    offsets = [(i - (len(series_order) - 1) / 2) * 0.22 for i in range(len(series_order))]
    left_out = []
    with themed():
        figure = new_figure(0.9 + 0.36 * max(len(ordered), 2))
        axes = figure.subplots()
        for i, serie in enumerate(series_order):
            cells = [(positions[row] + offsets[i], row, cell(row, serie)) for row in ordered]
            _draw_series(axes, i, serie, _trusted_points(cells, serie, left_out, floor))
        axes.set_yticks([positions[r] for r in ordered], [short_label(r) for r in ordered])
        axes.grid(axis="y", visible=False)
        axes.set_xlabel(f"Mean {in_sentence(label)}")
        # Outside the plot, so it never covers a dot.
        axes.legend(
            title=series_name,
            loc="upper left",
            bbox_to_anchor=(1.01, 1.0),
            fontsize=8,
            title_fontsize=8,
            frameon=False,
        )
        svg = to_svg(figure)
    return Chart(
        key=f"cross-{cross.row_variable}-{cross.column_variable}",
        title=f"{label} by {row_name} and {series_name}",
        svg=svg,
        alt=_alt(cross, label, decimals, row_name, series_name),
        caption=_caption(cross, label, row_name, series_name, left_out, order, dropped)
        + cut_note((c for c in cross.cells if not c.too_small), floor),
        rules=(CATEGORICAL_AXIS, order),
    )
