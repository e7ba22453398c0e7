"""Statistics stage: aggregate queries run by the engine, returned as small frozen results.

``compute`` runs every analysis the spec asks for and gathers the results in one
``BriefStats``; figures, findings, tables and stats.json all read from it.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, replace

import ibis

from briefgen.config import BriefSpec
from briefgen.errors import DataError
from briefgen.profile import MAX_LEVELS, fold_small_levels, level_order
from briefgen.source import Source
from briefgen.stats.accounting import Accounting, Dropped, count_rows
from briefgen.stats.compare import GroupComparison, compare_groups
from briefgen.stats.correlation import Correlation, correlate
from briefgen.stats.frame import AnalysisFrame, build_frame
from briefgen.stats.groups import ALL_ROWS, BoxStats, GroupStats, Summary, summarise_levels
from briefgen.stats.regression import RegressionFit, fit_lines
from briefgen.stats.relationships import (
    GroupSlopes,
    LogFit,
    LogSkipped,
    fit_log_target,
    slopes_by_group,
)
from briefgen.stats.sample import Sample, draw_sample
from briefgen.stats.trend import Trend, time_trend
from briefgen.stats.twoway import CrossTable, cross_table

log = logging.getLogger(__name__)

__all__ = [
    "BoxStats",
    "BriefStats",
    "CrossTable",
    "GroupComparison",
    "GroupStats",
    "RegressionFit",
    "Sample",
    "Summary",
    "Trend",
    "compute",
]


@dataclass(frozen=True, slots=True)
class BriefStats:
    """Every number the brief shows, computed once."""

    target: str
    confidence: float
    overall: Summary
    overall_box: BoxStats | None
    groups: tuple[GroupStats, ...]
    comparisons: tuple[GroupComparison, ...]
    crosses: tuple[CrossTable, ...]
    trend: Trend | None
    fits: tuple[RegressionFit, ...]
    correlations: tuple[Correlation, ...]
    slopes_by_group: tuple[GroupSlopes, ...]
    log_fits: tuple[LogFit, ...] | LogSkipped | None
    sample: Sample
    accounting: Accounting

    def comparison(self, variable: str) -> GroupComparison | None:
        return next((c for c in self.comparisons if c.variable == variable), None)

    def correlation(self, predictor: str) -> Correlation | None:
        return next((c for c in self.correlations if c.predictor == predictor), None)

    def log_fit(self, predictor: str) -> LogFit | None:
        if not isinstance(self.log_fits, tuple):
            return None
        return next((f for f in self.log_fits if f.predictor == predictor), None)


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


# Squares of values beyond about 1e154 overflow double precision (max ≈ 1.8e308).
LARGEST_SQUARABLE = 1e150


def _check_magnitudes(source: Source, frame: AnalysisFrame) -> None:
    """Stop with a sentence before any sum of squares can overflow to infinity."""
    table = frame.table
    names = {"y": frame.target} | frame.predictors
    row = (
        table.aggregate(**{key: table[key].abs().max() for key in names})
        .to_pyarrow()
        .to_pylist()[0]
    )
    for key, name in names.items():
        if row[key] is not None and row[key] > LARGEST_SQUARABLE:
            raise DataError(
                f"{source.label}: values in '{name}' reach {row[key]:.3g}, too large to square in double "
                "precision; rescale the column (for example divide it by a power of ten)."
            )


def _overall(
    source: Source, spec: BriefSpec, frame: AnalysisFrame
) -> tuple[Summary, BoxStats | None]:
    """Summary and box of the target over all rows; stops with a message if no value is usable."""
    _check_magnitudes(source, frame)
    all_rows = frame.table.mutate(level=ibis.literal(ALL_ROWS))
    summaries, boxes = summarise_levels(all_rows, spec.confidence)
    if not summaries or summaries[0].n == 0:
        raise DataError(
            f"{source.label}: no row has a numeric value in '{spec.target}'; check the target column."
        )
    return summaries[0], boxes[0] if boxes else None


def _comparisons(
    frame: AnalysisFrame, groups: tuple[GroupStats, ...], confidence: float
) -> tuple[GroupComparison, ...]:
    """Tests between the levels of each group with at least two levels of n ≥ 2."""
    return tuple(
        c
        for group in groups
        if (
            c := compare_groups(
                frame.levels(group.variable), group.summaries, confidence, variable=group.variable
            )
        )
    )


def _crosses(frame: AnalysisFrame, spec: BriefSpec) -> tuple[CrossTable, ...]:
    """Two-way tables of means for each configured pair of groups."""
    return tuple(
        cross_table(
            frame.table,
            frame.group_column(a),
            frame.group_column(b),
            a,
            b,
            spec.confidence,
            spec.min_cell,
        )
        for a, b in spec.cross_pairs
    )


def _relationships(
    frame: AnalysisFrame, spec: BriefSpec
) -> tuple[
    tuple[RegressionFit, ...],
    tuple[Correlation, ...],
    tuple[GroupSlopes, ...],
    tuple[LogFit, ...] | LogSkipped | None,
]:
    """Line fits, correlations, per-group slopes and log fits, named by predictor."""
    table, confidence = frame.table, spec.confidence
    # Queries run on the frame's x0.. columns; results carry the configured predictor names.
    columns = list(frame.predictors)
    names = [frame.predictors[c] for c in columns]
    fits = tuple(
        replace(fit, predictor=frame.predictors[fit.predictor])
        for fit in fit_lines(table, columns, confidence)
    )
    correlations = correlate(table, columns, names, confidence) if columns else ()
    slopes = tuple(
        slopes_by_group(table, frame.group_column(g), frame.predictor_column(p), g, p, confidence)
        for p in spec.predictors
        for g in spec.groups
    )
    log_fits = (
        fit_log_target(table, columns, names, confidence) if spec.log_target and columns else None
    )
    if isinstance(log_fits, tuple):
        log_fits = tuple(replace(f, line=replace(f.line, predictor=f.predictor)) for f in log_fits)
    return fits, correlations, slopes, log_fits


def _sample(frame: AnalysisFrame) -> Sample:
    """Seeded sample of points for scatter plots, keyed by predictor name."""
    sample = draw_sample(frame.table, list(frame.predictors))
    return replace(sample, x={frame.predictors[key]: values for key, values in sample.x.items()})


def compute(source: Source, spec: BriefSpec) -> BriefStats:
    """Run the analyses named by ``spec`` on ``source`` in its engine."""
    frame = build_frame(source.table, spec)
    confidence = spec.confidence
    overall, overall_box = _overall(source, spec, frame)
    groups = tuple(_group_stats(frame, group, confidence) for group in spec.groups)
    comparisons = _comparisons(frame, groups, confidence)
    crosses = _crosses(frame, spec)
    trend = time_trend(frame.table, confidence, spec.time.period) if spec.time else None
    fits, correlations, slopes, log_fits = _relationships(frame, spec)
    sample = _sample(frame)
    accounting = _with_analysis_counts(count_rows(source.table, frame, spec), crosses, trend)
    log.info("statistics done: %d rows read", accounting.rows_read)
    return BriefStats(
        target=spec.target,
        confidence=confidence,
        overall=overall,
        overall_box=overall_box,
        groups=groups,
        comparisons=comparisons,
        crosses=crosses,
        trend=trend,
        fits=fits,
        correlations=correlations,
        slopes_by_group=slopes,
        log_fits=log_fits,
        sample=sample,
        accounting=accounting,
    )


def _with_analysis_counts(accounting: Accounting, crosses, trend) -> Accounting:
    """Add the rows each two-way table and the trend used, and what they left out."""
    used = dict(accounting.used)
    dropped = list(accounting.dropped)
    with_target = accounting.used["target"]
    for cross in crosses:
        pair = f"{cross.row_variable} × {cross.column_variable}"
        used[f"cross:{pair}"] = cross.total.n if cross.total else 0
        if with_target > used[f"cross:{pair}"]:
            reason = "no value in one of the two groups"
            dropped.append(
                Dropped(f"the table of {pair}", reason, with_target - used[f"cross:{pair}"])
            )
    if trend is not None:
        used["trend"] = trend.rows_used
        if with_target > trend.rows_used:
            dropped.append(
                Dropped("the trend over time", "no usable date", with_target - trend.rows_used)
            )
    return replace(accounting, used=used, dropped=tuple(dropped))
