"""Trend over time: one summary of the target per period, and the change across the span.

Periods are calendar days, ISO 8601 weeks (starting Monday), calendar months,
quarters or years, truncated by the engine (calendar rules in ``periods``). Each
period's mean, sd, median and interval come from ``summarise_levels`` (exact
median-shifted two passes, type 7 quantiles).

The overall change comes from the periods, not the rows: an ordinary least squares
line through the period means against the period midpoints (days since the first
timestamp), one point per period, periods − 2 degrees of freedom. Rows within a
period often share a shock (a busy day, a holiday week); a row-level fit treats
them as independent and gives intervals far too narrow. Fitting one value per
period is robust to shocks shared within a period: it avoids pseudo-replication
(Hurlbert 1984, Ecological Monographs 54). The fit is unweighted, each period one
point whatever its row count: the simplest choice, and a conservative one, since
it lends no extra weight to busy periods. A first or last period the data cover
only in part (a quarter whose data start in its last week) is left out of the fit,
so a thin edge cannot drive the test, unless fewer than ``MIN_FIT_PERIODS`` would
remain; the result says which periods were left out, or that they were kept. It
runs in Python on the per-period results (period-sized data).

Every test in a brief, this line's included, treats its points as independent. A
time series rarely is: successive periods are alike, and then p-values are too
small and intervals too narrow. The lag-1 autocorrelation of the periods' departures
from the line measures this from the same period means (no engine pass); above
``2/√n`` it flags serial dependence (see ``serial_correlation``).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import logging
import math
from typing import TYPE_CHECKING, ClassVar

import ibis.expr.types as ir
import numpy as np

from briefgen.stats.core.shifted import deviations
from briefgen.stats.core.summary import summarise_levels
from briefgen.stats.core.usage import RowUsage, usage
from briefgen.stats.periods import (
    ENGINE_UNIT,
    MIN_FIT_PERIODS,
    PERIODS,
    RESOLUTIONS,
    cadence,
    choose_period,
    gaps,
    is_partial,
    last_covered_day,
    next_period_start,
)
from briefgen.stats.regression import RegressionFit, fit_from_sums

if TYPE_CHECKING:
    from briefgen.config import BriefSpec
    from briefgen.stats.core.frame import AnalysisFrame

__all__ = ["PERIODS", "PeriodStats", "Trend", "choose_period", "next_period_start", "time_trend"]

log = logging.getLogger(__name__)

CHANGE_WINDOW_DAYS = 30
# Fewest fitted periods for the serial check: below it 2/√n is 0.9 or more and the
# large-sample bound says little (common practice, no published source).
MIN_SERIAL_PERIODS = 5
# How the fit treated partial first and last periods (``Trend.partial_periods``).
PARTIAL_HANDLING = ("none", "left_out", "kept")


@dataclasses.dataclass(frozen=True, slots=True)
class PeriodStats:
    """The target within one period: [start, end), end being the next period's start.

    Only rows with both a time and a target value count, so ``n >= 1``. The
    interval is Student t (None when n < 2); ``mean_shift`` is mean − median at full
    precision, for differencing means at large offsets. ``partial`` marks a first or last
    period that the data's span does not fully cover (see ``time_trend``); ``in_fit``
    is False for a partial period the trend line leaves out.
    """

    start: dt.date
    end: dt.date
    n: int
    mean: float
    median: float
    q1: float
    q3: float
    sd: float | None
    ci_low: float | None
    ci_high: float | None
    partial: bool
    mean_shift: float | None = None
    in_fit: bool = True


@dataclasses.dataclass(frozen=True, slots=True)
class Trend:
    """Per-period summaries and the change in the target across the time span.

    ``fit`` is the straight line through the means of the periods in the fit (y)
    against their midpoints in days since ``first_time`` (x): ``predictor`` is
    "days", ``n`` the number of periods fitted, intervals on n − 2 df;
    ``fit.intercept`` is the line's value at ``first_time`` and ``fit.slope`` its
    change per day, which is what a figure draws. ``change`` is ``fit.slope`` ×
    ``span_days``, the line's rise from the first to the last timestamp, with its
    interval from the slope's t interval; ``change_per_30_days`` the same for 30
    days. With two periods the line (and ``change``) exist but their intervals are
    None; with one period all are None. ``gaps`` lists period starts inside the span
    with no usable rows (they are absent from ``periods``). ``resolution`` is the
    coarsest calendar unit whose start every usable timestamp falls on (``year`` when
    all are 1 January, ``intraday`` when some carry a time of day). ``partial_periods``
    says how partial first and last periods were treated: ``left_out`` of the fit
    (their starts in ``left_out_of_fit``), ``kept`` because leaving them out would
    leave fewer than 3 periods, or ``none`` when no period is partial. ``cadence`` is
    the step in periods the data are recorded at (5 for values every fifth year);
    ``gaps`` are missing steps of that cadence. ``serial_correlation`` is the lag-1
    autocorrelation of the fitted periods' departures from the line (None with fewer
    than 5 periods); ``serially_dependent`` is True when it exceeds 2/√n, n the periods
    fitted (see ``serial_correlation``).
    """

    key: str
    period: str
    periods: tuple[PeriodStats, ...]
    gaps: tuple[dt.date, ...]
    first_time: dt.datetime | None
    last_time: dt.datetime | None
    span_days: float
    rows_used: int
    rows_without_time: int
    rows_without_target: int
    change: float | None
    change_ci_low: float | None
    change_ci_high: float | None
    change_per_30_days: float | None
    change_per_30_days_ci_low: float | None
    change_per_30_days_ci_high: float | None
    confidence: float
    fit: RegressionFit | None
    usage: RowUsage
    resolution: str = "intraday"
    partial_periods: str = "none"
    left_out_of_fit: tuple[dt.date, ...] = ()
    cadence: int = 1
    serial_correlation: float | None = None
    serially_dependent: bool = False


def _as_date(value: dt.date | dt.datetime) -> dt.date:
    return value.date() if isinstance(value, dt.datetime) else value


def _counts(frame_table: ir.Table) -> dict:
    """One pass: row counts, the first and last usable timestamps, and their resolution."""
    table = frame_table
    usable = table.t.notnull() & table.y.notnull()
    # Microsecond timestamps come back as plain datetimes and serve as Ibis literals.
    micro = table.t.type().copy(scale=6)
    # Usable rows whose timestamp is the start of its day, week, … year.
    starts = {
        f"at_{name}": (usable & (table.t == table.t.truncate(unit))).sum()
        for name, unit in ENGINE_UNIT.items()
    }
    return (
        table.aggregate(
            rows=table.count(),
            usable=usable.sum(),
            rows_without_time=table.t.isnull().sum(),
            rows_without_target=(table.t.notnull() & table.y.isnull()).sum(),
            valued_without_time=(table.t.isnull() & table.y.notnull()).sum(),
            first_time=table.t.min(where=usable).cast(micro),
            last_time=table.t.max(where=usable).cast(micro),
            **starts,
        )
        .to_pyarrow()
        .to_pylist()[0]
    )


def _resolution(counts: dict) -> str:
    """The coarsest unit whose start every usable timestamp falls on; ``intraday`` if none."""
    usable = int(counts["usable"] or 0)
    fitting = [name for name in PERIODS if usable and int(counts[f"at_{name}"] or 0) == usable]
    return max(fitting, key=RESOLUTIONS.index) if fitting else "intraday"


def _period_summaries(usable: ir.Table, period: str, confidence: float) -> list[PeriodStats]:
    """The periods in time order, each with its mean − median at full precision."""
    levels = usable.select(level=usable.t.truncate(ENGINE_UNIT[period]).date(), y=usable.y)
    summaries, _boxes = summarise_levels(levels, confidence, list_outliers=False)
    result = []
    for s in sorted(summaries, key=lambda s: s.level):
        start = _as_date(s.level)
        result.append(
            PeriodStats(
                start=start,
                end=next_period_start(start, period),
                n=s.n,
                mean=s.mean,
                median=s.median,
                q1=s.q1,
                q3=s.q3,
                sd=s.sd,
                ci_low=s.ci_low,
                ci_high=s.ci_high,
                partial=False,
                mean_shift=s.mean_shift,
            )
        )
    return result


def _mark_partial(
    periods: list[PeriodStats], first: dt.date, last: dt.date, resolution: str
) -> list[PeriodStats]:
    """Flag first/last periods whose calendar days the data do not reach."""
    covered = last_covered_day(last, resolution)
    return [
        dataclasses.replace(p, partial=True) if is_partial(p.start, p.end, first, covered) else p
        for p in periods
    ]


def _choose_fit_periods(periods: list[PeriodStats]) -> tuple[list[PeriodStats], str]:
    """Periods with ``in_fit`` set, and how partial ones were treated (PARTIAL_HANDLING)."""
    partial = sum(p.partial for p in periods)
    if not partial:
        return periods, "none"
    if len(periods) - partial < MIN_FIT_PERIODS:
        return periods, "kept"
    return [dataclasses.replace(p, in_fit=not p.partial) for p in periods], "left_out"


def _scaled(value: float | None, factor: float) -> float | None:
    return None if value is None else float(value) * factor


def _midpoint_days(p: PeriodStats, first_time: dt.datetime) -> float:
    """Days from the first timestamp to the middle of the period, as the figure places it."""
    middle = dt.datetime.combine(p.start, dt.time()) + (p.end - p.start) / 2
    # Periods are wall-clock dates, so compare on the wall clock of the first timestamp.
    return (middle - first_time.replace(tzinfo=None)).total_seconds() / 86_400


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    """Σ a·b correctly rounded, the same on every CPU."""
    return math.fsum((a * b).tolist())


def _period_line(
    days: np.ndarray, offset: float, deviations: np.ndarray, confidence: float
) -> RegressionFit:
    """Unweighted least squares of period means (``offset`` + ``deviations``) on ``days``.

    The means arrive as a reference value plus exact deviations from it, so data
    with a large offset keep their digits; sums are centred (never Σx² − n·x̄²).
    """
    n = len(days)
    x_mean, deviation_mean = math.fsum(days.tolist()) / n, math.fsum(deviations.tolist()) / n
    dx, dy = days - x_mean, deviations - deviation_mean
    # math.fsum, not a BLAS dot product: BLAS kernels differ by CPU (OPENBLAS_CORETYPE) and
    # change the last digits, so the same data gave different bytes on different machines.
    sxx, sxy, syy = _dot(dx, dx), _dot(dx, dy), _dot(dy, dy)
    if n < 2 or sxx <= 0:
        sse = None
    else:
        # Residuals summed directly rather than Syy − slope·Sxy, for accuracy.
        residuals = dy - (sxy / sxx) * dx
        sse = _dot(residuals, residuals)
    return fit_from_sums(
        "days",
        n=n,
        x_mean=x_mean,
        y_mean=offset + deviation_mean,
        sxx=sxx,
        sxy=sxy,
        syy=syy,
        sse=sse,
        x_min=float(days.min()),
        x_max=float(days.max()),
        confidence=confidence,
    )


def lag1_autocorrelation(series: np.ndarray) -> float | None:
    """r1 = Σ (e_t − ē)(e_{t+1} − ē) / Σ (e_t − ē)², t in time order; None if all equal.

    The sample autocorrelation at lag 1 as Box, Jenkins & Reinsel define it (Time
    Series Analysis, 4th ed. 2008, §2.1.5), the same as statsmodels' ``acf``.
    """
    if len(series) < 2:
        return None
    centred = series - math.fsum(series.tolist()) / len(series)
    total = _dot(centred, centred)
    if total <= 0:
        return None
    return _dot(centred[:-1], centred[1:]) / total


def serial_dependence(r1: float | None, n: int) -> bool:
    """True when r1 > 2/√n: successive periods are more alike than independent ones would be.

    Under independence r1 has standard error about 1/√n (Bartlett 1946; Box, Jenkins &
    Reinsel 2008, §2.1.6), so ±2/√n bounds it about 95% of the time. Only the positive
    side is flagged: positive dependence makes intervals too narrow, negative too wide.
    """
    return r1 is not None and n >= MIN_SERIAL_PERIODS and r1 > 2 / math.sqrt(n)


def _fit_periods(
    periods: list[PeriodStats], first_time: dt.datetime, confidence: float
) -> tuple[RegressionFit, float | None]:
    """The trend line through the period means, one point per period, and its residuals' r1.

    Residuals are taken between consecutive periods with data, across any gap.
    """
    days = np.array([_midpoint_days(p, first_time) for p in periods])
    # Each mean is median + mean_shift; differencing medians first keeps an offset's digits.
    offset = periods[len(periods) // 2].median
    departures = np.array(deviations(periods, offset))
    fit = _period_line(days, offset, departures, confidence)
    r1 = None
    if len(periods) >= MIN_SERIAL_PERIODS and fit.slope is not None:
        # Residuals about the line, centred on the deviations' own scale to keep an offset's digits.
        dx = days - math.fsum(days.tolist()) / len(days)
        dy = departures - math.fsum(departures.tolist()) / len(departures)
        r1 = lag1_autocorrelation(dy - fit.slope * dx)
    return fit, r1


def time_trend(frame_table: ir.Table, confidence: float = 0.95, period: str = "auto") -> Trend:
    """Summarise ``y`` per period of ``t`` and estimate its change across the span.

    ``frame_table`` holds ``t`` (timestamp) and ``y`` (float, null when missing);
    rows lacking either are not used and are counted. ``period`` is "auto" (see
    ``choose_period``, applied to the span from the first to the last usable
    timestamp and the data's resolution) or one of ``PERIODS``. A period is
    ``partial`` when the first usable timestamp falls on a later calendar day than
    the period's first day, or the data end before its last day; a timestamp at the
    start of a coarser unit covers that unit (a yearly value dated 1 January covers
    its year). The rule works at day resolution, so a day period is never partial.
    """
    if period != "auto" and period not in PERIODS:
        raise ValueError(f"period must be 'auto' or one of {', '.join(PERIODS)}, not {period!r}")
    counts = _counts(frame_table)
    first_time, last_time = counts["first_time"], counts["last_time"]
    rows_used = int(counts["rows"]) - int(counts["rows_without_time"] or 0)
    rows_used -= int(counts["rows_without_target"] or 0)
    span_days = (last_time - first_time).total_seconds() / 86_400 if first_time is not None else 0.0
    resolution = _resolution(counts)
    chosen = choose_period(span_days, resolution) if period == "auto" else period
    table = frame_table
    usable = table.filter(table.t.notnull() & table.y.notnull())

    periods: list[PeriodStats] = []
    fit, handling, r1 = None, "none", None
    if first_time is not None:
        periods = _period_summaries(usable, chosen, confidence)
        periods = _mark_partial(periods, _as_date(first_time), _as_date(last_time), resolution)
        periods, handling = _choose_fit_periods(periods)
        fit, r1 = _fit_periods([p for p in periods if p.in_fit], first_time, confidence)
    slope = fit.slope if fit else None
    low = fit.slope_ci_low if fit else None
    high = fit.slope_ci_high if fit else None
    log.debug("trend by %s: %d periods from %d rows", chosen, len(periods), rows_used)
    return Trend(
        key="trend",
        period=chosen,
        periods=tuple(periods),
        gaps=gaps([p.start for p in periods], chosen),
        first_time=first_time,
        last_time=last_time,
        span_days=span_days,
        rows_used=rows_used,
        rows_without_time=int(counts["rows_without_time"] or 0),
        rows_without_target=int(counts["rows_without_target"] or 0),
        change=_scaled(slope, span_days),
        change_ci_low=_scaled(low, span_days),
        change_ci_high=_scaled(high, span_days),
        change_per_30_days=_scaled(slope, CHANGE_WINDOW_DAYS),
        change_per_30_days_ci_low=_scaled(low, CHANGE_WINDOW_DAYS),
        change_per_30_days_ci_high=_scaled(high, CHANGE_WINDOW_DAYS),
        confidence=confidence,
        fit=fit,
        usage=usage(
            "trend",
            rows_used,
            "the trend over time",
            "no usable date",
            int(counts["valued_without_time"] or 0),
        ),
        resolution=resolution,
        partial_periods=handling,
        left_out_of_fit=tuple(p.start for p in periods if not p.in_fit),
        cadence=cadence([p.start for p in periods], chosen),
        serial_correlation=r1,
        serially_dependent=serial_dependence(r1, fit.n if fit else 0),
    )


@dataclasses.dataclass(frozen=True, slots=True)
class TrendAnalysis:
    """The target over time: one value per ``period`` and its change across the span."""

    confidence: float
    period: str
    name: ClassVar[str] = "trend"
    many: ClassVar[bool] = False
    result: ClassVar[type] = Trend

    @classmethod
    def plan(cls, spec: BriefSpec, frame: AnalysisFrame) -> tuple[TrendAnalysis, ...]:
        return (cls(spec.confidence, spec.time.period),) if spec.time else ()

    def __call__(self, frame: AnalysisFrame) -> Trend:
        return time_trend(frame.table, self.confidence, self.period)
