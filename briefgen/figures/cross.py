"""Two-way means as a dot plot: one row per level of one group, one marker per level of the other.

Markers differ in colour (Okabe–Ito), shape and fill, so they stay apart on a
grayscale printer. Cells below the size threshold are left out of the chart
and named in the caption.
"""

from __future__ import annotations

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
MAX_SERIES = len(SERIES_MARKERS)


def _trusted_points(
    cells: list[tuple[float, str, CrossCell | None]], serie: str, left_out: list[str]
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
        low = cell.ci_low if cell.ci_low is not None else cell.mean
        high = cell.ci_high if cell.ci_high is not None else cell.mean
        points.append((height, cell.mean, low, high))
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
    cross: CrossTable, label: str, row_name: str, series_name: str, left_out: list[str]
) -> str:
    """What the dots show, and which cells were too small to draw."""
    caption = (
        f"Mean {label[:1].lower() + label[1:]} for each combination of {row_name} and {series_name}, with "
        f"{fmt_level(cross.confidence)} intervals. Rows are sorted by their overall mean."
    )
    if left_out:
        caption += f" Left out, fewer than {cross.min_cell} rows: {', '.join(left_out)}."
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
    alt = f"Dot plot of mean {label.lower()} by {row_name} and {series_name}."
    if top is not None:
        alt += f" Highest: {top.row} with {top.column}, {fmt(top.mean, decimals)}."
    return alt


def cross_chart(
    cross: CrossTable, label: str, decimals: int, names: tuple[str, str]
) -> Chart | None:
    """Means with intervals for every trusted cell; the variable with fewer levels becomes the series."""
    rows, series = cross.rows, cross.columns
    row_name, series_name = names
    transpose = len(series) > len(rows)
    if transpose:
        rows, series = series, rows
        row_name, series_name = series_name, row_name
    if len(series) > MAX_SERIES:
        return None

    def cell(row: str, serie: str):
        return cross.cell(serie, row) if transpose else cross.cell(row, serie)

    margins = {
        m.column if transpose else m.row: m.mean
        for m in (cross.column_margins if transpose else cross.row_margins)
    }
    ordered = sorted(rows, key=lambda r: -(margins.get(r) or 0.0))
    positions = {row: len(ordered) - i for i, row in enumerate(ordered)}
    # Series sit side by side within a row so their intervals never overlap.
    offsets = [(i - (len(series) - 1) / 2) * 0.22 for i in range(len(series))]
    left_out = []
    with themed():
        figure = new_figure(0.9 + 0.36 * max(len(ordered), 2))
        axes = figure.subplots()
        for i, serie in enumerate(series):
            cells = [(positions[row] + offsets[i], row, cell(row, serie)) for row in ordered]
            _draw_series(axes, i, serie, _trusted_points(cells, serie, left_out))
        axes.set_yticks([positions[r] for r in ordered], [short_label(r) for r in ordered])
        axes.grid(axis="y", visible=False)
        axes.set_xlabel(f"Mean {label[:1].lower() + label[1:]}")
        axes.legend(
            title=series_name,
            loc="lower right",
            fontsize=8,
            title_fontsize=8,
            frameon=True,
            framealpha=0.9,
            edgecolor="none",
        )
        svg = to_svg(figure)
    return Chart(
        key=f"cross-{cross.row_variable}-{cross.column_variable}",
        title=f"{label} by {row_name} and {series_name}",
        svg=svg,
        alt=_alt(cross, label, decimals, row_name, series_name),
        caption=_caption(cross, label, row_name, series_name, left_out),
    )
