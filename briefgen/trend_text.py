"""How the trend's dates, span and fitted periods are written in sentences.

Kept apart from ``findings`` so the sentence there stays one line of assembly: the
dates follow the data's resolution (a yearly series says "1991", not "1 Jan 1991"),
the span is written in the unit that fits it, and a partial first or last period
left out of the fit (or kept, when too few would remain) is said in words.
"""

from __future__ import annotations

import datetime as dt

from briefgen.numbers import fmt_span
from briefgen.stats.periods import ADJECTIVE, MIN_FIT_PERIODS, period_label
from briefgen.stats.trend import Trend


def date_text(value: dt.date | dt.datetime, resolution: str) -> str:
    """A first or last date as precise as the data: 1991, 2020 Q1, Mar 2020, 3 Mar 2020."""
    day = value.date() if isinstance(value, dt.datetime) else value
    if resolution in ("year", "quarter"):
        return period_label(day, resolution)
    if resolution == "month":
        return f"{day:%b %Y}"
    return f"{day:%-d %b %Y}"


def span_text(trend: Trend) -> str:
    """'From 1991 to 2010 (19 years; 20 yearly means in the fit)': dates, span, periods fitted."""
    fitted = sum(p.in_fit for p in trend.periods)
    unit = f"{ADJECTIVE[trend.period]} {'mean' if fitted == 1 else 'means'}"
    first = date_text(trend.first_time, trend.resolution)
    last = date_text(trend.last_time, trend.resolution)
    span = fmt_span(trend.first_time, trend.last_time)
    return f"From {first} to {last} ({span}; {fitted} {unit} in the fit)"


def partial_text(trend: Trend) -> str:
    """A sentence on partial first and last periods and the fit; empty when none is partial."""
    partial = [p for p in trend.periods if p.partial]
    if trend.partial_periods == "none" or not partial:
        return ""
    edges = []
    if partial[0] is trend.periods[0]:
        edges.append("first")
    if partial[-1] is trend.periods[-1] and (len(trend.periods) > 1 or not edges):
        edges.append("last")
    which = " and ".join(edges)
    noun = trend.period if len(partial) == 1 else f"{trend.period}s"
    names = ", ".join(period_label(p.start, trend.period) for p in partial)
    verb = "is" if len(partial) == 1 else "are"
    if trend.partial_periods == "left_out":
        return (
            f" The {which} {noun} ({names}) {verb} only partly covered by the data and {verb} left "
            "out of the fit, so a thin edge does not drive the trend."
        )
    return (
        f" The {which} {noun} ({names}) {verb} only partly covered by the data but {verb} kept in "
        f"the fit: without {'it' if len(partial) == 1 else 'them'} fewer than {MIN_FIT_PERIODS} "
        f"{trend.period}s would remain."
    )
