"""Distribution by group: Tukey boxes beside means with their intervals.

Both panels share one category axis, so a reader sees the spread and the
uncertainty of the average for each level on one line. Boxes are drawn with
``Axes.bxp`` from precomputed statistics: the figure never sees a row.
"""

from __future__ import annotations

import numpy as np

from briefgen.figures import rules
from briefgen.figures.rules import (
    CATEGORICAL_AXIS,
    FOLDED_OTHER,
    LOG_AXIS,
    NATURAL_ORDER,
    VALUE_ORDER,
    is_natural_order,
)
from briefgen.figures.scales import plain_log_ticks
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
from briefgen.present.bounds import cut_note, drawn_interval
from briefgen.present.wording import in_sentence
from briefgen.stats.core.summary import BoxStats, Summary
from briefgen.stats.groups import GroupResult


def _bxp_stats(box: BoxStats, fliers: list[float]) -> dict:
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
        "fliers": fliers,
    }


def _past_edges(box: BoxStats, lower: float, upper: float) -> tuple[list[float], int, int, bool]:
    """The outliers to draw, the counts past the drawn edges, and whether those are exact.

    The engine counts values past the cut (``axis_low``/``axis_high``), but the drawn axis
    runs a little further to make room for the arrow, and a value in that room would fit
    (statecrime: DC's 1,349 on an axis drawn to about 1,450). Where every value past the
    cut on a side is among the listed outliers, they are drawn if they fit and only the
    rest are counted. Otherwise the rows past the cut are not all known to the figure, so
    the engine's count stands and the caption says where the axis is cut.
    """
    fliers = [v for v in box.outliers if box.axis_low <= v <= box.axis_high]
    low_listed = [v for v in box.outliers if v < box.axis_low]
    high_listed = [v for v in box.outliers if v > box.axis_high]
    low_known = len(low_listed) == box.beyond_axis_low
    high_known = len(high_listed) == box.beyond_axis_high
    below, above = box.beyond_axis_low, box.beyond_axis_high
    if low_known:
        fliers += [v for v in low_listed if v >= lower]
        below = sum(1 for v in low_listed if v < lower)
    if high_known:
        fliers += [v for v in high_listed if v <= upper]
        above = sum(1 for v in high_listed if v > upper)
    return fliers, below, above, low_known and high_known


# Room kept past each end of the box axis for an arrow and its count (share of the range),
# so the count sits inside the box panel, next to its arrow, and not between the panels.
_EDGE_ROOM = 0.16
_PAD = 0.04


def _mark_edges(
    axes, counts: list[tuple[int, int]], positions: list[int], lower: float, upper: float
) -> int:
    """Arrows at the axis edge with the exact count of values past it (counted by the engine).

    The arrow sits on the panel's own edge and its count just inside, on the box's line,
    in the room kept free of data for it: it reads as part of that box, not of the
    means panel beside it.
    """
    marked = 0
    for (below, above), y in zip(counts, positions, strict=True):
        sides = (
            (below, lower, "<", "left", 5),
            (above, upper, ">", "right", -5),
        )
        for count, x, marker, align, shift in sides:
            if count:
                axes.plot([x], [y], marker=marker, color=INK, markersize=4.5, clip_on=False)
                axes.annotate(
                    f"{count:,}",
                    xy=(x, y),
                    xytext=(shift, 0),
                    textcoords="offset points",
                    ha="left" if align == "left" else "right",
                    va="center",
                    fontsize=8,
                    color=INK,
                    annotation_clip=False,
                )
                marked += count
    return marked


def _limits(boxes: list[BoxStats], log: bool) -> tuple[float, float]:
    """The box axis: the shared range plus room at each end (in log10 on a log axis)."""
    low, high = boxes[0].axis_low, boxes[0].axis_high
    if log:
        low, high = np.log10(low), np.log10(high)
    # A constant target has no range; pad by its magnitude so the axis still has width.
    span = (high - low) or max(abs(high), 1.0)
    low_room = _EDGE_ROOM if any(b.beyond_axis_low for b in boxes) else _PAD
    high_room = _EDGE_ROOM if any(b.beyond_axis_high for b in boxes) else _PAD
    lower, upper = low - low_room * span, high + high_room * span
    return (10.0**lower, 10.0**upper) if log else (lower, upper)


def _draw_boxes(
    axes, boxes: list[BoxStats], positions: list[int], label: str, log: bool = False
) -> tuple[int, bool]:
    """Tukey boxes on a shared axis range; returns how many values lie past its drawn edges,
    and whether that count is exact for the drawn edges (else it is past the cut)."""
    lower, upper = _limits(boxes, log)
    if log:
        axes.set_xscale("log")
        plain_log_ticks(axes.xaxis)
    resolved = [_past_edges(b, lower, upper) for b in boxes]
    axes.bxp(
        [_bxp_stats(b, r[0]) for b, r in zip(boxes, resolved, strict=True)],
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
    counts = [(below, above) for _, below, above, _ in resolved]
    beyond_edge = _mark_edges(axes, counts, positions, lower, upper)
    axes.set_yticks(positions, [short_label(b.level) for b in boxes])
    axes.set_xlabel(label)
    axes.set_title("Spread: box = middle half, line = median", fontsize=8.5, fontweight="normal")
    axes.grid(axis="y", visible=False)
    return beyond_edge, all(exact for *_, exact in resolved)


def _draw_means(
    axes,
    summaries: list[Summary],
    positions: list[int],
    overall: Summary,
    label: str,
    decimals: int,
    confidence: float,
    floor: float | None = None,
) -> None:
    """Each level's mean with its interval, against a dashed line at the overall mean."""
    # A level without an interval (too small, or no spread) is drawn as a bare point at its mean.
    means = [s.mean for s in summaries]
    lows, highs = zip(*(drawn_interval(s, s.mean, floor) for s in summaries), strict=True)
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
    axes.set_xlabel(f"Mean {in_sentence(label)}")
    axes.set_title(
        f"Average with {fmt_level(confidence)} interval", fontsize=8.5, fontweight="normal"
    )
    axes.grid(axis="y", visible=False)
    axes.tick_params(axis="y", length=0)


def _outlier_note(boxes: list[BoxStats], beyond_edge: int, cut: str | None = None) -> str:
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
    if beyond_edge and cut:
        note += (
            f" {fmt_count(beyond_edge)} far-out values (more than 3 × IQR from the box) lie "
            f"{cut}, where the box axis is cut so the boxes stay readable; an arrow at "
            "the end of a box's line gives the count past the cut."
        )
    elif beyond_edge:
        note += (
            f" {fmt_count(beyond_edge)} far-out values (more than 3 × IQR from the box) lie past the "
            "edge of the box axis, which stops there so the boxes stay readable; an arrow at the end "
            "of a box's line gives the count past that edge."
        )
    return note


def _caption(
    boxes: list[BoxStats],
    beyond_edge: int,
    label: str,
    confidence: float,
    name: str,
    cut: str | None = None,
) -> str:
    """What both panels show, the size of each level, and what happened to outliers."""
    counts = ", ".join(f"{b.level} {fmt_count(b.n)}" for b in boxes)
    return (
        f"{label} by {name}. Left: Tukey box plots. Right: means with {fmt_level(confidence)} "
        f"Student t intervals; dashed line: overall mean. n per level: {counts}. "
        f"{_outlier_note(boxes, beyond_edge, cut)}"
        + (f" {SHORTENED_NOTE}" if shortened(b.level for b in boxes) else "")
    )


def _cut(boxes: list[BoxStats], exact: bool, decimals: int) -> str | None:
    """Where the box axis is cut, when the counts are past the cut rather than the drawn edge."""
    if exact:
        return None
    cuts = []
    if any(b.beyond_axis_low for b in boxes):
        cuts.append(f"below {fmt(boxes[0].axis_low, decimals)}")
    if any(b.beyond_axis_high for b in boxes):
        cuts.append(f"above {fmt(boxes[0].axis_high, decimals)}")
    return " or ".join(cuts) or None


def _alt(boxes: list[BoxStats], label: str, decimals: int, name: str) -> str:
    """Text alternative for screen readers: the levels with the highest and lowest medians."""
    high = max(boxes, key=lambda b: b.median)
    low = min(boxes, key=lambda b: b.median)
    return (
        f"Box plots and means of {in_sentence(label)} for {len(boxes)} levels of {name}. "
        f"Highest median: {high.level} ({fmt(high.median, decimals)}); lowest: {low.level} "
        f"({fmt(low.median, decimals)})."
    )


def log_scale(boxes: list[BoxStats], overall: Summary) -> bool:
    """Whether the levels need a log axis: all values positive, medians more than tenfold apart.

    ``rules.magnitudes_differ``: such levels never share one linear axis (Cleveland 1985).
    """
    positive = overall.min is not None and overall.min > 0
    return positive and rules.magnitudes_differ([b.median for b in boxes])


def distribution_chart(
    group: GroupResult,
    overall: Summary,
    label: str,
    decimals: int,
    confidence: float,
    name: str,
    row_in: float = ROW_IN,
    floor: float | None = None,
) -> Chart:
    """Boxes (left) and means with intervals (right) for every level of one group.

    ``row_in`` closes the rows up for page 1 (see ``theme.compact_row_in``); ``floor`` cuts
    the intervals where the target cannot go (``present.bounds``).
    """
    boxes = list(group.boxes)
    levels = [b.level for b in boxes]
    order = NATURAL_ORDER if is_natural_order(levels, group.shown.numeric) else VALUE_ORDER
    order_note = (
        " Levels in their natural order."
        if order == NATURAL_ORDER
        else " Levels by median, highest first."
    )
    folded = (FOLDED_OTHER,) if group.shown.other_label in levels else ()
    log = log_scale(boxes, overall)
    if log:
        order_note += (
            f" Both axes are logarithmic: the medians differ more than tenfold "
            f"({fmt(min(b.median for b in boxes), decimals)} to "
            f"{fmt(max(b.median for b in boxes), decimals)}), so one linear axis would squash "
            "the smaller levels."
        )
    summaries = {s.level: s for s in group.summaries}
    level_summaries = [summaries[b.level] for b in boxes]
    # First level at the top: matplotlib counts positions upwards from the bottom.
    positions = list(range(len(boxes), 0, -1))
    with themed():
        figure = new_figure(rows_height(len(boxes), row_in))
        # A clear gap between the panels, so nothing at the box panel's edge reads as a mean.
        figure.get_layout_engine().set(wspace=0.06)
        left, right = figure.subplots(1, 2, sharey=True, width_ratios=(1.35, 1))
        beyond_edge, exact = _draw_boxes(left, boxes, positions, label, log)
        _draw_means(right, level_summaries, positions, overall, label, decimals, confidence, floor)
        if log:
            right.set_xscale("log")
            plain_log_ticks(right.xaxis)
        svg = to_svg(figure)
    return Chart(
        key=f"group-{group.variable}",
        title=f"{label} by {name}",
        svg=svg,
        alt=_alt(boxes, label, decimals, name),
        caption=_caption(boxes, beyond_edge, label, confidence, name, _cut(boxes, exact, decimals))
        + cut_note(level_summaries, floor)
        + order_note,
        rules=(CATEGORICAL_AXIS, order, *folded, *((LOG_AXIS,) if log else ())),
        past_edge=beyond_edge,
    )
