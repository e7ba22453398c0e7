"""The distribution of the target as a histogram with Freedman–Diaconis bins.

Bin width 2·IQR·n^(−1/3) (Freedman & Diaconis 1981), edges as
``numpy.histogram_bin_edges(a, bins="fd")`` builds them (ceil(range / width) equal
bins by ``numpy.linspace`` over [min, max]; a zero range widened by ±0.5; IQR 0
gives one bin). Two engine queries: n, range and quartiles; then one count of
values at or above every inner edge, differenced into bins that are half-open
[a, b) except the last, closed [a, b], as ``numpy.histogram`` counts them. No row
reaches Python, and comparing values with edges involves no arithmetic on the
values, so counts are exact at any offset.
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


@dataclass(frozen=True, slots=True)
class HistogramBins:
    """Bin edges and counts of the target over every row with a value.

    ``edges`` has one more entry than ``counts``. ``rule`` is ``freedman_diaconis``,
    ``single`` (one bin: no spread in the middle half or none at all) or ``capped``
    (the rule asked for ``requested_bins`` > MAX_BINS, so MAX_BINS equal bins over
    the range are used instead) or ``whole_numbers`` (a count target: one bin per
    whole number, centred on it, when at most MAX_BINS span the range). ``width`` is the width of each bin.
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


def histogram_bins(
    table, column: str = "y", max_bins: int = MAX_BINS, whole_numbers: bool = False
) -> HistogramBins | None:
    """Freedman–Diaconis histogram of ``column`` in ``table``; None when it has no value.

    ``whole_numbers`` (a count target) gives one bin per value instead: a count that is
    mostly zero has IQR 0, where the Freedman–Diaconis rule collapses to one bin.
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
    if whole_numbers and first["high"] - first["low"] + 1 <= max_bins:
        edges = np.arange(first["low"] - 0.5, first["high"] + 1.0, 1.0)
        rule, requested = "whole_numbers", len(edges) - 1
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
        width=float(edges[1] - edges[0]),
        requested_bins=requested,
        usage=RowUsage("histogram", n),
    )


@dataclass(frozen=True, slots=True)
class Histogram:
    """The target's distribution in Freedman–Diaconis bins, shown in the overall section."""

    max_bins: int = MAX_BINS
    whole_numbers: bool = False
    name: ClassVar[str] = "histogram"
    many: ClassVar[bool] = False
    result: ClassVar[type] = HistogramBins

    @classmethod
    def plan(cls, spec: BriefSpec, frame: AnalysisFrame) -> tuple[Histogram, ...]:
        # Two bars of 0 and 1 say less than the share with its interval the brief gives.
        if frame.binary:
            return ()
        return (cls(whole_numbers=frame.kind is not None and frame.kind.kind == "count"),)

    def __call__(self, frame: AnalysisFrame) -> HistogramBins | None:
        return histogram_bins(frame.table, "y", self.max_bins, self.whole_numbers)
