"""Trend over time: one summary of the target per period, and the change across the span.

Periods are calendar days, ISO 8601 weeks (starting Monday) or calendar months,
truncated by the engine. Each period's mean, sd, median and interval come from
``summarise_levels`` (exact median-shifted two passes, type 7 quantiles).

The overall change comes from the periods, not the rows: an ordinary least squares
line through the period means against the period midpoints (days since the first
timestamp), one point per period, periods − 2 degrees of freedom. Rows within a
period often share a shock (a busy day, a holiday week); a row-level fit treats
them as independent and gives intervals far too narrow. Fitting one value per
period is robust to shocks shared within a period: it avoids pseudo-replication
(Hurlbert 1984, Ecological Monographs 54). The fit is unweighted, each period one
point whatever its row count: the simplest choice, and a conservative one, since
it lends no extra weight to busy periods (a thin partial period counts as much as
a full one). It runs in Python on the per-period results (period-sized data).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import logging

import ibis.expr.types as ir
import numpy as np

from briefgen.stats.core.shifted import deviations
from briefgen.stats.core.summary import summarise_levels
from briefgen.stats.core.usage import RowUsage, usage
from briefgen.stats.regression import RegressionFit, fit_from_sums

log = logging.getLogger(__name__)

PERIODS = ("day", "week", "month")
_TRUNCATE_UNIT = {"day": "D", "week": "W", "month": "M"}
# Auto period thresholds in days of span; they keep the series at about 8 to 60
# points for spans from 8 days to 5 years (see choose_period).
MAX_DAILY_SPAN = 60
MAX_WEEKLY_SPAN = 420
CHANGE_WINDOW_DAYS = 30


@dataclasses.dataclass(frozen=True, slots=True)
class PeriodStats:
    """The target within one period: [start, end), end being the next period's start.

    Only rows with both a time and a target value count, so ``n >= 1``. The
    interval is Student t (None when n < 2); ``mean_shift`` is mean − median at full
    precision, for differencing means at large offsets. ``partial`` marks a first or last
    period that the data's span does not fully cover (see ``time_trend``).
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


@dataclasses.dataclass(frozen=True, slots=True)
class Trend:
    """Per-period summaries and the change in the target across the time span.

    ``fit`` is the straight line through the period means (y) against the period
    midpoints in days since ``first_time`` (x): ``predictor`` is "days", ``n`` the
    number of periods, intervals on n − 2 df; ``fit.intercept`` is the line's value
    at ``first_time`` and ``fit.slope`` its change per day, which is what a figure
    draws. ``change`` is ``fit.slope`` × ``span_days``, the line's rise from the
    first to the last timestamp, with its interval from the slope's t interval;
    ``change_per_30_days`` the same for 30 days. With two periods the line (and
    ``change``) exist but their intervals are None; with one period all are None.
    ``gaps`` lists period starts inside the span with no usable rows (they are
    absent from ``periods``).
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


def choose_period(span_days: float) -> str:
    """Period for a span: day up to 60 days, week up to 420 days (60 weeks), else month.

    Days give 1 to 61 points, weeks 9 to 61, months 14 upwards (60 at five
    years). Spans under 8 days give fewer than 8 points and spans over five years
    more than 60 months: the three calendar periods cannot do better there.
    """
    if span_days <= MAX_DAILY_SPAN:
        return "day"
    if span_days <= MAX_WEEKLY_SPAN:
        return "week"
    return "month"


def next_period_start(start: dt.date, period: str) -> dt.date:
    """The start of the period after the one starting at ``start``."""
    if period == "day":
        return start + dt.timedelta(days=1)
    if period == "week":
        return start + dt.timedelta(days=7)
    return dt.date(start.year + start.month // 12, start.month % 12 + 1, 1)


def _as_date(value: dt.date | dt.datetime) -> dt.date:
    return value.date() if isinstance(value, dt.datetime) else value


def _counts(frame_table: ir.Table) -> dict:
    """One pass: row counts and the first and last usable timestamps."""
    table = frame_table
    usable = table.t.notnull() & table.y.notnull()
    # Microsecond timestamps come back as plain datetimes and serve as Ibis literals.
    micro = table.t.type().copy(scale=6)
    return (
        table.aggregate(
            rows=table.count(),
            rows_without_time=table.t.isnull().sum(),
            rows_without_target=(table.t.notnull() & table.y.isnull()).sum(),
            valued_without_time=(table.t.isnull() & table.y.notnull()).sum(),
            first_time=table.t.min(where=usable).cast(micro),
            last_time=table.t.max(where=usable).cast(micro),
        )
        .to_pyarrow()
        .to_pylist()[0]
    )


def _period_summaries(usable: ir.Table, period: str, confidence: float) -> list[PeriodStats]:
    """The periods in time order, each with its mean − median at full precision."""
    levels = usable.select(level=usable.t.truncate(_TRUNCATE_UNIT[period]).date(), y=usable.y)
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


def _mark_partial(periods: list[PeriodStats], first: dt.date, last: dt.date) -> list[PeriodStats]:
    """Flag first/last periods whose calendar days the data span does not reach."""
    marked = []
    for p in periods:
        last_day = p.end - dt.timedelta(days=1)
        partial = p.start < first or last_day > last
        marked.append(dataclasses.replace(p, partial=True) if partial else p)
    return marked


def _gaps(periods: list[PeriodStats], period: str) -> tuple[dt.date, ...]:
    if not periods:
        return ()
    present = {p.start for p in periods}
    gaps, start = [], periods[0].start
    while start < periods[-1].start:
        if start not in present:
            gaps.append(start)
        start = next_period_start(start, period)
    return tuple(gaps)


def _scaled(value: float | None, factor: float) -> float | None:
    return None if value is None else float(value) * factor


def _midpoint_days(p: PeriodStats, first_time: dt.datetime) -> float:
    """Days from the first timestamp to the middle of the period, as the figure places it."""
    middle = dt.datetime.combine(p.start, dt.time()) + (p.end - p.start) / 2
    # Periods are wall-clock dates, so compare on the wall clock of the first timestamp.
    return (middle - first_time.replace(tzinfo=None)).total_seconds() / 86_400


def _period_line(
    days: np.ndarray, offset: float, deviations: np.ndarray, confidence: float
) -> RegressionFit:
    """Unweighted least squares of period means (``offset`` + ``deviations``) on ``days``.

    The means arrive as a reference value plus exact deviations from it, so data
    with a large offset keep their digits; sums are centred (never Σx² − n·x̄²).
    """
    n = len(days)
    x_mean, deviation_mean = float(np.mean(days)), float(np.mean(deviations))
    dx, dy = days - x_mean, deviations - deviation_mean
    sxx, sxy, syy = float(dx @ dx), float(dx @ dy), float(dy @ dy)
    if n < 2 or sxx <= 0:
        sse = None
    else:
        # Residuals summed directly rather than Syy − slope·Sxy, for accuracy.
        residuals = dy - (sxy / sxx) * dx
        sse = float(residuals @ residuals)
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


def _fit_periods(
    periods: list[PeriodStats], first_time: dt.datetime, confidence: float
) -> RegressionFit:
    """The trend line through the period means, one point per period."""
    days = np.array([_midpoint_days(p, first_time) for p in periods])
    # Each mean is median + mean_shift; differencing medians first keeps an offset's digits.
    offset = periods[len(periods) // 2].median
    return _period_line(days, offset, np.array(deviations(periods, offset)), confidence)


def time_trend(frame_table: ir.Table, confidence: float = 0.95, period: str = "auto") -> Trend:
    """Summarise ``y`` per period of ``t`` and estimate its change across the span.

    ``frame_table`` holds ``t`` (timestamp) and ``y`` (float, null when missing);
    rows lacking either are not used and are counted. ``period`` is "auto" (see
    ``choose_period``, applied to the span from the first to the last usable
    timestamp) or "day", "week" or "month". A period is ``partial`` when the
    first usable timestamp falls on a later calendar day than the period's first
    day, or the last usable timestamp on an earlier day than its last day; the
    rule works at day resolution, so a day period is never partial.
    """
    if period != "auto" and period not in PERIODS:
        raise ValueError(f"period must be 'auto', 'day', 'week' or 'month', not {period!r}")
    counts = _counts(frame_table)
    first_time, last_time = counts["first_time"], counts["last_time"]
    rows_used = int(counts["rows"]) - int(counts["rows_without_time"] or 0)
    rows_used -= int(counts["rows_without_target"] or 0)
    span_days = (last_time - first_time).total_seconds() / 86_400 if first_time is not None else 0.0
    chosen = choose_period(span_days) if period == "auto" else period
    table = frame_table
    usable = table.filter(table.t.notnull() & table.y.notnull())

    periods: list[PeriodStats] = []
    fit = None
    if first_time is not None:
        periods = _period_summaries(usable, chosen, confidence)
        periods = _mark_partial(periods, _as_date(first_time), _as_date(last_time))
        fit = _fit_periods(periods, first_time, confidence)
    slope = fit.slope if fit else None
    low = fit.slope_ci_low if fit else None
    high = fit.slope_ci_high if fit else None
    log.debug("trend by %s: %d periods from %d rows", chosen, len(periods), rows_used)
    return Trend(
        key="trend",
        period=chosen,
        periods=tuple(periods),
        gaps=_gaps(periods, chosen),
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
    )
