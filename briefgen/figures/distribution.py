"""Distribution by group: Tukey boxes beside means with their intervals.

Both panels share one category axis, so a reader sees the spread and the
uncertainty of the average for each level on one line. Boxes are drawn with
``Axes.bxp`` from precomputed statistics: the figure never sees a row.
"""

from __future__ import annotations

from briefgen.figures.theme import (
    ACCENT,
    BOX_FILL,
    INK,
    LINE,
    MUTED,
    Chart,
    new_figure,
    themed,
    to_svg,
)
from briefgen.numbers import fmt, fmt_count
from briefgen.stats.groups import BoxStats, GroupStats, Summary


def _bxp_stats(box: BoxStats, lower: float, upper: float) -> dict:
    return {
        "label": box.level,
        "med": box.median,
        "q1": box.q1,
        "q3": box.q3,
        "whislo": box.whisker_low,
        "whishi": box.whisker_high,
        "cilo": box.notch_low,
        "cihi": box.notch_high,
        "mean": box.mean,
        "fliers": [v for v in box.outliers if lower <= v <= upper],
    }


def _mark_edges(
    axes, boxes: list[BoxStats], positions: list[int], lower: float, upper: float
) -> int:
    """Arrows at the axis edge with the exact count of values past it (counted by the engine)."""
    marked = 0
    for box, y in zip(boxes, positions, strict=True):
        sides = (
            (box.beyond_axis_low, lower, "<", "left"),
            (box.beyond_axis_high, upper, ">", "right"),
        )
        for count, x, marker, _align in sides:
            if count:
                axes.plot([x], [y], marker=marker, color=INK, markersize=4.5, clip_on=False)
                axes.annotate(
                    f"{count:,}",
                    xy=(x, y),
                    xytext=(0, 5),
                    textcoords="offset points",
                    ha="center",
                    va="bottom",
                    fontsize=8,
                    color=INK,
                    annotation_clip=False,
                    bbox={"boxstyle": "square,pad=0.1", "facecolor": "white", "edgecolor": "none"},
                )
                marked += count
    return marked


def distribution_chart(
    group: GroupStats, overall: Summary, label: str, decimals: int, confidence: float, name: str
) -> Chart:
    """Boxes (left) and means with intervals (right) for every level of one group."""
    boxes = [b for b in group.boxes]
    levels = [b.level for b in boxes]
    summaries = {s.level: s for s in group.summaries}
    height = 0.9 + 0.34 * max(len(levels), 2)
    with themed():
        figure = new_figure(height)
        left, right = figure.subplots(1, 2, sharey=True, width_ratios=(1.35, 1))
        positions = list(range(len(levels), 0, -1))
        pad = 0.04 * ((boxes[0].axis_high - boxes[0].axis_low) or 1.0)
        lower, upper = boxes[0].axis_low - pad, boxes[0].axis_high + pad
        left.bxp(
            [_bxp_stats(b, b.axis_low, b.axis_high) for b in boxes],
            positions=positions,
            orientation="horizontal",
            widths=0.55,
            patch_artist=True,
            showmeans=False,
            shownotches=False,
            boxprops={"facecolor": BOX_FILL, "edgecolor": INK, "linewidth": 0.9},
            medianprops={"color": INK, "linewidth": 1.8},
            whiskerprops={"color": INK, "linewidth": 0.8},
            capprops={"color": INK, "linewidth": 0.8},
            flierprops={
                "marker": "o",
                "markersize": 3,
                "markerfacecolor": "none",
                "markeredgecolor": MUTED,
                "markeredgewidth": 0.7,
            },
        )
        left.set_xlim(lower, upper)
        beyond_edge = _mark_edges(left, boxes, positions, lower, upper)
        left.set_yticks(positions, levels)
        left.set_xlabel(label)
        left.set_title(
            "Spread: box = middle half, line = median", fontsize=8.5, fontweight="normal"
        )
        left.grid(axis="y", visible=False)

        means = [summaries[level].mean for level in levels]
        lows = [
            summaries[level].ci_low
            if summaries[level].ci_low is not None
            else summaries[level].mean
            for level in levels
        ]
        highs = [
            summaries[level].ci_high
            if summaries[level].ci_high is not None
            else summaries[level].mean
            for level in levels
        ]
        right.hlines(positions, lows, highs, color=LINE, linewidth=2.2)
        right.plot(
            means,
            positions,
            "o",
            color=LINE,
            markersize=5,
            markeredgecolor="white",
            markeredgewidth=0.6,
        )
        right.axvline(overall.mean, color=ACCENT, linestyle=(0, (4, 2)), linewidth=1.1)
        right.annotate(
            f"overall {fmt(overall.mean, decimals)}",
            xy=(overall.mean, 1.0),
            xycoords=("data", "axes fraction"),
            xytext=(3, -2),
            textcoords="offset points",
            va="top",
            fontsize=8,
            color=ACCENT,
        )
        right.set_xlabel(f"Mean {label.lower()}")
        right.set_title(
            f"Average with {confidence:.0%} interval", fontsize=8.5, fontweight="normal"
        )
        right.grid(axis="y", visible=False)
        right.tick_params(axis="y", length=0)
        svg = to_svg(figure)
    counts = ", ".join(f"{b.level} {fmt_count(b.n)}" for b in boxes)
    shown = sum(len(b.outliers) for b in boxes)
    total_out = sum(b.outlier_count for b in boxes)
    outlier_note = (
        f"{fmt_count(total_out)} values lie beyond the whiskers (1.5 × IQR, Tukey)"
        + (
            f"; the {fmt_count(shown)} farthest are drawn as circles"
            if shown < total_out
            else "; all are drawn as circles"
        )
        + ". They are kept in every mean."
        if total_out
        else "No values lie beyond the whiskers (1.5 × IQR, Tukey)."
    )
    if beyond_edge:
        outlier_note += (
            f" {fmt_count(beyond_edge)} far-out values (more than 3 × IQR from the box) lie past the "
            "edge of the axis, which stops there so the boxes stay readable; arrows give their count."
        )
    caption = (
        f"{label} by {name}. Left: Tukey box plots. Right: means with {confidence:.0%} "
        f"Student t intervals; dashed line: overall mean. n per level: {counts}. {outlier_note}"
    )
    high = max(boxes, key=lambda b: b.median)
    low = min(boxes, key=lambda b: b.median)
    alt = (
        f"Box plots and means of {label.lower()} for {len(boxes)} levels of {name}. "
        f"Highest median: {high.level} ({fmt(high.median, decimals)}); lowest: {low.level} "
        f"({fmt(low.median, decimals)})."
    )
    title = f"{label} by {name}"
    return Chart(key=f"group-{group.variable}", title=title, svg=svg, alt=alt, caption=caption)
