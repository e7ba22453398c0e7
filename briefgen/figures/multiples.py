"""Small multiples: the target against a predictor, one panel per level of a group variable.

Used when a group variable reverses or removes a slope and has more levels than
overlay well in one panel (``rules.overlay_or_multiples``; Tufte 1983, 1990). Every
panel shares both scales; the other levels' points sit faint behind the level's own,
and the line through all rows is repeated, dashed, in each panel, so every panel
compares its own line with the pooled one. For a 0/1 target every line stays inside
0%–100% (``share_bounds``).
"""

from __future__ import annotations

import math

import numpy as np

from briefgen.figures.rules import CONTINUOUS_AXIS, SMALL_MULTIPLES
from briefgen.figures.share_bounds import line_exits, lines_sentence, segment, share_axis
from briefgen.figures.theme import (
    LINE,
    MUTED,
    SHORTENED_NOTE,
    Chart,
    new_figure,
    short_label,
    shortened,
    themed,
    to_svg,
)
from briefgen.numbers import fmt_count
from briefgen.present.wording import in_sentence
from briefgen.stats.regression import RegressionFit
from briefgen.stats.relationships import GroupSlopes
from briefgen.stats.sample import Sample

PANEL_HEIGHT_IN = 1.55
CONTEXT = "#8c8c8c"  # 3.4:1 on white


def multiples_chart(
    fit: RegressionFit,
    sample: Sample,
    x_label: str,
    y_label: str,
    slopes: GroupSlopes,
    group_label: str,
    binary: bool = False,
) -> Chart | None:
    """One panel per level with a fitted slope: its points, its line, and the pooled line dashed."""
    if fit.slope is None:
        return None
    drawn = [s for s in slopes.levels if s.slope is not None]
    xs = np.array([np.nan if v is None else v for v in sample.x[fit.predictor]], dtype=float)
    ys = np.array(sample.y, dtype=float)
    levels = np.array(sample.groups[slopes.group], dtype=object)
    finite = np.isfinite(xs) & np.isfinite(ys)
    columns = 3 if len(drawn) <= 6 else 4
    panel_rows = math.ceil(len(drawn) / columns)
    lines = [(lv.x_min, lv.x_max, lv.intercept, lv.slope) for lv in drawn]
    lines.append((fit.x_min, fit.x_max, fit.intercept, fit.slope))
    with themed():
        figure = new_figure(0.5 + PANEL_HEIGHT_IN * panel_rows)
        grid = figure.subplots(panel_rows, columns, sharex=True, sharey=True, squeeze=False)
        for index, axes in enumerate(grid.flat):
            if index >= len(drawn):
                axes.set_visible(False)
                continue
            level = drawn[index]
            own = finite & (levels == level.level)
            # The other levels as small hollow rings: context that stays 3:1 on white
            # (WCAG 2.1, 1.4.11) without competing with the level's own filled points.
            axes.scatter(
                xs[finite & ~own],
                ys[finite & ~own],
                s=4,
                facecolors="none",
                edgecolors=CONTEXT,
                linewidths=0.4,
                rasterized=True,
            )
            axes.scatter(
                xs[own], ys[own], s=6, color=LINE, alpha=0.75, linewidths=0, rasterized=True
            )
            axes.plot(
                *segment(binary, level.x_min, level.x_max, level.intercept, level.slope),
                color=LINE,
                linewidth=2,
            )
            axes.plot(
                *segment(binary, fit.x_min, fit.x_max, fit.intercept, fit.slope),
                color=MUTED,
                linewidth=1.1,
                linestyle=(0, (2, 3)),
            )
            axes.set_title(
                f"{short_label(level.level)} (n = {fmt_count(level.n)})",
                fontsize=8.5,
                fontweight="normal",
            )
        if binary:
            # The panels share one vertical scale: setting it on the first sets it on all.
            share_axis(grid.flat[0], ticks=(0.0, 0.5, 1.0))
        figure.supxlabel(x_label, fontsize=8.5)
        figure.supylabel(y_label, fontsize=8.5)
        svg = to_svg(figure)
    points = (
        f"all {fmt_count(sample.size)} rows"
        if sample.size >= sample.rows_available
        else f"a seeded random sample of {fmt_count(sample.size)} of the {fmt_count(sample.rows_available)} rows"
    )
    caption = (
        f"{y_label} against {in_sentence(x_label)}, one panel per level of {group_label} "
        f"(small multiples, same scales in every panel). Blue: the level's points and its "
        f"least-squares line; grey rings: the other levels' points; dashed: one line through all rows, "
        f"which mixes the levels. Points: {points}."
        + (f" {SHORTENED_NOTE}" if shortened(level.level for level in drawn) else "")
        + lines_sentence(binary and any(line_exits(*line) for line in lines))
    )
    alt = (
        f"{len(drawn)} small scatter plots of {in_sentence(y_label)} against "
        f"{in_sentence(x_label)}, one per level of {group_label}, each with its own fitted line "
        "and the dashed line through all rows."
    )
    return Chart(
        key=f"fit-{fit.predictor}",
        title=f"{y_label} against {x_label}, by {group_label}",
        svg=svg,
        alt=alt,
        caption=caption,
        rules=(CONTINUOUS_AXIS, SMALL_MULTIPLES),
    )
