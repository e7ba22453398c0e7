"""Group summaries and Tukey box statistics, computed by the engine in two passes.

Pass 1 gets the order statistics (type 7 quantiles, min, max) and counts.
Pass 2 joins each row to its group's median and quartiles and sums deviations
from the median. Shifting by the median keeps the sums of squares exact on data
with large offsets: because |mean - median| <= sd (Mallows 1991), the shifted
sum of squares is at most twice the centred one, so at most one bit is lost to
cancellation, however large the offset.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import ibis
import ibis.expr.types as ir
from scipy import stats as scipy_stats

WHISKER_REACH = 1.5  # Tukey (1977): whiskers reach 1.5 IQR beyond the box.
FAR_OUT_REACH = 3.0  # Tukey (1977): beyond 3 IQR from the box a value is "far out".
NOTCH_FACTOR = 1.57  # McGill, Tukey & Larsen (1978): median ± 1.57·IQR/√n.
MAX_LISTED_OUTLIERS = 20
ALL_ROWS = "All rows"


@dataclass(frozen=True, slots=True)
class Summary:
    """Distribution of the target within one level of a group variable.

    ``rows`` counts rows in the level; ``missing`` those without a usable target
    value; ``n`` the rest. Quantiles are type 7 (Hyndman & Fan 1996). The interval
    is Student t at the brief's confidence level.

    ``mean_shift`` is mean − median at full precision, the mean of the deviations
    from the median (None when n = 0). ``mean`` rounds to the spacing of float64 near
    the data's offset; comparisons difference means as (median_a − median_b) +
    (mean_shift_a − mean_shift_b), which keeps the digits the rounding would lose.
    """

    level: str
    rows: int
    n: int
    missing: int
    mean: float | None
    sd: float | None
    ci_low: float | None
    ci_high: float | None
    min: float | None
    q1: float | None
    median: float | None
    q3: float | None
    max: float | None
    mean_shift: float | None = None


@dataclass(frozen=True, slots=True)
class BoxStats:
    """Tukey box for one level: box, whiskers, notch and the outliers beyond them.

    ``outliers`` lists at most MAX_LISTED_OUTLIERS values, the farthest from the
    median first; ``outlier_count`` counts them all.

    ``axis_low``/``axis_high`` are the value range a chart should show, shared by
    every level of the group: the data's range, cut at Tukey's far-out fences
    (3 IQR) so a few extreme values cannot squash the boxes. ``beyond_axis_low``
    and ``beyond_axis_high`` count this level's values outside it, so a chart can
    mark them exactly without seeing a row.
    """

    level: str
    n: int
    q1: float
    median: float
    q3: float
    whisker_low: float
    whisker_high: float
    notch_low: float
    notch_high: float
    mean: float
    outlier_count: int
    outliers: tuple[float, ...]
    axis_low: float
    axis_high: float
    beyond_axis_low: int
    beyond_axis_high: int


@dataclass(frozen=True, slots=True)
class GroupStats:
    """Summaries and boxes for every level of one group variable, in level order."""

    variable: str
    summaries: tuple[Summary, ...]
    boxes: tuple[BoxStats, ...]
    rows_without_level: int


def _interval(
    mean: float, sd: float | None, n: int, confidence: float
) -> tuple[float | None, float | None]:
    if sd is None or n < 2:
        return None, None
    half = float(scipy_stats.t.ppf(0.5 + confidence / 2, n - 1)) * sd / math.sqrt(n)
    return mean - half, mean + half


def _float(value: object) -> float | None:
    if value is None:
        return None
    value = float(value)
    return None if math.isnan(value) else value


def order_statistics(frame: ir.Table) -> ir.Table:
    """Pass 1: counts and type 7 quantiles of ``y`` per ``level``."""
    y = frame.y
    return frame.group_by("level").aggregate(
        rows=frame.count(),
        n=y.count(),
        min=y.min(),
        q1=y.quantile(0.25),
        median=y.quantile(0.5),
        q3=y.quantile(0.75),
        max=y.max(),
    )


def axis_range(pass1: list[dict]) -> tuple[float, float]:
    """Chart range shared by all levels: data range, cut at the widest far-out fences."""
    rows = [r for r in pass1 if r["n"]]
    if not rows:
        return 0.0, 0.0
    low = min(r["q1"] - FAR_OUT_REACH * (r["q3"] - r["q1"]) for r in rows)
    high = max(r["q3"] + FAR_OUT_REACH * (r["q3"] - r["q1"]) for r in rows)
    return max(low, min(r["min"] for r in rows)), min(high, max(r["max"] for r in rows))


def shifted_moments(frame: ir.Table, pass1: ir.Table, axis: tuple[float, float]) -> ir.Table:
    """Pass 2: sums of deviations from the median, whiskers and outlier counts per level."""
    joined = frame.inner_join(pass1.select("level", "q1", "median", "q3"), "level")
    deviation = joined.y - joined.median
    reach = WHISKER_REACH * (joined.q3 - joined.q1)
    low_fence, high_fence = joined.q1 - reach, joined.q3 + reach
    return joined.group_by("level").aggregate(
        sum_d=deviation.sum(),
        sum_d2=(deviation * deviation).sum(),
        whisker_low=joined.y.min(where=joined.y >= low_fence),
        whisker_high=joined.y.max(where=joined.y <= high_fence),
        outlier_count=(
            joined.y.notnull() & ((joined.y < low_fence) | (joined.y > high_fence))
        ).sum(),
        beyond_axis_low=(joined.y < axis[0]).sum(),
        beyond_axis_high=(joined.y > axis[1]).sum(),
    )


def extreme_outliers(
    frame: ir.Table, pass1: ir.Table, limit: int = MAX_LISTED_OUTLIERS
) -> dict[str, list[float]]:
    """The ``limit`` outliers farthest from the median in each level (bounded transfer)."""
    joined = frame.inner_join(pass1.select("level", "q1", "median", "q3"), "level")
    reach = WHISKER_REACH * (joined.q3 - joined.q1)
    outside = (joined.y < joined.q1 - reach) | (joined.y > joined.q3 + reach)
    flagged = joined.filter(outside).mutate(distance=(joined.y - joined.median).abs())
    ranked = flagged.mutate(
        rank=ibis.row_number().over(
            group_by=flagged.level, order_by=[ibis.desc(flagged.distance), flagged.y]
        )
    )
    rows = (
        ranked.filter(ranked["rank"] < limit)
        .select("level", "y", "rank")
        .order_by(["level", "rank"])
        .to_pyarrow()
        .to_pylist()
    )
    result: dict[str, list[float]] = {}
    for row in rows:
        result.setdefault(row["level"], []).append(float(row["y"]))
    return result


def summarise_levels(
    frame: ir.Table,
    confidence: float,
    order: list[str] | None = None,
    list_outliers: bool = True,
) -> tuple[tuple[Summary, ...], tuple[BoxStats, ...]]:
    """Summaries and boxes for a table with columns ``level`` (text) and ``y`` (float).

    ``list_outliers=False`` skips the query that fetches the most extreme values, for
    callers that draw no box plot (two-way cells, periods).
    """
    pass1_arrow = order_statistics(frame).to_pyarrow()
    pass1 = pass1_arrow.to_pylist()
    # Later passes join this small result back as a literal table, so the engine does not
    # recompute the quantiles (a sort per level) inside every later query.
    quartiles = ibis.memtable(pass1_arrow.select(["level", "q1", "median", "q3"]))
    axis = axis_range(pass1)
    pass2_rows = shifted_moments(frame, quartiles, axis).to_pyarrow().to_pylist()
    pass2 = {row["level"]: row for row in pass2_rows}
    extremes = extreme_outliers(frame, quartiles) if list_outliers else {}
    by_level = {row["level"]: row for row in pass1}
    levels = order if order is not None else sorted(by_level, key=str)
    summaries, boxes = [], []
    for level in levels:
        first = by_level.get(level)
        if first is None:
            continue
        second = pass2.get(level, {})
        summary, box = _assemble(level, first, second, extremes.get(level, []), confidence, axis)
        summaries.append(summary)
        if box is not None:
            boxes.append(box)
    return tuple(summaries), tuple(boxes)


def _assemble(
    level: str, first: dict, second: dict, outliers: list[float], confidence: float, axis
):
    rows, n = int(first["rows"]), int(first["n"])
    median = _float(first["median"])
    mean = mean_shift = sd = None
    if n >= 1 and median is not None:
        sum_d, sum_d2 = float(second["sum_d"]), float(second["sum_d2"])
        mean_shift = sum_d / n
        mean = median + mean_shift
        if n >= 2:
            centred = max(sum_d2 - sum_d * sum_d / n, 0.0)
            sd = math.sqrt(centred / (n - 1))
    ci_low, ci_high = _interval(mean, sd, n, confidence) if mean is not None else (None, None)
    summary = Summary(
        level=level,
        rows=rows,
        n=n,
        missing=rows - n,
        mean=mean,
        sd=sd,
        ci_low=ci_low,
        ci_high=ci_high,
        min=_float(first["min"]),
        q1=_float(first["q1"]),
        median=median,
        q3=_float(first["q3"]),
        max=_float(first["max"]),
        mean_shift=mean_shift,
    )
    if n == 0:
        return summary, None
    q1, q3 = summary.q1, summary.q3
    # matplotlib.cbook.boxplot_stats clamps whiskers to the box when no value lies between.
    whisker_low = min(
        _float(second.get("whisker_low")) if second.get("whisker_low") is not None else q1, q1
    )
    whisker_high = max(
        _float(second.get("whisker_high")) if second.get("whisker_high") is not None else q3, q3
    )
    half_notch = NOTCH_FACTOR * (q3 - q1) / math.sqrt(n)
    box = BoxStats(
        level=level,
        n=n,
        q1=q1,
        median=median,
        q3=q3,
        whisker_low=whisker_low,
        whisker_high=whisker_high,
        notch_low=median - half_notch,
        notch_high=median + half_notch,
        mean=mean,
        outlier_count=int(second.get("outlier_count") or 0),
        outliers=tuple(outliers),
        axis_low=axis[0],
        axis_high=axis[1],
        beyond_axis_low=int(second.get("beyond_axis_low") or 0),
        beyond_axis_high=int(second.get("beyond_axis_high") or 0),
    )
    return summary, box
