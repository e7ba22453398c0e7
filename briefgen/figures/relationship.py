"""Target against one predictor: sampled points, the fitted line and its band.

Points come from the seeded sample (at most a few thousand), so file size does
not grow with the data; the line and band come from the full-data fit.
"""

from __future__ import annotations

import numpy as np
from matplotlib.colors import to_rgba

from briefgen.figures.cross import SERIES_COLOURS, SERIES_MARKERS
from briefgen.figures.theme import (
    BAND,
    LINE,
    MUTED,
    POINT,
    POINT_ALPHA,
    SHORTENED_NOTE,
    Chart,
    new_figure,
    short_label,
    shortened,
    themed,
    to_svg,
)
from briefgen.numbers import fmt, fmt_count, fmt_level
from briefgen.stats.regression import RegressionFit
from briefgen.stats.relationships import GroupSlopes
from briefgen.stats.sample import Sample

# Solid, dashed, dotted, dash-dot and two longer patterns: one per level, beside its colour.
LEVEL_LINESTYLES = (
    "-",
    (0, (5, 2)),
    (0, (1, 1.5)),
    (0, (5, 2, 1, 2)),
    (0, (8, 3)),
    (0, (3, 1, 1, 1)),
)


def relationship_chart(
    fit: RegressionFit,
    sample: Sample,
    x_label: str,
    y_label: str,
    slope_decimals: int,
    confidence: float,
    by_group: GroupSlopes | None = None,
    group_label: str | None = None,
    height: float = 3.1,
) -> Chart | None:
    """Scatter of the sample with the least-squares line and its confidence band.

    With ``by_group`` (a group variable that reverses or removes the slope) the points
    take that group's colour and marker and each level gets its own line, drawn over
    its own range; the overall line stays, dashed, for comparison.
    """
    if by_group is not None and by_group.group in sample.groups:
        return _by_group_chart(
            fit,
            sample,
            (x_label, y_label),
            by_group,
            group_label or by_group.group,
            slope_decimals,
            height + 0.2,
        )
    if fit.slope is None or fit.residual_sd is None:
        return None
    xs = np.array([np.nan if v is None else v for v in sample.x[fit.predictor]], dtype=float)
    ys = np.array(sample.y, dtype=float)
    keep = np.isfinite(xs) & np.isfinite(ys)
    grid = np.linspace(fit.x_min, fit.x_max, 120)
    bands = np.array([fit.band(x, confidence) for x in grid])
    with themed():
        figure = new_figure(height)
        axes = figure.subplots()
        axes.scatter(
            xs[keep], ys[keep], s=5, color=POINT, alpha=POINT_ALPHA, linewidths=0, rasterized=True
        )
        # The light fill shows the band; its edge in the line's colour gives it 3:1 on white.
        axes.fill_between(
            grid,
            bands[:, 0],
            bands[:, 1],
            facecolor=to_rgba(BAND, 0.8),
            edgecolor=LINE,
            linewidth=0.5,
        )
        axes.plot(grid, fit.intercept + fit.slope * grid, color=LINE, linewidth=2)
        axes.set_xlabel(x_label)
        axes.set_ylabel(y_label)
        svg = to_svg(figure)
    shown = int(keep.sum())
    points = (
        f"all {fmt_count(shown)} rows"
        if shown >= fit.n
        else f"a seeded random sample of {fmt_count(shown)} of the {fmt_count(fit.n)} rows"
    )
    caption = (
        f"{y_label} against {x_label.lower()}. Points: {points}. Line: least-squares fit on all "
        f"{fmt_count(fit.n)} rows with both values; shaded: {fmt_level(confidence)} confidence band of the line. "
        f"Slope {fmt(fit.slope, slope_decimals)} per unit, R² {fmt(fit.r_squared, 2)}."
    )
    alt = (
        f"Scatter plot of {y_label.lower()} against {x_label.lower()} with a rising"
        if fit.slope > 0
        else f"Scatter plot of {y_label.lower()} against {x_label.lower()} with a falling"
    ) + f" fitted line; each unit goes with {fmt(fit.slope, slope_decimals)} more on average."
    return Chart(
        key=f"fit-{fit.predictor}",
        title=f"{y_label} against {x_label}",
        svg=svg,
        alt=alt,
        caption=caption,
    )


def _by_group_chart(
    fit: RegressionFit,
    sample: Sample,
    labels: tuple[str, str],
    slopes: GroupSlopes,
    group_label: str,
    slope_decimals: int,
    height: float = 3.3,
) -> Chart | None:
    """Points and a line per level of the confounding group; colour and marker both differ."""
    if fit.slope is None:
        return None
    x_label, y_label = labels
    xs = np.array([np.nan if v is None else v for v in sample.x[fit.predictor]], dtype=float)
    ys = np.array(sample.y, dtype=float)
    levels = np.array(sample.groups[slopes.group], dtype=object)
    drawn = [s for s in slopes.levels if s.slope is not None][: len(SERIES_MARKERS)]
    with themed():
        figure = new_figure(height)
        axes = figure.subplots()
        for index, level in enumerate(drawn):
            colour, marker = SERIES_COLOURS[index], SERIES_MARKERS[index]
            keep = (levels == level.level) & np.isfinite(xs) & np.isfinite(ys)
            axes.scatter(
                xs[keep],
                ys[keep],
                s=7,
                marker=marker,
                color=colour,
                # Opaque: reddish purple reaches 3:1 on white only at full strength.
                alpha=1.0,
                linewidths=0,
                rasterized=True,
            )
            grid = np.array([level.x_min, level.x_max])
            # A line style and the level's marker at each end as well as a colour, so the
            # levels stay apart in grayscale and for colour-blind readers.
            axes.plot(
                grid,
                level.intercept + level.slope * grid,
                color=colour,
                linewidth=2,
                linestyle=LEVEL_LINESTYLES[index % len(LEVEL_LINESTYLES)],
                marker=marker,
                markersize=5,
                markerfacecolor=colour if index % 2 == 0 else "white",
                label=short_label(level.level),
            )
        grid = np.array([fit.x_min, fit.x_max])
        axes.plot(
            grid,
            fit.intercept + fit.slope * grid,
            color=MUTED,
            linewidth=1.2,
            linestyle=(0, (2, 4)),
            label="all rows",
        )
        axes.set_xlabel(x_label)
        axes.set_ylabel(y_label)
        axes.legend(title=group_label, frameon=False, loc="best")
        svg = to_svg(figure)
    caption = (
        f"{y_label} against {x_label.lower()}, points and lines by {group_label} (colour and "
        f"marker). Lines: least-squares fit within each level (a style and marker per level); finely dashed: one line through all "
        f"rows, which mixes the levels. Points: "
        + (
            f"all {fmt_count(sample.size)} rows."
            if sample.size >= sample.rows_available
            else f"a seeded random sample of {fmt_count(sample.size)} of the {fmt_count(sample.rows_available)} rows."
        )
        + (f" {SHORTENED_NOTE}" if shortened(level.level for level in drawn) else "")
    )
    # Written from the fitted slopes, so a screen reader hears the numbers the lines show.
    within = "; ".join(f"{level.level} {fmt(level.slope, slope_decimals)}" for level in drawn)
    alt = (
        f"Scatter plot of {y_label.lower()} against {x_label.lower()} by {group_label}, one "
        f"fitted line per level. Slope per unit within each level: {within}. Through all rows "
        f"together: {fmt(fit.slope, slope_decimals)}."
    )
    return Chart(
        key=f"fit-{fit.predictor}",
        title=f"{y_label} against {x_label}, by {group_label}",
        svg=svg,
        alt=alt,
        caption=caption,
    )
