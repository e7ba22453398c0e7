"""Two-way means as a dot plot: one row per level of one group, one marker per level of the other.

Markers differ in colour (Okabe–Ito), shape and fill, so they stay apart on a
grayscale printer. Cells below the size threshold are left out of the chart
and named in the caption.
"""

from __future__ import annotations

from briefgen.figures.theme import OKABE_ITO, Chart, new_figure, themed, to_svg
from briefgen.numbers import fmt
from briefgen.stats.twoway import CrossTable

# Dark-to-light order keeps neighbouring series apart in lightness as well as hue.
SERIES_COLOURS = (
    OKABE_ITO["blue"],
    OKABE_ITO["orange"],
    OKABE_ITO["black"],
    OKABE_ITO["reddish_purple"],
    OKABE_ITO["bluish_green"],
    OKABE_ITO["vermillion"],
)
SERIES_MARKERS = ("o", "s", "D", "^", "v", "P")
MAX_SERIES = len(SERIES_MARKERS)


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
    offsets = [(i - (len(series) - 1) / 2) * 0.22 for i in range(len(series))]
    left_out = []
    with themed():
        figure = new_figure(0.9 + 0.36 * max(len(ordered), 2))
        axes = figure.subplots()
        for i, serie in enumerate(series):
            ys, xs, lows, highs = [], [], [], []
            for row in ordered:
                c = cell(row, serie)
                if c is None or c.mean is None:
                    continue
                if c.too_small:
                    left_out.append(f"{row} with {serie} (n = {c.n})")
                    continue
                ys.append(positions[row] + offsets[i])
                xs.append(c.mean)
                lows.append(c.ci_low if c.ci_low is not None else c.mean)
                highs.append(c.ci_high if c.ci_high is not None else c.mean)
            colour = SERIES_COLOURS[i]
            axes.hlines(ys, lows, highs, color=colour, linewidth=1.4)
            axes.plot(
                xs,
                ys,
                SERIES_MARKERS[i],
                color=colour,
                markersize=5,
                label=serie,
                markerfacecolor=colour if i % 2 == 0 else "white",
                markeredgewidth=1.2,
            )
        axes.set_yticks([positions[r] for r in ordered], ordered)
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
    caption = (
        f"Mean {label[:1].lower() + label[1:]} for each combination of {row_name} and {series_name}, with "
        f"{cross.confidence:.0%} intervals. Rows are sorted by their overall mean."
    )
    if left_out:
        caption += f" Left out, fewer than {cross.min_cell} rows: {', '.join(left_out)}."
    top = max(
        (c for c in cross.cells if c.row and c.column and c.mean is not None and not c.too_small),
        key=lambda c: c.mean,
        default=None,
    )
    alt = f"Dot plot of mean {label.lower()} by {row_name} and {series_name}."
    if top is not None:
        alt += f" Highest: {top.row} with {top.column}, {fmt(top.mean, decimals)}."
    key = f"cross-{cross.row_variable}-{cross.column_variable}"
    return Chart(
        key=key, title=f"{label} by {row_name} and {series_name}", svg=svg, alt=alt, caption=caption
    )
