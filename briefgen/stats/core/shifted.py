"""Means held as a data value plus a shift, and the intervals built on them.

Near an offset of 1e12 float64 values are 1.2e-4 apart, so two rounded means 0.1
apart keep only three digits of their difference. Every summary therefore carries
its mean as an anchor (the median, one of the data values) plus ``mean_shift``
(mean − median at full precision). Anchors close together difference exactly
(Sterbenz 1974) and the shifts are small, so (median_a − median_b) +
(shift_a − shift_b) keeps nearly every digit. This module is the one home of that
arithmetic; every analysis that differences or pools means calls it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from fractions import Fraction
from typing import Protocol

from briefgen.stats.core.distributions import t_ppf


class Anchored(Protocol):
    """Anything with a mean held as median + mean_shift (Summary, CrossCell, PeriodStats)."""

    n: int
    mean: float | None
    median: float | None
    mean_shift: float | None


def anchored(summary: Anchored) -> tuple[float, float]:
    """The mean as (anchor, shift), anchor + shift = mean; (mean, 0) without a shift."""
    if summary.mean_shift is None or summary.median is None:
        return summary.mean, 0.0
    return summary.median, summary.mean_shift


def mean_difference(a: Anchored, b: Anchored) -> float:
    """mean(a) − mean(b) without rounding either mean to the data's offset first."""
    anchor_a, shift_a = anchored(a)
    anchor_b, shift_b = anchored(b)
    return (anchor_a - anchor_b) + (shift_a - shift_b)


def deviations(summaries: Sequence[Anchored], reference: float) -> list[float]:
    """Each summary's mean − ``reference``, computed from its anchor and shift."""
    result = []
    for summary in summaries:
        anchor, shift = anchored(summary)
        result.append((anchor - reference) + shift)
    return result


def pooled_mean(summaries: Sequence[Anchored]) -> float:
    """Mean over every value of the summaries with n ≥ 1, weighted by n."""
    used = [s for s in summaries if s.n >= 1 and s.mean is not None]
    base = anchored(used[0])[0]
    weighted = sum(s.n * d for s, d in zip(used, deviations(used, base), strict=True))
    return base + weighted / sum(s.n for s in used)


def moments_from_shifted(
    n: int, sum_d: Fraction | float, sum_d2: Fraction | float
) -> tuple[float, float | None]:
    """(mean of the deviations, sd) from sums of deviations d from a data value.

    Centring in Python: S = Σd² − (Σd)²/n. With the exact sums of
    ``briefgen.stats.core.exact`` (Fractions) it cancels nothing and rounds once; the
    shift keeps Σd small anyway (|mean − median| ≤ sd, Mallows 1991).
    """
    shift = sum_d / n
    if n < 2:
        return float(shift), None
    centred = max(sum_d2 - sum_d * sum_d / n, 0)
    return float(shift), math.sqrt(centred / (n - 1))


def t_quantile(confidence: float, df: float) -> float:
    """Two-sided Student t quantile for ``confidence`` on ``df`` degrees of freedom."""
    return t_ppf(0.5 + confidence / 2, df)


def t_interval(
    mean: float | None, sd: float | None, n: int, confidence: float
) -> tuple[float | None, float | None]:
    """Student t interval of a mean; (None, None) with fewer than two values."""
    if mean is None or sd is None or n < 2:
        return None, None
    half = t_quantile(confidence, n - 1) * sd / math.sqrt(n)
    return mean - half, mean + half
