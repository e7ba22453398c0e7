"""Tests on means: Welch's t and ANOVA, Holm's correction, and the classical ANOVA.

Everything works from per-level n, mean and sd. Means are never differenced as
rounded float64 values: each is held as its level's median (a data value) plus
``mean_shift`` (mean − median at full precision), so (median_a − median_b) +
(shift_a − shift_b) keeps nearly every digit near large offsets (Sterbenz 1974).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from itertools import combinations

from briefgen.stats.core.distributions import f_sf, t_ppf, t_sf
from briefgen.stats.core.shifted import anchored, deviations, mean_difference
from briefgen.stats.core.summary import Summary


@dataclass(frozen=True, slots=True)
class PairwiseComparison:
    """Welch's t-test of mean(level_a) − mean(level_b), with its interval and Holm p-value.

    Statistic, df, p and interval are None when both levels have sd 0 (no spread,
    so Welch's standard error is 0 and the test is undefined).
    """

    level_a: str
    level_b: str
    difference: float
    ci_low: float | None
    ci_high: float | None
    t: float | None
    df: float | None
    p_value: float | None
    p_holm: float | None


@dataclass(frozen=True, slots=True)
class ClassicalAnova:
    """One-way ANOVA assuming equal variances, from per-level n, mean and sd.

    ``residual_sd`` is √MSW, the pooled within-level standard deviation. ``f`` and
    ``p_value`` are None when there is no within-level spread.
    """

    f: float | None
    df_between: int
    df_within: int
    p_value: float | None
    ss_between: float
    ss_within: float
    residual_sd: float | None
    r_squared: float | None


def welch_pair(a: Summary, b: Summary, confidence: float = 0.95) -> PairwiseComparison:
    """Welch's t-test and interval for mean(a) − mean(b); needs n ≥ 2 in both."""
    difference = mean_difference(a, b)
    share_a, share_b = a.sd**2 / a.n, b.sd**2 / b.n
    variance = share_a + share_b
    if variance <= 0:
        return PairwiseComparison(a.level, b.level, difference, None, None, None, None, None, None)
    standard_error = math.sqrt(variance)
    # Welch–Satterthwaite degrees of freedom.
    df = variance**2 / (share_a**2 / (a.n - 1) + share_b**2 / (b.n - 1))
    t = difference / standard_error
    p_value = 2 * t_sf(abs(t), df)
    half = t_ppf(0.5 + confidence / 2, df) * standard_error
    return PairwiseComparison(
        a.level, b.level, difference, difference - half, difference + half, t, df, p_value, p_value
    )


def welch_anova(summaries: Sequence[Summary]) -> tuple[float, float, float, float] | None:
    """Welch's (1951) one-way ANOVA: (F, df1, df2, p); None if any level has sd 0.

    Weights are nᵢ/sᵢ², so a level without spread would get infinite weight.
    """
    if len(summaries) < 2 or any(s.sd is None or s.sd <= 0 for s in summaries):
        return None
    k = len(summaries)
    weights = [s.n / s.sd**2 for s in summaries]
    total_weight = sum(weights)
    offsets = deviations(summaries, anchored(summaries[0])[0])
    weighted_mean = sum(w * d for w, d in zip(weights, offsets, strict=True)) / total_weight
    between = sum(w * (d - weighted_mean) ** 2 for w, d in zip(weights, offsets, strict=True)) / (
        k - 1
    )
    lam = sum(
        (1 - w / total_weight) ** 2 / (s.n - 1) for w, s in zip(weights, summaries, strict=True)
    )
    f = between / (1 + 2 * (k - 2) / (k**2 - 1) * lam)
    df2 = (k**2 - 1) / (3 * lam)
    return f, float(k - 1), df2, f_sf(f, k - 1, df2)


def classical_anova(summaries: Sequence[Summary]) -> ClassicalAnova:
    """Equal-variance one-way ANOVA from per-level n, mean and sd (levels with n ≥ 1)."""
    used = [s for s in summaries if s.n >= 1 and s.mean is not None]
    total = sum(s.n for s in used)
    offsets = deviations(used, anchored(used[0])[0])
    grand = sum(s.n * d for s, d in zip(used, offsets, strict=True)) / total
    ss_between = sum(s.n * (d - grand) ** 2 for s, d in zip(used, offsets, strict=True))
    ss_within = sum((s.n - 1) * s.sd**2 for s in used if s.n >= 2 and s.sd is not None)
    df_between, df_within = len(used) - 1, total - len(used)
    f = p_value = residual_sd = r_squared = None
    if df_within > 0:
        mean_square_within = ss_within / df_within
        residual_sd = math.sqrt(mean_square_within)
        if mean_square_within > 0 and df_between > 0:
            f = (ss_between / df_between) / mean_square_within
            p_value = f_sf(f, df_between, df_within)
    if ss_between + ss_within > 0:
        r_squared = ss_between / (ss_between + ss_within)
    return ClassicalAnova(
        f, df_between, df_within, p_value, ss_between, ss_within, residual_sd, r_squared
    )


def holm(p_values: Sequence[float]) -> tuple[float, ...]:
    """Holm's (1979) step-down adjusted p-values, in the order given.

    Sorted ascending, the j-th smallest (1-based) is multiplied by m − j + 1; a
    running maximum keeps the adjusted values in the same order; capped at 1.
    """
    order = sorted(range(len(p_values)), key=lambda i: p_values[i])
    adjusted = [0.0] * len(p_values)
    running = 0.0
    for position, index in enumerate(order):
        running = max(running, (len(p_values) - position) * p_values[index])
        adjusted[index] = min(1.0, running)
    return tuple(adjusted)


def pairwise_welch(
    summaries: Sequence[Summary], confidence: float = 0.95
) -> tuple[PairwiseComparison, ...]:
    """Every pair of levels by Welch's t; Holm corrects over the pairs whose test is defined."""
    pairs = [welch_pair(a, b, confidence) for a, b in combinations(summaries, 2)]
    defined = [i for i, pair in enumerate(pairs) if pair.p_value is not None]
    adjusted = holm([pairs[i].p_value for i in defined])
    for i, p_holm in zip(defined, adjusted, strict=True):
        pairs[i] = replace(pairs[i], p_holm=p_holm)
    return tuple(pairs)
