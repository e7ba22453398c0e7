"""Summaries of the target over key columns, and Tukey boxes, in two engine passes.

Pass 1 gets the order statistics (type 7 quantiles, min, max) and counts per key.
Pass 2 joins each row to its key's median and quartiles and sums deviations from
the median. Shifting by the median keeps the sums of squares exact on data with
large offsets: because |mean − median| ≤ sd (Mallows 1991), the shifted sum of
squares is at most twice the centred one, however large the offset. The sums are
exact fixed-point integers (``briefgen.stats.core.exact``), scaled per key from
pass 1's min and max, so the engine's thread order cannot change a digit.

Keys are real columns (a level, a date, or two levels for a two-way cell); a
missing key value is a key of its own, joined back with IS NOT DISTINCT FROM, so
callers can count rows without a level from the same passes.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from fractions import Fraction

import ibis
import ibis.expr.types as ir
import pyarrow as pa
import pyarrow.compute as pc

from briefgen.stats.core.exact import FixedPoint, exact_sum, quantise, value_of
from briefgen.stats.core.quantiles import narrowed_quantiles, narrowing
from briefgen.stats.core.shifted import moments_from_shifted, t_interval

WHISKER_REACH = 1.5  # Tukey (1977): whiskers reach 1.5 IQR beyond the box.
FAR_OUT_REACH = 3.0  # Tukey (1977): beyond 3 IQR from the box a value is "far out".
NOTCH_FACTOR = 1.57  # McGill, Tukey & Larsen (1978): median ± 1.57·IQR/√n.
MAX_LISTED_OUTLIERS = 20
ALL_ROWS = "All rows"


@dataclass(frozen=True, slots=True)
class Summary:
    """Distribution of the target within one key (a level, a period, a cell).

    ``rows`` counts rows with the key; ``missing`` those without a usable target
    value; ``n`` the rest. Quantiles are type 7 (Hyndman & Fan 1996). The interval
    is Student t at the brief's confidence level.

    ``mean_shift`` is mean − median at full precision, the mean of the deviations
    from the median (None when n = 0). ``mean`` rounds to the spacing of float64 near
    the data's offset; comparisons difference means as (median_a − median_b) +
    (mean_shift_a − mean_shift_b) (see ``briefgen.stats.core.shifted``).
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


Key = tuple[object, ...]


def _float(value: object) -> float | None:
    if value is None:
        return None
    value = float(value)
    return None if math.isnan(value) else value


QUARTILES = ("q1", "median", "q3")


def order_statistics(table: ir.Table, keys: Sequence[str]) -> pa.Table:
    """Pass 1: counts and type 7 quantiles of ``y`` per key.

    The three quartiles come from one quantile call: the engine then holds each key's
    values once, not once per quartile (a third of the memory, and one selection pass).
    """
    y = table.y
    counts = {"rows": table.count(), "n": y.count(), "min": y.min(), "max": y.max()}
    if narrowing():
        # Too many values for the engine's quantile state: narrow in bounded memory.
        found = table.group_by(list(keys)).aggregate(**counts).to_pyarrow()
        at = [tuple(row[k] for k in keys) for row in found.select(list(keys)).to_pylist()]
        bounds = {
            key: (row["n"], row["min"], row["max"])
            for key, row in zip(at, found.select(["n", "min", "max"]).to_pylist(), strict=True)
        }
        quartiles = narrowed_quantiles(table, "y", (0.25, 0.5, 0.75), keys, bounds)
        for i, name in enumerate(QUARTILES):
            column = [quartiles[key][i] if key in quartiles else None for key in at]
            found = found.append_column(name, pa.array(column, pa.float64()))
        return found
    found = (
        table.group_by(list(keys))
        .aggregate(**counts, quartiles=y.quantile([0.25, 0.5, 0.75]))
        .to_pyarrow()
    )
    quartiles = found.column("quartiles")
    for i, name in enumerate(QUARTILES):
        found = found.append_column(name, pc.list_element(quartiles, i))
    return found.drop_columns(["quartiles"])


def axis_range(pass1: list[dict]) -> tuple[float, float]:
    """Chart range shared by all keys: data range, cut at the widest far-out fences."""
    rows = [r for r in pass1 if r["n"]]
    if not rows:
        return 0.0, 0.0
    low = min(r["q1"] - FAR_OUT_REACH * (r["q3"] - r["q1"]) for r in rows)
    high = max(r["q3"] + FAR_OUT_REACH * (r["q3"] - r["q1"]) for r in rows)
    return max(low, min(r["min"] for r in rows)), min(high, max(r["max"] for r in rows))


def _joined(table: ir.Table, quartiles: ir.Table, keys: Sequence[str]) -> ir.Table:
    """Every row beside its key's quartiles (key columns kept from the left side)."""
    right = quartiles.rename({f"_k{i}": k for i, k in enumerate(keys)})
    predicates = [table[k].identical_to(right[f"_k{i}"]) for i, k in enumerate(keys)]
    return table.inner_join(right, predicates).drop(*[f"_k{i}" for i in range(len(keys))])


def shifted_moments(
    table: ir.Table,
    quartiles: ir.Table,
    keys: Sequence[str],
    axis: tuple[float, float],
    cubes: bool = False,
) -> ir.Table:
    """Pass 2: sums of deviations from the median, whiskers and outlier counts per key.

    ``quartiles`` carries each key's fixed-point ``scale`` (2^k, see ``deviation_scale``);
    ``sum_d`` and ``sum_d2`` are exact integer sums of the scaled deviations. With
    ``cubes``, also ``sum_d3``, Σ d²·d with d² quantised on the key's ``square_scale``
    (a product of two fixed-point values keeps the bits of a square, where a cube of one
    would keep a third of the budget each).
    """
    joined = _joined(table, quartiles, keys)
    difference = joined.y - joined.median
    deviation = quantise(difference, joined.scale)
    if cubes:
        square = quantise(difference * difference, joined.square_scale)
        third = {"sum_d3": exact_sum(square * deviation)}
    else:
        third = {}
    reach = WHISKER_REACH * (joined.q3 - joined.q1)
    low_fence, high_fence = joined.q1 - reach, joined.q3 + reach
    return joined.group_by(list(keys)).aggregate(
        **third,
        sum_d=exact_sum(deviation),
        sum_d2=exact_sum(deviation * deviation),
        whisker_low=joined.y.min(where=joined.y >= low_fence),
        whisker_high=joined.y.max(where=joined.y <= high_fence),
        outlier_count=(
            joined.y.notnull() & ((joined.y < low_fence) | (joined.y > high_fence))
        ).sum(),
        beyond_axis_low=(joined.y < axis[0]).sum(),
        beyond_axis_high=(joined.y > axis[1]).sum(),
    )


def deviation_scale(first: dict) -> FixedPoint:
    """Fixed-point scale of one key's deviations from its median, from pass 1's range."""
    if not first["n"] or first["median"] is None:
        return FixedPoint.fit(0.0, 0)
    return FixedPoint.around(first["median"], first["min"], first["max"], int(first["n"]))


def square_scale(first: dict) -> FixedPoint:
    """Fixed-point scale of one key's squared deviations from its median."""
    if not first["n"] or first["median"] is None:
        return FixedPoint.fit(0.0, 0)
    median, low, high = first["median"], first["min"], first["max"]
    # Float subtraction is monotone: no deviation lies beyond those of the min and max.
    bound = max(high - median, median - low)
    return FixedPoint.fit(bound * bound, int(first["n"]))


def extreme_outliers(
    table: ir.Table, quartiles: ir.Table, keys: Sequence[str], limit: int = MAX_LISTED_OUTLIERS
) -> dict[Key, list[float]]:
    """The ``limit`` outliers farthest from the median per key (bounded transfer)."""
    joined = _joined(table, quartiles, keys)
    reach = WHISKER_REACH * (joined.q3 - joined.q1)
    outside = (joined.y < joined.q1 - reach) | (joined.y > joined.q3 + reach)
    flagged = joined.filter(outside).mutate(distance=(joined.y - joined.median).abs())
    ranked = flagged.mutate(
        rank=ibis.row_number().over(
            group_by=[flagged[k] for k in keys], order_by=[ibis.desc(flagged.distance), flagged.y]
        )
    )
    rows = (
        ranked.filter(ranked["rank"] < limit)
        .select(*keys, "y", "rank")
        .order_by([*keys, "rank"])
        .to_pyarrow()
        .to_pylist()
    )
    result: dict[Key, list[float]] = {}
    for row in rows:
        result.setdefault(tuple(row[k] for k in keys), []).append(float(row["y"]))
    return result


@dataclass(frozen=True, slots=True)
class KeyedSummaries:
    """Summaries (and boxes, when asked for) of ``y`` per key tuple, in key order.

    ``centred``, when asked for: per key (n, Σ(y − mean)², Σ(y − mean)³) as exact
    ``Fraction``s (the cube sum from quantised squares), for the skewness of residuals.
    """

    keys: tuple[str, ...]
    summaries: dict[Key, Summary]
    boxes: dict[Key, BoxStats]
    centred: dict[Key, tuple[int, Fraction, Fraction]] = field(default_factory=dict)


def summarise(
    table: ir.Table,
    keys: Sequence[str],
    confidence: float,
    list_outliers: bool = True,
    third_moments: bool = False,
) -> KeyedSummaries:
    """Summaries and boxes of ``y`` for every combination of the ``keys`` columns.

    ``list_outliers=False`` skips the query that fetches the most extreme values, for
    callers that draw no box plot (two-way cells, periods). ``third_moments`` adds the
    centred sums of squares and cubes per key (``KeyedSummaries.centred``) to the same
    pass, for the group comparison's skewness of residuals. A key tuple with a missing
    part is summarised like any other.
    """
    keys = list(keys)
    pass1_arrow = order_statistics(table, keys)
    pass1 = pass1_arrow.to_pylist()
    # Later passes join this small result back as a literal table, so the engine does not
    # recompute the quantiles (a sort per key) inside every later query.
    scales = [deviation_scale(row) for row in pass1]
    quartiles_arrow = pass1_arrow.select([*keys, *QUARTILES]).append_column(
        "scale", pa.array([scale.factor for scale in scales], pa.float64())
    )
    if third_moments:
        squares = [square_scale(row) for row in pass1]
        factors = pa.array([scale.factor for scale in squares], pa.float64())
        quartiles_arrow = quartiles_arrow.append_column("square_scale", factors)
    quartiles = ibis.memtable(quartiles_arrow)
    scale_of = {
        tuple(row[k] for k in keys): scale for row, scale in zip(pass1, scales, strict=True)
    }
    axis = axis_range(pass1)
    pass2 = {
        tuple(row[k] for k in keys): row
        for row in shifted_moments(table, quartiles, keys, axis, third_moments)
        .to_pyarrow()
        .to_pylist()
    }
    centred = {}
    if third_moments:
        for row, square in zip(pass1, squares, strict=True):
            key = tuple(row[k] for k in keys)
            if key in pass2 and row["n"]:
                centred[key] = _centred_powers(int(row["n"]), pass2[key], scale_of[key], square)
    extremes = extreme_outliers(table, quartiles, keys) if list_outliers else {}
    summaries, boxes = {}, {}
    for first in sorted(pass1, key=lambda r: tuple((r[k] is None, r[k]) for k in keys)):
        key = tuple(first[k] for k in keys)
        label = key[0] if len(key) == 1 else key
        summary, box = _assemble(
            label, first, pass2.get(key, {}), extremes.get(key, []), confidence, axis, scale_of[key]
        )
        summaries[key] = summary
        if box is not None:
            boxes[key] = box
    return KeyedSummaries(tuple(keys), summaries, boxes, centred)


def _centred_powers(
    n: int, second: dict, scale: FixedPoint, square: FixedPoint
) -> tuple[int, Fraction, Fraction]:
    """(n, Σ(y − ȳ)², Σ(y − ȳ)³) from the sums of d = y − median, d² and d²·d.

    With m = Σd/n, exactly: Σ(d − m)² = Σd² − n·m² and Σ(d − m)³ = Σd³ − 3m·Σd² + 2n·m³.
    """
    s1 = value_of(second["sum_d"], scale)
    s2 = value_of(second["sum_d2"], scale, scale)
    s3 = value_of(second["sum_d3"], square, scale)
    m = s1 / n
    return n, s2 - n * m * m, s3 - 3 * m * s2 + 2 * n * m**3


def summarise_levels(
    table: ir.Table,
    confidence: float,
    order: list[str] | None = None,
    list_outliers: bool = True,
) -> tuple[tuple[Summary, ...], tuple[BoxStats, ...]]:
    """Summaries and boxes for a table with columns ``level`` and ``y``, in ``order``.

    Without ``order``, levels are in label order; rows without a level are skipped.
    """
    result = summarise(table, ["level"], confidence, list_outliers)
    by_level = {key[0]: s for key, s in result.summaries.items() if key[0] is not None}
    levels = order if order is not None else sorted(by_level, key=str)
    summaries = tuple(by_level[level] for level in levels if level in by_level)
    boxes = tuple(result.boxes[(s.level,)] for s in summaries if (s.level,) in result.boxes)
    return summaries, boxes


def _assemble(
    level: object,
    first: dict,
    second: dict,
    outliers: list[float],
    confidence: float,
    axis,
    scale: FixedPoint,
) -> tuple[Summary, BoxStats | None]:
    rows, n = int(first["rows"]), int(first["n"])
    median = _float(first["median"])
    mean = mean_shift = sd = None
    if n >= 1 and median is not None:
        sum_d = value_of(second["sum_d"], scale)
        mean_shift, sd = moments_from_shifted(n, sum_d, value_of(second["sum_d2"], scale, scale))
        mean = median + mean_shift
    ci_low, ci_high = t_interval(mean, sd, n, confidence)
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
    return summary, _box(summary, second, outliers, axis)


def _box(summary: Summary, second: dict, outliers: list[float], axis) -> BoxStats:
    q1, q3, median, n = summary.q1, summary.q3, summary.median, summary.n
    # matplotlib.cbook.boxplot_stats clamps whiskers to the box when no value lies between.
    low, high = _float(second.get("whisker_low")), _float(second.get("whisker_high"))
    half_notch = NOTCH_FACTOR * (q3 - q1) / math.sqrt(n)
    return BoxStats(
        level=summary.level,
        n=n,
        q1=q1,
        median=median,
        q3=q3,
        whisker_low=min(low if low is not None else q1, q1),
        whisker_high=max(high if high is not None else q3, q3),
        notch_low=median - half_notch,
        notch_high=median + half_notch,
        mean=summary.mean,
        outlier_count=int(second.get("outlier_count") or 0),
        outliers=tuple(outliers),
        axis_low=axis[0],
        axis_high=axis[1],
        beyond_axis_low=int(second.get("beyond_axis_low") or 0),
        beyond_axis_high=int(second.get("beyond_axis_high") or 0),
    )
