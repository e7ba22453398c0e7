"""Which levels of a group variable the data put at the top and the bottom, and how surely.

"Highest" is a claim about one level against every other, so it is made only where
the adjusted pairwise test separates the named level from each level next to it;
otherwise the levels that cannot be told apart are named together. The pairwise
tests are the ones the verdict leans on: Welch's t on means (Holm-adjusted over the
pairs), or Dunn's z on mean ranks from the Kruskal–Wallis ranking (Holm-adjusted).
On the rank path levels are ordered by mean rank, the quantity the rank tests are
about, so a level is never named highest because of a median that ties with others.

The interval shown for top against bottom is adjusted too: the pair is picked after
seeing the data, so its own interval alone would cover less often than it says.
It is Welch's interval at the Bonferroni level 1 − α/m over the m pairs (Dunn 1961).
"""

from __future__ import annotations

from dataclasses import dataclass

from briefgen.stats.compare import GroupComparison
from briefgen.stats.core.summary import Summary
from briefgen.stats.welch import welch_pair


@dataclass(frozen=True, slots=True)
class Ordering:
    """Top and bottom levels as far as the adjusted pairwise tests tell them apart.

    ``measure`` is "mean" or "rank"; ``values`` the quantity levels are ordered by
    (means, or mean ranks). ``top`` starts with the highest level and lists every
    level not separated from it; ``bottom`` likewise from the lowest. ``ends_apart``
    says whether the highest and lowest are separated from each other. The interval
    of the highest minus the lowest mean is at ``pair_confidence`` (means only).
    """

    measure: str
    values: dict[str, float]
    top: tuple[str, ...]
    bottom: tuple[str, ...]
    ends_apart: bool
    pairs: int
    pair_confidence: float | None
    gap: float | None
    gap_ci_low: float | None
    gap_ci_high: float | None

    @property
    def highest(self) -> str:
        return self.top[0]

    @property
    def lowest(self) -> str:
        return self.bottom[0]

    @property
    def single_top(self) -> bool:
        return len(self.top) == 1 and self.top[0] not in self.bottom

    @property
    def single_bottom(self) -> bool:
        return len(self.bottom) == 1 and self.bottom[0] not in self.top

    @property
    def flat(self) -> bool:
        """Every named level has the same value: no order at all to state."""
        return len(set(self.values.values())) <= 1


def _pair_p(comparison: GroupComparison, a: str, b: str, rank: bool) -> float | None:
    pairs = comparison.rank_test.pairwise if rank else comparison.pairwise
    for pair in pairs:
        if {pair.level_a, pair.level_b} == {a, b}:
            return pair.p_holm
    return None


def order_levels(
    summaries: list[Summary],
    comparison: GroupComparison,
    alpha: float,
    overall_clear: bool,
    other_label: str | None = None,
    *,
    by_means: bool = False,
) -> Ordering:
    """Order the usable levels and find how many share the top and the bottom.

    With two levels the overall test is the pairwise test, so they are apart exactly
    when ``overall_clear``. "Other" (a fold of small levels) is never named highest
    or lowest while two real levels remain. ``by_means`` orders by means and Welch's
    pairs whatever the comparison leans on (a count target with many zeros).
    """
    rank = not by_means and comparison.leans_on == "rank" and comparison.rank_test is not None
    named = [s for s in summaries if s.level != other_label] if other_label else list(summaries)
    if len(named) < 2:
        named = list(summaries)
    if rank:
        mean_ranks = {}
        for pair in comparison.rank_test.pairwise:
            mean_ranks[pair.level_a], mean_ranks[pair.level_b] = pair.mean_rank_a, pair.mean_rank_b
        values = {s.level: mean_ranks[s.level] for s in named if s.level in mean_ranks}
    else:
        values = {s.level: s.mean for s in named}
    order = sorted(values, key=lambda level: (-values[level], str(level)))
    two = len(comparison.levels) == 2

    def apart(a: str, b: str) -> bool:
        if values[a] == values[b] or not overall_clear:
            return False
        if two:
            return True
        p = _pair_p(comparison, a, b, rank)
        return p is not None and p < alpha

    top = (order[0], *(level for level in order[1:] if not apart(order[0], level)))
    bottom = (order[-1], *(level for level in reversed(order[:-1]) if not apart(order[-1], level)))
    m = max(1, len(comparison.levels) * (len(comparison.levels) - 1) // 2)
    gap = low = high = confidence = None
    if not rank:
        by_level = {s.level: s for s in named}
        confidence = 1 - alpha / m
        pair = welch_pair(by_level[order[0]], by_level[order[-1]], confidence)
        gap, low, high = pair.difference, pair.ci_low, pair.ci_high
    return Ordering(
        measure="rank" if rank else "mean",
        values=values,
        top=top,
        bottom=bottom,
        ends_apart=apart(order[0], order[-1]),
        pairs=m,
        pair_confidence=confidence,
        gap=gap,
        gap_ci_low=low,
        gap_ci_high=high,
    )
