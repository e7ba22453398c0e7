"""Rows counted in 2-D bins of one predictor (x) and the target (y), in the engine.

Drawn in place of the sampled scatter when a scatter could show only a sample
(``briefgen.figures.rules.points_or_density``). Two queries per predictor: sizes,
ranges and the target's 1st and 99th percentiles (type 7); then one GROUP BY of a
bin number per axis. A value's bin number is the count of inner edges at or below
it, a sum of 0/1 comparisons: exact integer arithmetic with no arithmetic on the
values, so counts are exact at any offset and match ``numpy.histogram2d`` with the
same edges (half-open bins, the last closed). The result's size is the number of
bins, never the number of rows.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import ibis
import numpy as np

from briefgen.config import BriefSpec
from briefgen.figures.rules import CLIP_QUANTILE, DENSITY_ROWS, value_axis
from briefgen.stats.core.analysis import one_row
from briefgen.stats.core.frame import AnalysisFrame
from briefgen.stats.core.quantiles import narrowed_quantiles, narrowing
from briefgen.stats.core.usage import RowUsage
from briefgen.stats.histogram import WHOLE_NUMBER_LIMIT, whole_number_edges

# Common practice, no published source: bins about 4 mm wide across a 6.7 in plot and
# as tall over about 2 in, coarse enough to count many rows each, fine enough to show shape.
X_BINS = 40
Y_BINS = 20


@dataclass(frozen=True, slots=True)
class DensityBins:
    """Rows with both values counted in a grid of x (predictor) by y (target) bins.

    ``x_edges`` and ``y_edges`` have one more entry than bins (a predictor of whole
    numbers spanning at most ``X_BINS`` values gets one x bin per value, centred on it;
    one with at most ``X_BINS`` distinct values, one bin per value, edges half-way
    between; other whole numbers, and a whole-number target on a linear or clipped
    axis, bins of a whole width with edges at k − 0.5); ``counts[i][j]`` is the
    number of rows in x bin i and y bin j (``numpy.histogram2d``'s layout). ``y_scale``
    is ``linear``, ``clipped`` (y edges stop at the target's 99th percentile, ``top``;
    ``beyond`` rows lie above it and are counted in no bin) or ``log`` (y edges evenly
    spaced in log10). ``n`` counts every row with both values, ``beyond`` included.
    """

    key: str
    predictor: str
    n: int
    x_edges: tuple[float, ...]
    y_edges: tuple[float, ...]
    counts: tuple[tuple[int, ...], ...]
    y_scale: str
    top: float | None
    beyond: int
    usage: RowUsage


def _edges(low: float, high: float, bins: int, log: bool = False) -> np.ndarray:
    """``bins + 1`` equal edges over [low, high] (in log10 when ``log``); a point range widened by ±0.5.

    Linear edges are ``low + i·step`` with the last pinned to ``high``: the same two
    float operations the engine repeats in ``_bin_number``.
    """
    if low == high:
        low, high = low - 0.5, high + 0.5
    if log:
        edges = 10.0 ** np.linspace(np.log10(low), np.log10(high), bins + 1)
        # 10 ** log10(v) can miss v by a unit in the last place: pin the ends to the data.
        edges[0], edges[-1] = low, high
        return edges
    step = (high - low) / bins
    edges = low + np.arange(bins + 1, dtype=float) * step
    edges[-1] = high
    return edges


def _whole_edges(low: float, high: float, bins: int, from_top: bool = False) -> np.ndarray:
    """The histogram's whole-number edges (``whole_number_edges``) over ``low`` … ``high``.

    Each whole number lies inside one bin and every bin holds as many: bins 1.05 wide over
    0 … 21 would put 0 and 1 in one row of cells and every other value alone.
    ``from_top`` ends the last bin at ``high`` + 0.5 (a clipped axis stops there), so
    the first may reach below ``low``.
    """
    edges, _, _ = whole_number_edges(low, high, bins)
    return edges - (edges[-1] - (int(high) + 0.5)) if from_top else edges


def _value_edges(both, x: str) -> np.ndarray:
    """Edges half-way between a few distinct values (ages 17.5, 22, 27 …), one bin per value.

    The outer edges lie half a gap beyond the end values; a single value gets ±0.5.
    """
    values = np.array(
        sorted(v for v in both.select(v=both[x]).distinct().to_pyarrow()["v"].to_pylist()),
        dtype=float,
    )
    if len(values) == 1:
        return np.array([values[0] - 0.5, values[0] + 0.5])
    middles = (values[1:] + values[:-1]) / 2
    return np.concatenate(
        [
            [values[0] - (values[1] - values[0]) / 2],
            middles,
            [values[-1] + (values[-1] - values[-2]) / 2],
        ]
    )


def _exact(low: float, high: float) -> bool:
    """Whether edges at k − 0.5 are exact doubles for whole numbers in [low, high]."""
    return max(abs(low), abs(high)) < WHOLE_NUMBER_LIMIT


def _bin_number(column, edges: np.ndarray, spacing: str = "linear"):
    """The value's bin, 0 … len(edges) − 2: the count of inner edges at or below it.

    ``linear`` (edges ``start + i·step``, as ``_edges`` makes them): a guess from
    arithmetic, then one correction by comparing the value with the two edges either
    side of the guess, computed in the engine by the same two float operations as in
    numpy, so they equal the result's edges bit for bit; rounding can put the guess
    one bin off at most. ``irregular`` (few distinct values, or log edges, whose
    powers of ten an engine's libm may round differently): the sum of 0/1 comparisons
    with every inner edge. Either way the bin is decided by comparing the value with
    an edge. The guess is four times faster than the comparisons at 40 bins.
    """
    bins = len(edges) - 1
    if spacing == "irregular":
        number = ibis.literal(0)
        for edge in edges[1:-1]:
            number = number + (column >= float(edge)).cast("int32")
        return number
    # The step exactly as _edges computed it (its last edge is pinned to the high end).
    start = float(edges[0])
    step = (float(edges[-1]) - start) / bins
    guess = ((column - start) / step).floor().cast("int64")
    guess = ibis.greatest(ibis.least(guess, bins - 1), 0)
    lower = start + guess.cast("float64") * step
    upper = start + (guess + 1).cast("float64") * step
    below = (column < lower).cast("int64")
    # The last bin is closed: nothing moves past it.
    above = ((column >= upper) & (guess < bins - 1)).cast("int64")
    return guess - below + above


def density_bins(
    table,
    x: str,
    predictor: str,
    x_bins: int = X_BINS,
    y_bins: int = Y_BINS,
    more_than: int = 0,
    y_whole: bool = False,
) -> DensityBins | None:
    """2-D bin counts of ``y`` against column ``x`` of ``table``.

    None unless more than ``more_than`` rows have both values (the first query tells).
    ``y_whole`` (the target is whole numbers) gives a linear or clipped y axis edges at
    k − 0.5; a whole-number predictor with many values gets them on x.
    """
    both = table.filter(table.y.notnull() & table[x].notnull())
    asked = {
        "n": both.count(),
        "x_low": both[x].min(),
        "x_high": both[x].max(),
        "y_low": both.y.min(),
        "y_high": both.y.max(),
        "x_fractions": (both[x] != both[x].floor()).sum(),
        "x_distinct": both[x].nunique(),
    }
    if not narrowing():
        asked["y_bulk"] = both.y.quantile(1 - CLIP_QUANTILE)
        asked["y_clip"] = both.y.quantile(CLIP_QUANTILE)
    first = one_row(both, asked)
    n = int(first["n"] or 0)
    if n == 0 or n <= more_than:
        return None
    if narrowing():
        bounds = {(): (n, first["y_low"], first["y_high"])}
        bulk_clip = narrowed_quantiles(both, "y", (1 - CLIP_QUANTILE, CLIP_QUANTILE), (), bounds)
        bulk_clip = bulk_clip[()]
        first["y_bulk"], first["y_clip"] = bulk_clip
    axis = value_axis(first["y_low"], first["y_high"], first["y_clip"], first["y_bulk"])
    top = axis.top if axis.kind == "clipped" else first["y_high"]
    x_whole = not first["x_fractions"] and _exact(first["x_low"], first["x_high"])
    if x_whole and first["x_high"] - first["x_low"] + 1 <= x_bins:
        # Whole numbers (parcels, rooms): one bin per value, centred on it, as the histogram does;
        # equal bins would leave empty stripes between the values.
        x_edges, x_spacing = np.arange(first["x_low"] - 0.5, first["x_high"] + 1.0, 1.0), "linear"
    elif int(first["x_distinct"]) <= x_bins:
        x_edges, x_spacing = _value_edges(both, x), "irregular"
    elif x_whole:
        x_edges, x_spacing = _whole_edges(first["x_low"], first["x_high"], x_bins), "linear"
    else:
        x_edges, x_spacing = _edges(first["x_low"], first["x_high"], x_bins), "linear"
    if y_whole and axis.kind != "log" and _exact(first["y_low"], top):
        clipped = axis.kind == "clipped"
        y_edges = _whole_edges(first["y_low"], np.floor(top), y_bins, from_top=clipped)
    else:
        y_edges = _edges(first["y_low"], top, y_bins, log=axis.kind == "log")
    binned = both.mutate(
        ix=_bin_number(both[x], x_edges, x_spacing),
        iy=_bin_number(both.y, y_edges, "irregular" if axis.kind == "log" else "linear"),
        over=both.y > float(y_edges[-1]),
    )
    rows = binned.group_by(["ix", "iy", "over"]).aggregate(rows=binned.count())
    grid = np.zeros((len(x_edges) - 1, len(y_edges) - 1), dtype=np.int64)
    beyond = 0
    for row in rows.to_pyarrow().to_pylist():
        if row["over"]:
            beyond += int(row["rows"])
        else:
            grid[int(row["ix"]), int(row["iy"])] += int(row["rows"])
    return DensityBins(
        key=f"density-{predictor}",
        predictor=predictor,
        n=n,
        x_edges=tuple(float(e) for e in x_edges),
        y_edges=tuple(float(e) for e in y_edges),
        counts=tuple(tuple(int(c) for c in column) for column in grid),
        y_scale=axis.kind,
        top=axis.top,
        beyond=beyond,
        usage=RowUsage(f"density:{predictor}", n),
    )


@dataclass(frozen=True, slots=True)
class DensityAnalysis:
    """Binned counts for one predictor's chart, when it has more rows than a scatter shows."""

    predictor: str
    threshold: int = DENSITY_ROWS
    y_whole: bool = False
    name: ClassVar[str] = "densities"
    many: ClassVar[bool] = True
    result: ClassVar[type] = DensityBins

    @classmethod
    def plan(cls, spec: BriefSpec, frame: AnalysisFrame) -> tuple[DensityAnalysis, ...]:
        # The kind's one query already counted the target values that are not whole numbers.
        whole = frame.kind is not None and frame.kind.n > 0 and frame.kind.non_integers == 0
        return tuple(cls(name, y_whole=whole) for name in frame.predictors.values())

    def __call__(self, frame: AnalysisFrame) -> DensityBins | None:
        # points_or_density: binned counts only above the threshold, decided on the first query.
        column = frame.predictor_column(self.predictor)
        return density_bins(
            frame.table, column, self.predictor, more_than=self.threshold, y_whole=self.y_whole
        )
