"""Target against one predictor: sampled points, the fitted line and its band.

Points come from the seeded sample (at most a few thousand), so file size does
not grow with the data; the line and band come from the full-data fit.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from matplotlib.colors import to_rgba

from briefgen.figures.cross import SERIES_COLOURS, SERIES_MARKERS
from briefgen.figures.density import density_chart, line_alt
from briefgen.figures.multiples import multiples_chart
from briefgen.figures.rules import (
    CLIP_QUANTILE,
    CONTINUOUS_AXIS,
    SMALL_MULTIPLES,
    ValueAxis,
    overlay_or_multiples,
    value_axis,
)
from briefgen.figures.scales import mark_above, plain_log_ticks
from briefgen.figures.share_bounds import (
    fit_cut_sentence,
    line_and_band,
    line_exits,
    lines_sentence,
    segment,
    share_axis,
    slope_text,
)
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
from briefgen.present.wording import in_sentence
from briefgen.stats.density import DensityBins
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


def point_style(points: int) -> tuple[float, float]:
    """(marker area in pt², opacity): few points drawn large and more solid, thousands small.

    Common practice, no published source: 220 points at the thousands' size (5 pt²) nearly
    vanished on the Grunfeld data; opacity never drops below POINT_ALPHA, which keeps a
    lone point at 3:1 on white (WCAG 2.1, 1.4.11).
    """
    if points <= 500:
        return 14.0, 0.75
    if points <= 2000:
        return 8.0, POINT_ALPHA
    return 5.0, POINT_ALPHA


def scatter_axis(ys: np.ndarray) -> ValueAxis:
    """The value axis for the drawn points (``rules.value_axis``), with the count beyond a clip.

    The quantiles are of the drawn points: with at most the sample size of rows they
    are every row, and the clip is a drawing choice, stated in the caption.
    """
    if ys.size < 2:
        return ValueAxis("linear")
    low, high = float(ys.min()), float(ys.max())
    clip = float(np.quantile(ys, CLIP_QUANTILE))
    axis = value_axis(low, high, clip, float(np.quantile(ys, 1 - CLIP_QUANTILE)))
    if axis.kind == "clipped":
        return replace(axis, beyond=int((ys > clip).sum()))
    return axis


def _apply_axis(axes, axis: ValueAxis, ys: np.ndarray) -> None:
    """Log scale, or a top edge at the clip with the points beyond marked on it."""
    if axis.kind == "log":
        axes.set_yscale("log")
        plain_log_ticks(axes.yaxis)
    elif axis.kind == "clipped":
        low = float(ys.min())
        axes.set_ylim(low - 0.04 * (axis.top - low), axis.top)
        mark_above(axes, f"{fmt_count(axis.beyond)} points")


def axis_sentence(axis: ValueAxis, shown: int) -> str:
    """The caption's sentence for a clipped or log axis; empty for a plain one."""
    if axis.kind == "log":
        return (
            " The vertical axis is logarithmic: the values span more than tenfold and a long tail "
            "would squash the rest; the straight line therefore shows as a curve."
        )
    if axis.kind == "clipped":
        top = fmt(axis.top, 0 if float(axis.top).is_integer() else 2)
        return (
            f" The vertical axis stops at the 99th percentile of the points ({top}) so the line "
            f"stays readable; {fmt_count(axis.beyond)} of the {fmt_count(shown)} points lie above "
            "it (counted at the top edge) and are in the fit."
        )
    return ""


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
    density: DensityBins | None = None,
    binary: bool = False,
) -> Chart | None:
    """Scatter of the sample with the least-squares line and its confidence band.

    With ``by_group`` (a group variable that reverses or removes the slope) the points
    take that group's colour and marker and each level gets its own line, drawn over
    its own range; the overall line stays, dashed, for comparison. With more levels
    than overlay well (``rules.overlay_or_multiples``) each level gets its own panel.
    With ``density`` (more rows than a scatter shows) the rows are drawn as counted bins.
    With ``binary`` (a 0/1 target) nothing drawn leaves 0%–100% (``share_bounds``).
    """
    if by_group is not None and by_group.group in sample.groups:
        drawn = [s for s in by_group.levels if s.slope is not None]
        label = group_label or by_group.group
        if overlay_or_multiples(len(drawn)) == SMALL_MULTIPLES:
            return multiples_chart(fit, sample, x_label, y_label, by_group, label, binary)
        return _by_group_chart(
            fit, sample, (x_label, y_label), by_group, label, slope_decimals, height + 0.2, binary
        )
    if density is not None:
        return density_chart(
            fit, density, x_label, y_label, slope_decimals, confidence, height, binary
        )
    if fit.slope is None or fit.residual_sd is None:
        return None
    xs = np.array([np.nan if v is None else v for v in sample.x[fit.predictor]], dtype=float)
    ys = np.array(sample.y, dtype=float)
    keep = np.isfinite(xs) & np.isfinite(ys)
    # A 0/1 target keeps its plain 0-1 axis: no log scale, nothing beyond a clip.
    axis = ValueAxis("linear") if binary else scatter_axis(ys[keep])
    grid, line, bands, cut_edges = line_and_band(fit, confidence, binary)
    # On a log axis the line and band are drawn only where they are above zero.
    on = line > 0 if axis.kind == "log" else np.ones_like(line, dtype=bool)
    with themed():
        figure = new_figure(height)
        axes = figure.subplots()
        size, alpha = point_style(int(keep.sum()))
        axes.scatter(
            xs[keep], ys[keep], s=size, color=POINT, alpha=alpha, linewidths=0, rasterized=True
        )
        # The light fill shows the band; its edge in the line's colour gives it 3:1 on white.
        axes.fill_between(
            grid[on],
            bands[on, 0],
            bands[on, 1],
            facecolor=to_rgba(BAND, 0.8),
            edgecolor=LINE,
            linewidth=0.5,
        )
        axes.plot(grid[on], line[on], color=LINE, linewidth=2)
        _apply_axis(axes, axis, ys[keep])
        if binary:
            share_axis(axes)
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
        f"{y_label} against {in_sentence(x_label)}. Points: {points}. Line: least-squares fit on all "
        f"{fmt_count(fit.n)} rows with both values; shaded: {fmt_level(confidence)} confidence band of the line. "
        f"Slope {slope_text(fit.slope, slope_decimals, binary)} per unit, R² {fmt(fit.r_squared, 2)}."
        + axis_sentence(axis, shown)
        + (fit_cut_sentence(fit, cut_edges, in_sentence(x_label)) if binary else "")
    )
    alt = line_alt("Scatter plot", y_label, x_label, fit, slope_decimals, binary)
    return Chart(
        key=f"fit-{fit.predictor}",
        title=f"{y_label} against {x_label}",
        svg=svg,
        alt=alt,
        caption=caption,
        rules=(CONTINUOUS_AXIS, *((axis.rule,) if axis.rule else ())),
    )


def _by_group_chart(
    fit: RegressionFit,
    sample: Sample,
    labels: tuple[str, str],
    slopes: GroupSlopes,
    group_label: str,
    slope_decimals: int,
    height: float = 3.3,
    binary: bool = False,
) -> Chart | None:
    """Points and a line per level of the confounding group; colour and marker both differ.

    For a 0/1 target each line is drawn only inside 0%–100% (``share_bounds``).
    """
    if fit.slope is None:
        return None
    x_label, y_label = labels
    xs = np.array([np.nan if v is None else v for v in sample.x[fit.predictor]], dtype=float)
    ys = np.array(sample.y, dtype=float)
    levels = np.array(sample.groups[slopes.group], dtype=object)
    drawn = [s for s in slopes.levels if s.slope is not None][: len(SERIES_MARKERS)]
    lines = [(lv.x_min, lv.x_max, lv.intercept, lv.slope) for lv in drawn]
    lines.append((fit.x_min, fit.x_max, fit.intercept, fit.slope))
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
            # A line style and the level's marker at each end as well as a colour, so the
            # levels stay apart in grayscale and for colour-blind readers.
            axes.plot(
                *segment(binary, level.x_min, level.x_max, level.intercept, level.slope),
                color=colour,
                linewidth=2,
                linestyle=LEVEL_LINESTYLES[index % len(LEVEL_LINESTYLES)],
                marker=marker,
                markersize=5,
                markerfacecolor=colour if index % 2 == 0 else "white",
                label=short_label(level.level),
            )
        axes.plot(
            *segment(binary, fit.x_min, fit.x_max, fit.intercept, fit.slope),
            color=MUTED,
            linewidth=1.2,
            linestyle=(0, (2, 4)),
            label="all rows",
        )
        if binary:
            share_axis(axes)
        axes.set_xlabel(x_label)
        axes.set_ylabel(y_label)
        axes.legend(title=group_label, frameon=False, loc="best")
        svg = to_svg(figure)
    caption = (
        f"{y_label} against {in_sentence(x_label)}, points and lines by {group_label} (colour and "
        f"marker). Lines: least-squares fit within each level (a style and marker per level); finely dashed: one line through all "
        f"rows, which mixes the levels. Points: "
        + (
            f"all {fmt_count(sample.size)} rows."
            if sample.size >= sample.rows_available
            else f"a seeded random sample of {fmt_count(sample.size)} of the {fmt_count(sample.rows_available)} rows."
        )
        + (f" {SHORTENED_NOTE}" if shortened(level.level for level in drawn) else "")
        + lines_sentence(binary and any(line_exits(*line) for line in lines))
    )
    # Written from the fitted slopes, so a screen reader hears the numbers the lines show.
    within = "; ".join(
        f"{level.level} {slope_text(level.slope, slope_decimals, binary)}" for level in drawn
    )
    alt = (
        f"Scatter plot of {in_sentence(y_label)} against {in_sentence(x_label)} by {group_label}, one "
        f"fitted line per level. Slope per unit within each level: {within}. Through all rows "
        f"together: {slope_text(fit.slope, slope_decimals, binary)}."
    )
    return Chart(
        key=f"fit-{fit.predictor}",
        title=f"{y_label} against {x_label}, by {group_label}",
        svg=svg,
        alt=alt,
        caption=caption,
        rules=(CONTINUOUS_AXIS,),
    )
