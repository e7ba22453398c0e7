"""The distribution of the target as a histogram with Freedman–Diaconis bins.

Bin width 2·IQR·n^(−1/3) (Freedman & Diaconis 1981), edges as
``numpy.histogram_bin_edges(a, bins="fd")`` builds them (ceil(range / width) equal
bins by ``numpy.linspace`` over [min, max]; a zero range widened by ±0.5; IQR 0
gives one bin). A target of whole numbers gets whole-number bins instead, edges at
k − 0.5, so no bin holds a different number of whole numbers than its neighbours
(bins 1.28 wide would put 0 and 1 in one bar, 2 alone, 4 and 5 together: a false
bump). Two engine queries: n, range and quartiles; then one count of values at or
above every inner edge, differenced into bins that are half-open [a, b) except the
last, closed [a, b], as ``numpy.histogram`` counts them. No row reaches Python, and
comparing values with edges involves no arithmetic on the values, so counts are
exact at any offset.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from briefgen.config import BriefSpec
from briefgen.stats.core.analysis import one_row
from briefgen.stats.core.frame import AnalysisFrame
from briefgen.stats.core.quantiles import narrowed_quantiles, narrowing
from briefgen.stats.core.usage import RowUsage

# Common practice (no published source): about 60 bars still read as bars across a
# 6.7 in text width (under 3 mm each); more rule-given bins are merged into 60.
MAX_BINS = 60

# Whole numbers above 2**50 are kept off the half-integer edges: k − 0.5 is exact in a
# double only below 2**52, and a bin's whole-number width must stay exact too.
WHOLE_NUMBER_LIMIT = 2.0**50


@dataclass(frozen=True, slots=True)
class HistogramBins:
    """Bin edges and counts of the target over every row with a value.

    ``edges`` has one more entry than ``counts``. ``rule`` is ``freedman_diaconis``,
    ``single`` (one bin: no spread in the middle half or none at all) or ``capped``
    (the rule asked for ``requested_bins`` > MAX_BINS, so MAX_BINS equal bins over
    the range are used instead) for values that are not all whole numbers. For whole
    numbers (edges at k − 0.5) it is ``whole_numbers`` (one bin per whole number),
    ``whole_numbers_grouped`` (bins ``width`` whole numbers wide, the smallest whole
    width within MAX_BINS; ``requested_bins`` is the number of whole numbers in the
    range) or ``whole_numbers_fd`` (the Freedman–Diaconis width rounded to a whole
    number, wider than that). A count target grouped keeps 0 in a bin of its own,
    [−0.5, 0.5), before the wider bins: its share of zeros is what the brief reads it
    by. ``width`` is the width of each bin (of the wider ones).
    """

    key: str
    n: int
    edges: tuple[float, ...]
    counts: tuple[int, ...]
    rule: str
    width: float
    requested_bins: int
    usage: RowUsage


def bin_edges(n: int, low: float, high: float, q1: float, q3: float, max_bins: int = MAX_BINS):
    """(edges, rule, requested bins) from the data's size, range and quartiles, as numpy does."""
    if low == high:
        low, high = low - 0.5, high + 0.5
    width = 2.0 * (q3 - q1) * n ** (-1.0 / 3.0)
    requested = int(math.ceil((high - low) / width)) if width else 1
    rule = "freedman_diaconis" if width else "single"
    bins = requested
    if requested > max_bins:
        rule, bins = "capped", max_bins
    return np.linspace(low, high, bins + 1), rule, requested


def whole_number_edges(
    low: float, high: float, max_bins: int = MAX_BINS, count: bool = False, fd_width: float = 0.0
):
    """(edges, rule, bins asked for) for values that are all whole numbers.

    Edges sit at k − 0.5, so each whole number lies inside one bin and each bin holds
    the same number of whole numbers. The width is the smallest whole number that
    keeps the bins within ``max_bins`` (1 when the range has at most ``max_bins``
    whole numbers), or ``fd_width`` rounded to a whole number when that is wider: a
    measure recorded in whole units (grams, dollars) keeps about the Freedman–Diaconis
    number of bins. A ``count`` target ignores ``fd_width`` (one bar per value is how a
    count is read) and, when it starts at 0 and must be grouped, gives 0 a bin of its
    own first, then the smallest whole width that fits the rest in ``max_bins`` − 1.
    """
    lo, hi = int(low), int(high)
    span = hi - lo + 1
    if count and lo == 0 and span > max_bins:
        width = -(-hi // (max_bins - 1))
        inner = 0.5 + width * np.arange(-(-hi // width) + 1, dtype=float)
        return np.concatenate([[-0.5], inner]), "whole_numbers_grouped", span
    fitting = -(-span // max_bins)
    rounded = 0 if count else round(fd_width)
    width = max(fitting, rounded, 1)
    edges = lo - 0.5 + width * np.arange(-(-span // width) + 1, dtype=float)
    if width == 1:
        rule = "whole_numbers"
    elif width == fitting:
        rule = "whole_numbers_grouped"
    else:
        rule = "whole_numbers_fd"
    return edges, rule, span if rule != "whole_numbers_fd" else len(edges) - 1


def histogram_bins(
    table,
    column: str = "y",
    max_bins: int = MAX_BINS,
    whole_numbers: bool = False,
    count: bool = False,
) -> HistogramBins | None:
    """Freedman–Diaconis histogram of ``column`` in ``table``; None when it has no value.

    ``whole_numbers`` (every value is one) gives whole-number bins instead
    (``whole_number_edges``): bins of a fractional width hold one whole number or two
    by turns, and a count that is mostly zero has IQR 0, where the Freedman–Diaconis
    rule collapses to one bin. ``count`` (a count target) asks for one bar per value.
    """
    values = table[column]
    asked = {"n": values.count(), "low": values.min(), "high": values.max()}
    if not narrowing():
        # One call for both quartiles: the engine holds the values once.
        asked["quartiles"] = values.quantile([0.25, 0.75])
    first = one_row(table, asked)
    n = int(first["n"] or 0)
    if n == 0:
        return None
    if narrowing():
        bounds = {(): (n, first["low"], first["high"])}
        first["quartiles"] = narrowed_quantiles(table, column, (0.25, 0.75), (), bounds)[()]
    first["q1"], first["q3"] = first["quartiles"]
    exact = max(abs(first["low"]), abs(first["high"])) < WHOLE_NUMBER_LIMIT
    if whole_numbers and exact:
        fd_width = 2.0 * (first["q3"] - first["q1"]) * n ** (-1.0 / 3.0)
        edges, rule, requested = whole_number_edges(
            first["low"], first["high"], max_bins, count, fd_width
        )
    else:
        edges, rule, requested = bin_edges(
            n, first["low"], first["high"], first["q1"], first["q3"], max_bins
        )
    inner = {f"at{i}": (values >= float(edge)).sum() for i, edge in enumerate(edges[1:-1], 1)}
    at_or_above = one_row(table, inner)
    cumulative = [n] + [int(at_or_above[f"at{i}"] or 0) for i in range(1, len(edges) - 1)] + [0]
    counts = tuple(cumulative[i] - cumulative[i + 1] for i in range(len(edges) - 1))
    return HistogramBins(
        key="histogram",
        n=n,
        edges=tuple(float(e) for e in edges),
        counts=counts,
        rule=rule,
        # A count's 0 may sit alone in a narrower first bin: the last has the common width.
        width=float(edges[-1] - edges[-2] if rule.startswith("whole") else edges[1] - edges[0]),
        requested_bins=requested,
        usage=RowUsage("histogram", n),
    )


@dataclass(frozen=True, slots=True)
class Histogram:
    """The target's distribution in Freedman–Diaconis or whole-number bins (overall section)."""

    max_bins: int = MAX_BINS
    whole_numbers: bool = False
    count: bool = False
    name: ClassVar[str] = "histogram"
    many: ClassVar[bool] = False
    result: ClassVar[type] = HistogramBins

    @classmethod
    def plan(cls, spec: BriefSpec, frame: AnalysisFrame) -> tuple[Histogram, ...]:
        # Two bars of 0 and 1 say less than the share with its interval the brief gives.
        if frame.binary:
            return ()
        # The kind's one query already counted the values that are not whole numbers.
        kind = frame.kind
        whole = kind is not None and kind.n > 0 and kind.non_integers == 0
        return (cls(whole_numbers=whole, count=whole and kind.kind == "count"),)

    def __call__(self, frame: AnalysisFrame) -> HistogramBins | None:
        return histogram_bins(frame.table, "y", self.max_bins, self.whole_numbers, self.count)
