"""Calendar periods for the trend: which period to use, where periods start, which are partial.

Periods are calendar days, ISO 8601 weeks (starting Monday), calendar months,
quarters (January, April, July, October) and calendar years. These helpers work on
the small per-period results in Python; the engine does the truncation of rows.
"""

from __future__ import annotations

import datetime as dt
import itertools
import math
from collections.abc import Sequence

PERIODS = ("day", "week", "month", "quarter", "year")
# Coarseness order for comparing a chosen period with the data's resolution.
RESOLUTIONS = ("intraday", *PERIODS)
ENGINE_UNIT = {"day": "D", "week": "W", "month": "M", "quarter": "Q", "year": "Y"}
ADJECTIVE = {
    "day": "daily",
    "week": "weekly",
    "month": "monthly",
    "quarter": "quarterly",
    "year": "yearly",
}

# Auto period thresholds in days of span (common practice, no published source): they
# keep the series at about 8 to 60 points, and never finer than the data are recorded.
MAX_DAILY_SPAN = 60
MAX_WEEKLY_SPAN = 420
MAX_MONTHLY_SPAN = 3 * 365.25
MAX_QUARTERLY_SPAN = 8 * 365.25
# Fewest periods a straight line is fitted through after partial ones are left out.
MIN_FIT_PERIODS = 3


def coarser(a: str, b: str) -> str:
    """The coarser of two periods or resolutions (``intraday`` < ``day`` < … < ``year``)."""
    return max(a, b, key=RESOLUTIONS.index)


def choose_period(span_days: float, resolution: str = "intraday") -> str:
    """Period for a span, never finer than the data's ``resolution``.

    Day up to 60 days (1 to 61 points), week up to 420 days (9 to 61), month up to
    3 years (14 to 37), quarter up to 8 years (12 to 33), year beyond (9 upwards).
    Common practice, no published source: a series of roughly 10 to 60 points shows a
    trend without drowning it in noise. Yearly data (every date a 1 January) stay
    yearly whatever the span, since finer periods would be mostly empty.
    """
    if span_days <= MAX_DAILY_SPAN:
        by_span = "day"
    elif span_days <= MAX_WEEKLY_SPAN:
        by_span = "week"
    elif span_days <= MAX_MONTHLY_SPAN:
        by_span = "month"
    elif span_days <= MAX_QUARTERLY_SPAN:
        by_span = "quarter"
    else:
        by_span = "year"
    return coarser(by_span, resolution) if resolution != "intraday" else by_span


def next_period_start(start: dt.date, period: str) -> dt.date:
    """The start of the period after the one starting at ``start``."""
    if period == "day":
        return start + dt.timedelta(days=1)
    if period == "week":
        return start + dt.timedelta(days=7)
    if period == "year":
        return dt.date(start.year + 1, 1, 1)
    step = 3 if period == "quarter" else 1
    months = start.year * 12 + start.month - 1 + step
    return dt.date(months // 12, months % 12 + 1, 1)


def last_covered_day(last: dt.date, resolution: str) -> dt.date:
    """The last calendar day the data reach: a yearly value dated 1 January covers its year."""
    if resolution in ("intraday", "day"):
        return last
    return next_period_start(last, resolution) - dt.timedelta(days=1)


def is_partial(start: dt.date, end: dt.date, first: dt.date, last_covered: dt.date) -> bool:
    """A period [start, end) is partial when the data begin after its first day or end before its last."""
    return start < first or end - dt.timedelta(days=1) > last_covered


def period_number(start: dt.date, period: str) -> int:
    """A period's position on a count of periods, so that consecutive periods differ by 1."""
    if period == "day":
        return start.toordinal()
    if period == "week":
        return start.toordinal() // 7  # week starts are Mondays, 7 days apart
    if period == "month":
        return start.year * 12 + start.month - 1
    if period == "quarter":
        return (start.year * 12 + start.month - 1) // 3
    return start.year


def cadence(starts: Sequence[dt.date], period: str) -> int:
    """The step, in periods, the data are recorded at: 5 for values every fifth year, else 1.

    The greatest common divisor of the distances between present periods: a series
    recorded every fifth year has no gaps in between, while one missing value in a
    yearly series makes a gap.
    """
    numbers = [period_number(s, period) for s in starts]
    if len(numbers) < 2:
        return 1
    return math.gcd(*(b - a for a, b in itertools.pairwise(numbers))) or 1


def gaps(starts: Sequence[dt.date], period: str) -> tuple[dt.date, ...]:
    """Period starts on the data's cadence, between the first and last present period, without data."""
    if not starts:
        return ()
    step, present = cadence(starts, period), set(starts)
    missing, start = [], starts[0]
    while start < starts[-1]:
        if start not in present:
            missing.append(start)
        for _ in range(step):
            start = next_period_start(start, period)
    return tuple(missing)


def runs(starts: Sequence[dt.date], period: str) -> tuple[tuple[int, int], ...]:
    """Index ranges [i, j) of periods one cadence step apart: a figure draws one line per run."""
    if not starts:
        return ()
    step = cadence(starts, period)
    numbers = [period_number(s, period) for s in starts]
    result, begin = [], 0
    for i in range(1, len(starts)):
        if numbers[i] - numbers[i - 1] != step:
            result.append((begin, i))
            begin = i
    result.append((begin, len(starts)))
    return tuple(result)


def period_label(start: dt.date, period: str) -> str:
    """How a period is named in tables and sentences: 2024-03-11, 2024-03, 2024 Q1, 2024."""
    if period == "year":
        return f"{start.year}"
    if period == "quarter":
        return f"{start.year} Q{(start.month - 1) // 3 + 1}"
    if period == "month":
        return f"{start:%Y-%m}"
    return f"{start:%Y-%m-%d}"
