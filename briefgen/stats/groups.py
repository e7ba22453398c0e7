"""The target by the levels of one group variable: summaries, boxes and their comparison.

The levels are the ones the brief shows (folded by the analysis frame), so the
summaries, the boxes, Welch's tests, the skewness check and the rank test all
cover the same rows, "Other" included.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import ClassVar

from briefgen.config import BriefSpec
from briefgen.profile import level_order
from briefgen.stats.compare import GroupComparison, compare_groups
from briefgen.stats.core.frame import AnalysisFrame, ShownLevels
from briefgen.stats.core.summary import BoxStats, Summary, summarise
from briefgen.stats.core.usage import RowUsage, usage
from briefgen.stats.proportions import ProportionComparison, Share, compare_shares, level_shares


@dataclass(frozen=True, slots=True)
class GroupResult:
    """Summaries and boxes for every shown level of one group variable, in level order.

    ``rows_without_level`` counts rows with no level at all; ``shown`` says which
    levels were kept and which folded into "Other". ``comparison`` is None when
    fewer than two levels have two or more values.

    ``shares`` hold, per level in the same order, the share of 1s (binary target)
    or of 0s (count target) with Wilson intervals, else empty. For a binary target
    ``share_comparison`` tests equal shares (``comparison`` and ``boxes`` are then
    empty: a mean test and Tukey boxes do not fit 0/1 values).
    """

    key: str
    variable: str
    summaries: tuple[Summary, ...]
    boxes: tuple[BoxStats, ...]
    rows_without_level: int
    shown: ShownLevels
    comparison: GroupComparison | None
    usage: RowUsage
    shares: tuple[Share, ...] = ()
    share_comparison: ProportionComparison | None = None

    @property
    def named_summaries(self) -> tuple[Summary, ...]:
        """Summaries of real levels, without "Other (k levels)".

        A fold mixes several levels, so it must never be named highest or lowest as if
        it were one; findings choose among these.
        """
        return tuple(s for s in self.summaries if not self.shown.is_fold(s.level))


@dataclass(frozen=True, slots=True)
class GroupAnalysis:
    """Summarise and compare the target across the levels of ``variable``."""

    variable: str
    confidence: float
    name: ClassVar[str] = "groups"
    many: ClassVar[bool] = True
    result: ClassVar[type] = GroupResult

    @classmethod
    def plan(cls, spec: BriefSpec, frame: AnalysisFrame) -> tuple[GroupAnalysis, ...]:
        return tuple(cls(group, spec.confidence) for group in spec.groups)

    def __call__(self, frame: AnalysisFrame) -> GroupResult:
        column = frame.group_column(self.variable)
        table = frame.table.select(level=frame.table[column], y=frame.table.y)
        # The skewness the comparison needs comes from the same pass (a query fewer).
        result = summarise(table, ["level"], self.confidence, third_moments=not frame.binary)
        without = result.summaries.get((None,))
        summaries = tuple(s for key, s in result.summaries.items() if key[0] is not None)
        shown = frame.shown[self.variable]
        binary = frame.binary
        # A 0/1 target's medians are 0 or 1; its levels read in order of their share of 1s.
        ranked = tuple(replace(s, median=s.mean) for s in summaries) if binary else summaries
        order = level_order(ranked, shown.other_label)
        by_level = {s.level: s for s in summaries}
        ordered = tuple(by_level[level] for level in order)
        levels_table = table.filter(table.level.notnull())
        kind = frame.kind.kind if frame.kind is not None else "continuous"
        shares, share_comparison, boxes = (), None, result.boxes
        if kind in ("binary", "count"):
            by_share = level_shares(levels_table, 1.0 if kind == "binary" else 0.0, self.confidence)
            shares = tuple(by_share[s.level] for s in ordered)
        if kind == "binary":
            comparison, boxes = None, {}
            share_comparison = compare_shares(shares, self.confidence, variable=self.variable)
        else:
            comparison = compare_groups(
                levels_table,
                ordered,
                self.confidence,
                variable=self.variable,
                fold=shown.other_label,
                centred={key[0]: sums for key, sums in result.centred.items()},
            )
        used = sum(s.n for s in ordered)
        return GroupResult(
            key=f"group-{self.variable}",
            variable=self.variable,
            summaries=ordered,
            boxes=tuple(boxes[(s.level,)] for s in ordered if (s.level,) in boxes),
            rows_without_level=without.rows if without else 0,
            shown=shown,
            comparison=comparison,
            usage=usage(
                f"group:{self.variable}",
                used,
                f"comparison by {self.variable}",
                f"no value in '{self.variable}'",
                without.n if without else 0,
            ),
            shares=shares,
            share_comparison=share_comparison,
        )
