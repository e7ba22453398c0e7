"""Shares of a 0/1 event and their comparison between levels.

* The share in each level with the Wilson (1927) score interval, which stays
  inside 0–100% and keeps its coverage near the nominal level for small n and
  shares near 0 or 1, where the Wald interval p ± z·√(p(1−p)/n) fails.
* The difference of two shares with Newcombe's (1998) hybrid score interval
  (his method 10), built from the two Wilson intervals.
* One test of equal shares across levels: with two levels the two-proportion z
  test (pooled standard error; z² is Pearson's chi-square without continuity
  correction), with more Pearson's chi-square test of homogeneity on the k × 2
  table; then every pair by the z test, Holm-adjusted (``welch.holm``).

Everything works from whole-number counts per level, so there is nothing to
lose at large offsets: the event counts come from the engine as integers.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from itertools import combinations

import ibis.expr.types as ir

from briefgen.stats.core.distributions import chi2_sf, norm_ppf, norm_sf
from briefgen.stats.welch import holm


@dataclass(frozen=True, slots=True)
class Share:
    """The share of rows where an event holds (the target is 1, or is 0 for counts).

    ``events`` of ``n`` non-missing values; ``share`` = events / n (a proportion,
    0 to 1) with its Wilson score interval; all None when n = 0.
    """

    level: str
    n: int
    events: int
    share: float | None
    ci_low: float | None
    ci_high: float | None


@dataclass(frozen=True, slots=True)
class ShareDifference:
    """share(level_a) − share(level_b), as a proportion, with Newcombe's interval.

    ``z`` and ``p_value`` are the two-proportion z test (None when both levels
    have the same single value, so the pooled share is 0 or 1); ``p_holm`` is
    Holm-adjusted over the pairs of the group variable.
    """

    level_a: str
    level_b: str
    difference: float
    ci_low: float
    ci_high: float
    z: float | None
    p_value: float | None
    p_holm: float | None


@dataclass(frozen=True, slots=True)
class ProportionComparison:
    """The test of equal shares across the levels of one group variable, and every pair.

    ``test`` is ``two_proportion_z`` (two levels; ``statistic`` is z of first −
    second, ``df`` None) or ``chi_square`` (more; Pearson's X² on k − 1 ``df``).
    ``undefined_reason`` says why no test ran (every value the same), else None.
    """

    variable: str | None
    levels: tuple[str, ...]
    test: str
    statistic: float | None
    df: int | None
    p_value: float | None
    confidence: float
    pairwise: tuple[ShareDifference, ...]
    undefined_reason: str | None


def normal_quantile(confidence: float) -> float:
    """Two-sided standard normal quantile for ``confidence``."""
    return norm_ppf(0.5 + confidence / 2)


def wilson_interval(events: int, n: int, confidence: float = 0.95) -> tuple[float, float]:
    """Wilson (1927) score interval for events / n; needs n ≥ 1."""
    z = normal_quantile(confidence)
    share = events / n
    z2n = z * z / n
    centre = (share + z2n / 2) / (1 + z2n)
    half = z / (1 + z2n) * math.sqrt(share * (1 - share) / n + z2n / (4 * n))
    # At events = 0 or n one bound is exactly 0 or 1; rounding must not move it.
    low = 0.0 if events == 0 else max(0.0, centre - half)
    high = 1.0 if events == n else min(1.0, centre + half)
    return low, high


def share_of(level: str, events: int, n: int, confidence: float) -> Share:
    """A Share with its Wilson interval; no share when n = 0."""
    if n == 0:
        return Share(level, 0, 0, None, None, None)
    low, high = wilson_interval(events, n, confidence)
    return Share(level, n, events, events / n, low, high)


def newcombe_interval(
    events_a: int, n_a: int, events_b: int, n_b: int, confidence: float = 0.95
) -> tuple[float, float, float]:
    """(difference, low, high) of share_a − share_b, Newcombe (1998) method 10."""
    p_a, p_b = events_a / n_a, events_b / n_b
    low_a, high_a = wilson_interval(events_a, n_a, confidence)
    low_b, high_b = wilson_interval(events_b, n_b, confidence)
    difference = p_a - p_b
    below = math.sqrt((p_a - low_a) ** 2 + (high_b - p_b) ** 2)
    above = math.sqrt((high_a - p_a) ** 2 + (p_b - low_b) ** 2)
    return difference, difference - below, difference + above


def two_proportion_z(
    events_a: int, n_a: int, events_b: int, n_b: int
) -> tuple[float | None, float | None]:
    """(z, two-sided p) of the pooled two-proportion z test; (None, None) when undefined."""
    pooled = (events_a + events_b) / (n_a + n_b)
    variance = pooled * (1 - pooled) * (1 / n_a + 1 / n_b)
    if variance <= 0:
        return None, None
    z = (events_a / n_a - events_b / n_b) / math.sqrt(variance)
    return z, 2 * norm_sf(abs(z))


def chi_square_homogeneity(shares: Sequence[Share]) -> tuple[float | None, int, float | None]:
    """Pearson's X² test that every level has the same share: (X², df, p); None when undefined."""
    total_n = sum(s.n for s in shares)
    total_events = sum(s.events for s in shares)
    df = len(shares) - 1
    if total_events in (0, total_n):
        return None, df, None
    statistic = 0.0
    for s in shares:
        for observed, column_total in (
            (s.events, total_events),
            (s.n - s.events, total_n - total_events),
        ):
            expected = s.n * column_total / total_n
            statistic += (observed - expected) ** 2 / expected
    return statistic, df, chi2_sf(statistic, df)


def pairwise_shares(shares: Sequence[Share], confidence: float) -> tuple[ShareDifference, ...]:
    """Every pair of levels: Newcombe interval and z test, Holm over the defined tests."""
    pairs = []
    for a, b in combinations(shares, 2):
        difference, low, high = newcombe_interval(a.events, a.n, b.events, b.n, confidence)
        z, p = two_proportion_z(a.events, a.n, b.events, b.n)
        pairs.append(ShareDifference(a.level, b.level, difference, low, high, z, p, p))
    defined = [i for i, pair in enumerate(pairs) if pair.p_value is not None]
    for i, p_holm in zip(defined, holm([pairs[i].p_value for i in defined]), strict=True):
        pairs[i] = replace(pairs[i], p_holm=p_holm)
    return tuple(pairs)


def compare_shares(
    shares: Sequence[Share], confidence: float = 0.95, *, variable: str | None = None
) -> ProportionComparison | None:
    """Test equal shares across levels with n ≥ 1; None when fewer than two such levels."""
    used = [s for s in shares if s.n >= 1]
    if len(used) < 2:
        return None
    pairwise = pairwise_shares(used, confidence)
    if len(used) == 2:
        test, statistic, df, p = "two_proportion_z", pairwise[0].z, None, pairwise[0].p_value
    else:
        test = "chi_square"
        statistic, df, p = chi_square_homogeneity(used)
    reason = None
    if p is None:
        value = "1" if used[0].events == used[0].n else "0"
        reason = f"every value is {value}, so there is nothing to compare"
    return ProportionComparison(
        variable, tuple(s.level for s in used), test, statistic, df, p, confidence, pairwise, reason
    )


def level_shares(table: ir.Table, event_value: float, confidence: float) -> dict[object, Share]:
    """One query: per ``level``, non-missing ``y`` and rows where ``y`` equals ``event_value``."""
    y = table.y
    rows = (
        table.group_by("level")
        .aggregate(n=y.count(), events=(y == event_value).sum())
        .to_pyarrow()
        .to_pylist()
    )
    return {
        row["level"]: share_of(row["level"], int(row["events"] or 0), int(row["n"]), confidence)
        for row in rows
    }
