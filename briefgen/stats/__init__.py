"""Statistics stage: aggregate queries run by the engine, returned as small frozen results.

``compute`` builds the analysis frame once, runs each analysis family in
``ANALYSES`` on it, and gathers the results in one ``BriefStats``; figures,
findings, tables and stats.json all read from it. The policy of an analysis
(folding levels, choosing a reference level) lives inside it or in the frame,
never here.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, replace

from briefgen.config import BriefSpec
from briefgen.source import Source
from briefgen.stats.accounting import Accounting, count_rows
from briefgen.stats.compare import GroupComparison
from briefgen.stats.core.frame import AnalysisFrame, build_frame
from briefgen.stats.core.quantiles import quantiles_for
from briefgen.stats.core.summary import BoxStats, Summary
from briefgen.stats.correlation import Correlation
from briefgen.stats.density import DensityAnalysis, DensityBins
from briefgen.stats.groups import GroupAnalysis, GroupResult
from briefgen.stats.histogram import Histogram, HistogramBins
from briefgen.stats.overall import Overall
from briefgen.stats.proportions import Share
from briefgen.stats.regression import RegressionFit
from briefgen.stats.relationships import (
    GroupSlopes,
    LogFit,
    LogSkipped,
    RelationshipAnalysis,
)
from briefgen.stats.sample import Sample, draw_sample
from briefgen.stats.target_kind import TargetKind, target_kind
from briefgen.stats.trend import Trend, TrendAnalysis
from briefgen.stats.twoway import CrossAnalysis, CrossTable, Nesting

log = logging.getLogger(__name__)
# Stage events for the console (briefgen.pipeline's channel): one per analysis family.
stage = logging.getLogger("briefgen.stage")
_FAMILY_WORDS = {
    "overall": "overall summary",
    "histogram": "histogram",
    "groups": "group comparisons",
    "crosses": "two-way tables",
    "trend": "trend over time",
    "relationships": "relationships with predictors",
}

__all__ = [
    "ANALYSES",
    "BoxStats",
    "BriefStats",
    "CrossTable",
    "GroupComparison",
    "GroupResult",
    "Nesting",
    "RegressionFit",
    "Sample",
    "Summary",
    "Trend",
    "compute",
]

# Every analysis family, in the order compute runs them; each has its own module, frozen
# parameters, a plan from the spec and one call on the frame (see stats.core.analysis).
ANALYSES = (
    Overall,
    Histogram,
    GroupAnalysis,
    CrossAnalysis,
    TrendAnalysis,
    RelationshipAnalysis,
    DensityAnalysis,
)


@dataclass(frozen=True, slots=True)
class BriefStats:
    """Every number the brief shows, computed once."""

    target: str
    confidence: float
    overall: Summary
    overall_box: BoxStats | None
    histogram: HistogramBins | None
    groups: tuple[GroupResult, ...]
    crosses: tuple[CrossTable, ...]
    trend: Trend | None
    fits: tuple[RegressionFit, ...]
    correlations: tuple[Correlation, ...]
    slopes_by_group: tuple[GroupSlopes, ...]
    log_fits: tuple[LogFit, ...] | LogSkipped | None
    sample: Sample
    accounting: Accounting
    target_kind: TargetKind | None = None
    overall_share: Share | None = None
    # 2-D bin counts per predictor with more rows than a scatter shows (stats.density).
    densities: tuple[DensityBins, ...] = ()
    # Configured pairs found nested rather than crossed: no two-way table for them.
    nestings: tuple[Nesting, ...] = ()

    def nested_in(self, inner: str) -> tuple[Nesting, ...]:
        """Every nesting that puts each level of group ``inner`` within one level of another."""
        return tuple(n for n in self.nestings if n.inner == inner)

    def density(self, predictor: str) -> DensityBins | None:
        return next((d for d in self.densities if d.predictor == predictor), None)

    @property
    def comparisons(self) -> tuple[GroupComparison, ...]:
        return tuple(g.comparison for g in self.groups if g.comparison is not None)

    def comparison(self, variable: str) -> GroupComparison | None:
        return next((c for c in self.comparisons if c.variable == variable), None)

    def correlation(self, predictor: str) -> Correlation | None:
        return next((c for c in self.correlations if c.predictor == predictor), None)

    def log_fit(self, predictor: str) -> LogFit | None:
        if not isinstance(self.log_fits, tuple):
            return None
        return next((f for f in self.log_fits if f.predictor == predictor), None)


def _run(family, spec: BriefSpec, frame: AnalysisFrame) -> tuple:
    """Every planned analysis of one family, its results flattened in plan order."""
    stage.info("statistics: %s", _FAMILY_WORDS.get(family.name, family.name))
    results = []
    for analysis in family.plan(spec, frame):
        result = analysis(frame)
        if result is not None:
            results.extend(result if isinstance(result, tuple) else (result,))
    return tuple(results)


def _sample(frame: AnalysisFrame) -> Sample:
    """Seeded sample of points for scatter plots, keyed by predictor name."""
    sample = draw_sample(frame.table, list(frame.predictors), groups=list(frame.groups))
    return replace(
        sample,
        x={frame.predictors[key]: values for key, values in sample.x.items()},
        groups={frame.groups[key]: values for key, values in sample.groups.items()},
    )


def compute(source: Source, spec: BriefSpec) -> BriefStats:
    """Run the analyses named by ``spec`` on ``source`` in its engine."""
    stage.info("statistics: typing the columns")
    frame = build_frame(source.table, spec, label=source.label)
    frame = replace(frame, kind=target_kind(frame, spec.target_kind, spec.scale))
    limit = spec.engine.memory_limit if spec.engine.backend == "duckdb" else None
    with quantiles_for(frame.kind.n, limit, len(frame.predictors)):
        return _analyse(source, spec, frame)


def _analyse(source: Source, spec: BriefSpec, frame: AnalysisFrame) -> BriefStats:
    """The analyses on the typed frame, in the order the brief reads them."""
    (overall,) = _run(Overall, spec, frame)
    histogram = next(iter(_run(Histogram, spec, frame)), None)
    groups = _run(GroupAnalysis, spec, frame)
    # The two-way interaction test leaves the mean scale when a group found the target
    # strongly skewed within its levels (see briefgen.stats.interaction).
    skewed = frozenset(g.variable for g in groups if g.comparison and g.comparison.strongly_skewed)
    stage.info("statistics: %s", _FAMILY_WORDS["crosses"])
    planned = CrossAnalysis.plan(spec, frame, skewed=skewed, minimum=overall.summary.min)
    # A nested pair has no table (twoway.Nesting): it leaves the tables and the family.
    tables = tuple(cross(frame) for cross in planned)
    crosses = tuple(t for t in tables if isinstance(t, CrossTable))
    nestings = tuple(t for t in tables if isinstance(t, Nesting))
    trend = next(iter(_run(TrendAnalysis, spec, frame)), None)
    (relationships,) = _run(RelationshipAnalysis, spec, frame)
    densities = _run(DensityAnalysis, spec, frame)
    stage.info("statistics: row accounting and scatter sample")
    usages = [r.usage for r in (overall, *groups, *crosses)]
    usages += [trend.usage] if trend is not None else []
    accounting = count_rows(
        source.table,
        frame,
        spec,
        usages,
        relationships.references,
        scope=source.scope,
        unused=source.unused,
        columns=source.columns.names,
    )
    log.info("statistics done: %d rows read", accounting.rows_read)
    return BriefStats(
        target=spec.target,
        confidence=spec.confidence,
        overall=overall.summary,
        overall_box=overall.box,
        histogram=histogram,
        groups=groups,
        crosses=crosses,
        trend=trend,
        fits=relationships.fits,
        correlations=relationships.correlations,
        slopes_by_group=relationships.slopes_by_group,
        log_fits=relationships.log_fits,
        sample=_sample(frame),
        accounting=accounting,
        target_kind=frame.kind,
        overall_share=overall.share,
        densities=densities,
        nestings=nestings,
    )
