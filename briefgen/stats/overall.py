"""The target over every row: one summary and one Tukey box.

Also the guard that stops a brief before any sum of squares could overflow.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import ibis

from briefgen.config import BriefSpec
from briefgen.errors import DataError
from briefgen.stats.core.analysis import one_row
from briefgen.stats.core.frame import AnalysisFrame
from briefgen.stats.core.summary import ALL_ROWS, BoxStats, Summary, summarise_levels
from briefgen.stats.core.usage import RowUsage
from briefgen.stats.proportions import Share, share_of

# Squares of values beyond about 1e154 overflow double precision (max ≈ 1.8e308).
LARGEST_SQUARABLE = 1e150


@dataclass(frozen=True, slots=True)
class OverallResult:
    """Summary and box of the target over every row with a value.

    ``share`` is the share of 1s (binary target) or of 0s (count target) with its
    Wilson interval, else None; a binary target has no box (every 1 would be an
    outlier of a box at 0, or every 0 of one at 1).
    """

    key: str
    summary: Summary
    box: BoxStats | None
    usage: RowUsage
    share: Share | None = None


def check_magnitudes(frame: AnalysisFrame) -> None:
    """Stop with a sentence before any sum of squares can overflow to infinity."""
    names = {"y": frame.target} | frame.predictors
    row = one_row(frame.table, {key: frame.table[key].abs().max() for key in names})
    for key, name in names.items():
        if row[key] is not None and row[key] > LARGEST_SQUARABLE:
            raise DataError(
                f"{frame.label}: values in '{name}' reach {row[key]:.3g}, too large to square in "
                "double precision; rescale the column (for example divide it by a power of ten)."
            )


@dataclass(frozen=True, slots=True)
class Overall:
    """Summarise the target over all rows; stop with a message if no value is usable."""

    confidence: float
    name: ClassVar[str] = "overall"
    many: ClassVar[bool] = False
    result: ClassVar[type] = OverallResult

    @classmethod
    def plan(cls, spec: BriefSpec, frame: AnalysisFrame) -> tuple[Overall, ...]:
        return (cls(spec.confidence),)

    def __call__(self, frame: AnalysisFrame) -> OverallResult:
        check_magnitudes(frame)
        all_rows = frame.table.mutate(level=ibis.literal(ALL_ROWS))
        summaries, boxes = summarise_levels(all_rows, self.confidence)
        if not summaries or summaries[0].n == 0:
            raise DataError(
                f"{frame.label}: no row has a numeric value in '{frame.target}'; "
                "check the target column."
            )
        summary = summaries[0]
        kind = frame.kind.kind if frame.kind is not None else "continuous"
        share = None
        if kind in ("binary", "count"):
            events = frame.kind.ones if kind == "binary" else frame.kind.zeros
            share = share_of(ALL_ROWS, events, summary.n, self.confidence)
        return OverallResult(
            key="overall",
            summary=summary,
            box=boxes[0] if boxes and kind != "binary" else None,
            usage=RowUsage("target", summary.n),
            share=share,
        )
