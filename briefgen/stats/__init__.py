"""Statistics stage: aggregate queries run by the engine, returned as small frozen results.

``compute`` runs every analysis the spec asks for and gathers the results in one
``BriefStats``; figures, findings, tables and stats.json all read from it.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import ibis

from briefgen.config import BriefSpec
from briefgen.errors import DataError
from briefgen.profile import MAX_LEVELS, fold_small_levels, level_order
from briefgen.source import Source
from briefgen.stats.accounting import Accounting, count_rows
from briefgen.stats.frame import AnalysisFrame, build_frame
from briefgen.stats.groups import ALL_ROWS, BoxStats, GroupStats, Summary, summarise_levels
from briefgen.stats.regression import RegressionFit, fit_lines
from briefgen.stats.sample import Sample, draw_sample

log = logging.getLogger(__name__)

__all__ = ["BriefStats", "BoxStats", "GroupStats", "RegressionFit", "Sample", "Summary", "compute"]


@dataclass(frozen=True, slots=True)
class BriefStats:
    """Every number the brief shows, computed once."""

    target: str
    confidence: float
    overall: Summary
    overall_box: BoxStats | None
    groups: tuple[GroupStats, ...]
    fits: tuple[RegressionFit, ...]
    sample: Sample
    accounting: Accounting


def _group_stats(frame: AnalysisFrame, group: str, confidence: float) -> GroupStats:
    rows = frame.levels(group)
    summaries, boxes = summarise_levels(rows, confidence)
    if len(summaries) > MAX_LEVELS:
        rows = fold_small_levels(rows, summaries)
        summaries, boxes = summarise_levels(rows, confidence)
    order = level_order(summaries)
    by_level = {s.level: s for s in summaries}
    box_by_level = {b.level: b for b in boxes}
    column = frame.group_column(group)
    without = int(frame.table.filter(frame.table[column].isnull()).count().to_pyarrow().as_py())
    return GroupStats(
        variable=group,
        summaries=tuple(by_level[level] for level in order),
        boxes=tuple(box_by_level[level] for level in order if level in box_by_level),
        rows_without_level=without,
    )


def compute(source: Source, spec: BriefSpec) -> BriefStats:
    """Run the analyses named by ``spec`` on ``source`` in its engine."""
    frame = build_frame(source.table, spec)
    table = frame.table
    confidence = spec.confidence
    overall_rows = table.mutate(level=ibis.literal(ALL_ROWS))
    summaries, boxes = summarise_levels(overall_rows, confidence)
    if not summaries or summaries[0].n == 0:
        raise DataError(
            f"{source.label}: no row has a numeric value in '{spec.target}'; check the target column."
        )
    overall = summaries[0]
    groups = tuple(_group_stats(frame, group, confidence) for group in spec.groups)
    predictor_columns = list(frame.predictors)
    fits = fit_lines(table, predictor_columns, confidence)
    fits = tuple(_rename_fit(fit, frame.predictors[fit.predictor]) for fit in fits)
    sample = draw_sample(table, predictor_columns)
    sample = Sample(
        rows_available=sample.rows_available,
        y=sample.y,
        x={frame.predictors[key]: values for key, values in sample.x.items()},
    )
    accounting = count_rows(source.table, frame, spec)
    log.info("statistics done: %d rows read", accounting.rows_read)
    return BriefStats(
        target=spec.target,
        confidence=confidence,
        overall=overall,
        overall_box=boxes[0] if boxes else None,
        groups=groups,
        fits=fits,
        sample=sample,
        accounting=accounting,
    )


def _rename_fit(fit: RegressionFit, name: str) -> RegressionFit:
    from dataclasses import replace

    return replace(fit, predictor=name)
