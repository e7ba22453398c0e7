"""Distribution by group: Tukey boxes beside means with their intervals.

Both panels share one category axis, so a reader sees the spread and the
uncertainty of the average for each level on one line. Boxes are drawn with
``Axes.bxp`` from precomputed statistics: the figure never sees a row.
"""

from __future__ import annotations

from briefgen.figures.theme import (
    ACCENT,
    ACCENT_TEXT,
    BOX_FILL,
    INK,
    LINE,
    MUTED,
    ROW_IN,
    SHORTENED_NOTE,
    Chart,
    new_figure,
    rows_height,
    short_label,
    shortened,
    themed,
    to_svg,
)
from briefgen.numbers import fmt, fmt_count, fmt_level
from briefgen.stats.core.summary import BoxStats, Summary
from briefgen.stats.groups import GroupResult


def _bxp_stats(box: BoxStats) -> dict:
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
        "fliers": [v for v in box.outliers if box.axis_low <= v <= box.axis_high],
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


def _draw_boxes(axes, boxes: list[BoxStats], positions: list[int], label: str) -> int:
    """Tukey boxes on a shared axis range; returns how many values lie past its edges."""
    # A constant target has no range; pad by its magnitude so the axis still has width.
    span = (boxes[0].axis_high - boxes[0].axis_low) or max(abs(boxes[0].axis_high), 1.0)
    pad = 0.04 * span
    lower, upper = boxes[0].axis_low - pad, boxes[0].axis_high + pad
    axes.bxp(
        [_bxp_stats(b) for b in boxes],
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
    axes.set_xlim(lower, upper)
    beyond_edge = _mark_edges(axes, boxes, positions, lower, upper)
    axes.set_yticks(positions, [short_label(b.level) for b in boxes])
    axes.set_xlabel(label)
    axes.set_title("Spread: box = middle half, line = median", fontsize=8.5, fontweight="normal")
    axes.grid(axis="y", visible=False)
    return beyond_edge


def _draw_means(
    axes,
    summaries: list[Summary],
    positions: list[int],
    overall: Summary,
    label: str,
    decimals: int,
    confidence: float,
) -> None:
    """Each level's mean with its interval, against a dashed line at the overall mean."""
    # A level too small for an interval is drawn as a bare point at its mean.
    means = [s.mean for s in summaries]
    lows = [s.ci_low if s.ci_low is not None else s.mean for s in summaries]
    highs = [s.ci_high if s.ci_high is not None else s.mean for s in summaries]
    axes.hlines(positions, lows, highs, color=LINE, linewidth=2.2)
    axes.plot(
        means,
        positions,
        "o",
        color=LINE,
        markersize=5,
        markeredgecolor="white",
        markeredgewidth=0.6,
    )
    axes.axvline(overall.mean, color=ACCENT, linestyle=(0, (4, 2)), linewidth=1.1)
    axes.annotate(
        f"overall {fmt(overall.mean, decimals)}",
        xy=(overall.mean, 1.0),
        xycoords=("data", "axes fraction"),
        xytext=(3, -2),
        textcoords="offset points",
        va="top",
        fontsize=8,
        color=ACCENT_TEXT,
    )
    axes.set_xlabel(f"Mean {label.lower()}")
    axes.set_title(
        f"Average with {fmt_level(confidence)} interval", fontsize=8.5, fontweight="normal"
    )
    axes.grid(axis="y", visible=False)
    axes.tick_params(axis="y", length=0)


def _outlier_note(boxes: list[BoxStats], beyond_edge: int) -> str:
    """How many values are outliers, how many are drawn, and how many fall past the axis."""
    shown = sum(len(b.outliers) for b in boxes)
    total_out = sum(b.outlier_count for b in boxes)
    note = (
        f"{fmt_count(total_out)} {'value lies' if total_out == 1 else 'values lie'} beyond the whiskers of their own level's box (1.5 × IQR, Tukey)"
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
        note += (
            f" {fmt_count(beyond_edge)} far-out values (more than 3 × IQR from the box) lie past the "
            "edge of the axis, which stops there so the boxes stay readable; arrows give their count."
        )
    return note


def _caption(
    boxes: list[BoxStats], beyond_edge: int, label: str, confidence: float, name: str
) -> str:
    """What both panels show, the size of each level, and what happened to outliers."""
    counts = ", ".join(f"{b.level} {fmt_count(b.n)}" for b in boxes)
    return (
        f"{label} by {name}. Left: Tukey box plots. Right: means with {fmt_level(confidence)} "
        f"Student t intervals; dashed line: overall mean. n per level: {counts}. "
        f"{_outlier_note(boxes, beyond_edge)}"
        + (f" {SHORTENED_NOTE}" if shortened(b.level for b in boxes) else "")
    )


def _alt(boxes: list[BoxStats], label: str, decimals: int, name: str) -> str:
    """Text alternative for screen readers: the levels with the highest and lowest medians."""
    high = max(boxes, key=lambda b: b.median)
    low = min(boxes, key=lambda b: b.median)
    return (
        f"Box plots and means of {label.lower()} for {len(boxes)} levels of {name}. "
        f"Highest median: {high.level} ({fmt(high.median, decimals)}); lowest: {low.level} "
        f"({fmt(low.median, decimals)})."
    )


def distribution_chart(
    group: GroupResult,
    overall: Summary,
    label: str,
    decimals: int,
    confidence: float,
    name: str,
    row_in: float = ROW_IN,
) -> Chart:
    """Boxes (left) and means with intervals (right) for every level of one group.

    ``row_in`` closes the rows up for page 1 (see ``theme.compact_row_in``).
    """
    boxes = list(group.boxes)
    summaries = {s.level: s for s in group.summaries}
    level_summaries = [summaries[b.level] for b in boxes]
    # First level at the top: matplotlib counts positions upwards from the bottom.
    positions = list(range(len(boxes), 0, -1))
    with themed():
        figure = new_figure(rows_height(len(boxes), row_in))
        left, right = figure.subplots(1, 2, sharey=True, width_ratios=(1.35, 1))
        beyond_edge = _draw_boxes(left, boxes, positions, label)
        _draw_means(right, level_summaries, positions, overall, label, decimals, confidence)
        svg = to_svg(figure)
    return Chart(
        key=f"group-{group.variable}",
        title=f"{label} by {name}",
        svg=svg,
        alt=_alt(boxes, label, decimals, name),
        caption=_caption(boxes, beyond_edge, label, confidence, name),
    )
