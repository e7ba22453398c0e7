"""Skewness of the target and rank-based tests, computed from aggregates the engine returns.

The engine ranks the rows (average ranks for ties) and returns one doubled rank
sum per level plus the tie term Σ(t³ − t); Python never sees a row. Doubling the
average rank makes every rank an integer, so the sums are exact 64-bit integers
and the statistics below are formed from exact integer arithmetic before the
final division.

Skewness is the sample skewness g1 = m3 / m2^(3/2) (the plain moment ratio,
``scipy.stats.skew(..., bias=True)``) of the residuals from each level's mean.
Residuals, not raw values: two symmetric groups with different means make the
pooled raw values look skewed, which says nothing about whether a test of means
is trustworthy within each group.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, replace
from fractions import Fraction
from itertools import combinations

import ibis.expr.types as ir

from briefgen.stats.core.distributions import chi2_sf, norm_sf
from briefgen.stats.core.exact import DECIMAL, as_integer, exact_sum
from briefgen.stats.core.ranking import (
    counting_pays,
    doubled_rank_and_ties,
    doubled_ranks_of_values,
)
from briefgen.stats.welch import holm

logger = logging.getLogger(__name__)

# Bulmer (1979), "Principles of Statistics", calls a distribution with
# |skewness| > 1 highly skewed. A convention, not a test: used to decide which
# comparison the brief leans on.
STRONG_SKEW = 1.0


@dataclass(frozen=True, slots=True)
class RankSums:
    """What the engine returns for a rank test: per-level counts and doubled rank sums.

    ``doubled_rank_sums[i]`` is twice the sum of the average ranks in ``levels[i]``
    (an exact integer); ``tie_term`` is Σ(t³ − t) over groups of tied values.
    """

    levels: tuple[str, ...]
    counts: tuple[int, ...]
    doubled_rank_sums: tuple[int, ...]
    tie_term: float

    @property
    def total(self) -> int:
        return sum(self.counts)

    def rank_sum(self, level: str) -> float:
        return self.doubled_rank_sums[self.levels.index(level)] / 2


@dataclass(frozen=True, slots=True)
class RankTest:
    """A rank-based comparison: Mann–Whitney U (two levels) or Kruskal–Wallis H (more).

    ``statistic`` is U for the first level (as ``scipy.stats.mannwhitneyu`` reports
    it) or the tie-corrected H. ``z`` is the standardised U (normal approximation
    with tie and continuity corrections); ``df`` the chi-square degrees of freedom
    of H. ``p_value`` is None when every value is tied, so ranks carry no information.
    """

    test: str
    levels: tuple[str, ...]
    statistic: float
    z: float | None
    df: int | None
    p_value: float | None
    pairwise: tuple[RankPair, ...] = ()


@dataclass(frozen=True, slots=True)
class RankPair:
    """Dunn's (1964) test of two levels' mean ranks, from the ranking of all levels together.

    z = (R̄_a − R̄_b) / √((N(N+1)/12 − T/(12(N−1))) · (1/n_a + 1/n_b)), T = Σ(t³ − t),
    two-sided normal p; ``p_holm`` is Holm-adjusted over every pair of the variable.
    Positive ``z``: level_a tends to higher values. None fields when all values tie.
    """

    level_a: str
    level_b: str
    mean_rank_a: float
    mean_rank_b: float
    z: float | None
    p_value: float | None
    p_holm: float | None


def usable_rows(levels_table: ir.Table, levels: Sequence[str]) -> ir.Table:
    """Rows of the named levels that have a target value."""
    table = levels_table
    return table.filter(table.y.notnull() & table.level.isin(list(levels))).select("level", "y")


# Below this many rows the one sort is quick and an estimate of the distinct values
# would only add a query (each costs Spark a job).
COUNT_FROM = 100_000


def _distinct(rows: ir.Table) -> int | None:
    """An estimate (HyperLogLog) of the distinct target values among ``rows``: one cheap scan."""
    return rows.y.approx_nunique().to_pyarrow().as_py()


def rank_sums(
    levels_table: ir.Table, levels: Sequence[str], values: int | None = None
) -> RankSums | None:
    """Doubled rank sums per level and the tie term, ranking all rows of ``levels`` together.

    ``values``, when the caller knows it, is the number of rows ranked (target values in
    ``levels``); it spares the engine a second window that counts them.
    """
    rows = usable_rows(levels_table, levels)
    # The tie term Σ(t³ − t) over groups of t tied values is Σ(t² − 1) over their rows,
    # so each level's rows add their share beside their rank sum. 38-digit integers: t³
    # overflows int64 once a tie group exceeds ~2 million rows, and a float sum of such
    # terms would depend on the engine's thread order.
    if values is not None and values >= COUNT_FROM and counting_pays(_distinct(rows), values):
        # Values repeat: rank the distinct values from their counts, then weight by level.
        cells = rows.group_by(["level", "y"]).aggregate(cell=rows.count())
        ranked = doubled_ranks_of_values(cells, "y", weight="cell")
        joined = cells.inner_join(ranked, cells.y == ranked.value)
        ties = joined.ties.cast(DECIMAL)
        per_level = joined.group_by("level").aggregate(
            n=joined.cell.sum(),
            doubled=(joined.cell * joined.doubled).sum(),
            ties=exact_sum(joined.cell.cast(DECIMAL) * (ties * ties - 1)),
        )
    else:
        counted = rows.count().over() if values is None else values
        # Twice the average rank is an integer (see stats.core.ranking).
        doubled, tied = doubled_rank_and_ties(rows.y, counted)
        ranked = rows.mutate(doubled=doubled, tied=tied.cast(DECIMAL))
        per_level = ranked.group_by("level").aggregate(
            n=ranked.count(),
            doubled=ranked.doubled.sum(),
            ties=exact_sum(ranked.tied * ranked.tied - 1),
        )
    found = {row["level"]: row for row in per_level.to_pyarrow().to_pylist()}
    present = [level for level in levels if level in found]
    if len(present) < 2:
        return None
    return RankSums(
        levels=tuple(present),
        counts=tuple(int(found[level]["n"]) for level in present),
        doubled_rank_sums=tuple(int(found[level]["doubled"]) for level in present),
        tie_term=float(sum(as_integer(row["ties"]) for row in found.values())),
    )


def mann_whitney(sums: RankSums) -> RankTest:
    """Two-sided Mann–Whitney U, normal approximation with tie and continuity corrections.

    Matches ``scipy.stats.mannwhitneyu(alternative="two-sided", method="asymptotic",
    use_continuity=True)``: U is reported for the first level, the p-value uses
    max(U1, U2) − 0.5 and is capped at 1.
    """
    n1, n2 = sums.counts[0], sums.counts[1]
    total = n1 + n2
    # U1 − n1·n2/2 = R1 − n1(N + 1)/2; doubled, it is an exact integer.
    doubled_offset = sums.doubled_rank_sums[0] - n1 * (total + 1)
    u1 = sums.doubled_rank_sums[0] / 2 - n1 * (n1 + 1) / 2
    variance = n1 * n2 / 12 * ((total + 1) - sums.tie_term / (total * (total - 1)))
    z = p_value = None
    if variance > 0:
        z = (abs(doubled_offset) / 2 - 0.5) / math.sqrt(variance)
        p_value = min(1.0, 2 * norm_sf(z))
    return RankTest(
        test="mann_whitney", levels=sums.levels, statistic=u1, z=z, df=None, p_value=p_value
    )


def kruskal_wallis(sums: RankSums) -> RankTest:
    """Kruskal–Wallis H with the tie correction, referred to chi-square on k − 1 df.

    H = 12/(N(N+1)) · Σ nᵢ(R̄ᵢ − (N+1)/2)², the centred form, so no large terms
    cancel; it equals ``scipy.stats.kruskal``'s 12/(N(N+1))·ΣRᵢ²/nᵢ − 3(N+1).
    """
    total = sums.total
    # nᵢ(R̄ᵢ − (N+1)/2)² = (2Rᵢ − nᵢ(N+1))² / (4nᵢ): exact integers up to the division.
    spread = sum(
        (doubled - n * (total + 1)) ** 2 / (4 * n)
        for n, doubled in zip(sums.counts, sums.doubled_rank_sums, strict=True)
    )
    h = 12 / (total * (total + 1)) * spread
    correction = 1 - sums.tie_term / (total**3 - total)
    df = len(sums.levels) - 1
    if correction <= 0:
        return RankTest("kruskal_wallis", sums.levels, h, None, df, None)
    h /= correction
    p_value = chi2_sf(h, df)
    return RankTest("kruskal_wallis", sums.levels, h, None, df, p_value)


def dunn_pairs(sums: RankSums) -> tuple[RankPair, ...]:
    """Every pair of levels by Dunn's (1964) z on mean ranks, Holm-adjusted over the pairs.

    Uses the joint ranking behind Kruskal–Wallis, so the pairwise tests and the overall
    test agree about which values count as high.
    """
    total = sums.total
    scale = total * (total + 1) / 12 - sums.tie_term / (12 * (total - 1))
    pairs = []
    for i, j in combinations(range(len(sums.levels)), 2):
        rank_a = sums.doubled_rank_sums[i] / (2 * sums.counts[i])
        rank_b = sums.doubled_rank_sums[j] / (2 * sums.counts[j])
        z = p_value = None
        if scale > 0:
            z = (rank_a - rank_b) / math.sqrt(scale * (1 / sums.counts[i] + 1 / sums.counts[j]))
            p_value = min(1.0, 2 * norm_sf(abs(z)))
        pairs.append([sums.levels[i], sums.levels[j], rank_a, rank_b, z, p_value, p_value])
    defined = [k for k, pair in enumerate(pairs) if pair[5] is not None]
    for k, adjusted in zip(defined, holm([pairs[k][5] for k in defined]), strict=True):
        pairs[k][6] = adjusted
    return tuple(RankPair(*pair) for pair in pairs)


def rank_test(
    levels_table: ir.Table, levels: Sequence[str], values: int | None = None
) -> RankTest | None:
    """Mann–Whitney for two levels, Kruskal–Wallis for more; None with fewer than two.

    Either carries Dunn's pairwise tests, which order claims rest on.
    """
    sums = rank_sums(levels_table, levels, values)
    if sums is None:
        return None
    test = mann_whitney(sums) if len(sums.levels) == 2 else kruskal_wallis(sums)
    return replace(test, pairwise=dunn_pairs(sums))


def lean_on(skewness: float | None, ranks: RankTest | None, *, welch_runs: bool) -> tuple[str, str]:
    """The test a comparison's sentence rests on, "welch" or "rank", and why in a phrase.

    The rank test when the residuals are strongly skewed, and also when Welch's test
    cannot run (no spread within levels) but ranks, which allow ties, are defined.
    """
    rank_defined = ranks is not None and ranks.p_value is not None
    if not welch_runs:
        if rank_defined:
            return "rank", "Welch's test cannot run without spread within levels; ranks allow ties"
        return "welch", "neither Welch's test nor the rank test can run on these values"
    if skewness is None:
        return "welch", "skewness undefined (too few values or no spread)"
    if abs(skewness) <= STRONG_SKEW:
        return "welch", f"residuals not strongly skewed (|skewness| {abs(skewness):.2f} ≤ 1)"
    if not rank_defined:
        return "welch", "strongly skewed, but the rank test is undefined (all values tied)"
    return "rank", f"residuals strongly skewed (|skewness| {abs(skewness):.2f} > 1)"


def pooled_skewness(centred: Iterable[tuple[int, Fraction, Fraction]]) -> float | None:
    """Sample skewness g1 of the residuals y − (mean of its level), from each level's
    (n, Σ(y − ȳ)², Σ(y − ȳ)³) (``summarise(..., third_moments=True)``): no query.

    The residuals of every level have mean 0, so g1 = (ΣS3/N) / (ΣS2/N)^1.5. None
    with fewer than three values or no spread at all.
    """
    levels = list(centred)
    n = sum(level[0] for level in levels)
    if n < 3:
        return None
    m2 = sum((level[1] for level in levels), Fraction(0)) / n
    m3 = sum((level[2] for level in levels), Fraction(0)) / n
    if m2 <= 0:
        return None
    return float(m3) / float(m2) ** 1.5
