"""Target over time: one mean per period with its interval, on a true date axis.

Periods sit at their real dates, and the line joining the means breaks at every
period without data, so a gap is never bridged by a straight stroke that looks like
data. Partly covered periods are drawn hollow, and the straight-line trend through
the period means (the line the brief's change comes from, ``Trend.fit``) is overlaid.
"""

from __future__ import annotations

import datetime as dt

import matplotlib.dates as mdates

from briefgen.figures.rules import TIME_AXIS
from briefgen.figures.theme import ACCENT, INK, LINE, Chart, new_figure, themed, to_svg
from briefgen.numbers import fmt, fmt_count, fmt_level
from briefgen.present.bounds import cut_note, drawn_interval
from briefgen.present.wording import in_sentence
from briefgen.stats.periods import period_label, runs
from briefgen.stats.trend import Trend


def _middle(start: dt.date, end: dt.date) -> dt.datetime:
    return dt.datetime.combine(start, dt.time()) + (end - start) / 2


def _draw_periods(
    axes, trend: Trend, middles: list[dt.datetime], floor: float | None = None
) -> None:
    """Period means with intervals; periods the data cover only in part are drawn hollow."""
    means = [p.mean for p in trend.periods]
    lows, highs = zip(*(drawn_interval(p, p.mean, floor) for p in trend.periods), strict=True)
    axes.vlines(middles, lows, highs, color=LINE, linewidth=1.6)
    # One line per run of consecutive periods: a missing period breaks the line.
    for begin, end in runs([p.start for p in trend.periods], trend.period):
        axes.plot(middles[begin:end], means[begin:end], color=LINE, linewidth=0.8)
    full = [(m, v) for m, v, p in zip(middles, means, trend.periods, strict=True) if not p.partial]
    part = [(m, v) for m, v, p in zip(middles, means, trend.periods, strict=True) if p.partial]
    if full:
        axes.plot(*zip(*full, strict=True), "o", color=LINE, markersize=4.5, label="period mean")
    if part:
        axes.plot(
            *zip(*part, strict=True),
            "o",
            markerfacecolor="white",
            markeredgecolor=LINE,
            markersize=4.5,
            label=_hollow_label(trend),
        )


def _hollow_label(trend: Trend) -> str:
    left_out = trend.partial_periods == "left_out"
    return "partly covered, not in the trend" if left_out else "period only partly covered"


def draw_trend(axes, trend: Trend, floor: float | None = None) -> None:
    """Period means with intervals, joined within runs of consecutive periods, and the fit.

    ``floor`` cuts the intervals where the target cannot go (``present.bounds``).
    """
    _draw_periods(axes, trend, [_middle(p.start, p.end) for p in trend.periods], floor)
    _draw_fit(axes, trend)


def _draw_fit(axes, trend: Trend) -> None:
    """The least-squares line through the period means, over the span and every period's middle."""
    if trend.fit is None or trend.fit.slope is None or trend.first_time is None:
        return
    first = trend.first_time.replace(tzinfo=None)
    middles = [_middle(p.start, p.end) for p in trend.periods]
    # Yearly values dated 1 January sit mid-year: reach their points, not only the dates.
    start = min(first, middles[0])
    end = max(trend.last_time.replace(tzinfo=None), middles[-1])
    # The fit's slope is per day, measured from the first timestamp.
    days = [(x - first).total_seconds() / 86_400 for x in (start, end)]
    axes.plot(
        [start, end],
        [trend.fit.intercept + trend.fit.slope * d for d in days],
        color=ACCENT,
        linestyle=(0, (4, 2)),
        linewidth=1.3,
        label="straight-line trend",
    )


def _caption(trend: Trend, label: str, confidence: float) -> str:
    """What the points, hollow points and dashed line mean, and how many rows they rest on."""
    n = sum(p.n for p in trend.periods)
    # An interval needs two rows in a period; one value a period (yearly figures) has none.
    intervals = (
        f"with {fmt_level(confidence)} Student t intervals"
        if any(p.n > 1 for p in trend.periods)
        else "(one row each, so no intervals)"
    )
    hollow = (
        " Hollow points: periods the data cover only in part."
        if any(p.partial for p in trend.periods)
        else ""
    )
    text = (
        f"Mean {in_sentence(label)} per {trend.period} {intervals}, "
        f"{fmt_count(n)} rows over {len(trend.periods)} {trend.period}s{_every(trend)}.{hollow} "
        "Dashed: least-squares straight line through the period means"
    )
    if trend.partial_periods == "left_out":
        text += " of fully covered periods (the hollow ones are left out of it)"
    elif trend.partial_periods == "kept":
        text += (
            f", hollow ones included since fewer than 3 full {trend.period}s remain without them"
        )
    text += "."
    if trend.gaps:
        text += f" The line breaks at {fmt_count(len(trend.gaps))} {_plural_period(trend)} without data."
    return text


def _every(trend: Trend) -> str:
    return f", one every {trend.cadence} {trend.period}s" if trend.cadence > 1 else ""


def _plural_period(trend: Trend) -> str:
    return trend.period if len(trend.gaps) == 1 else f"{trend.period}s"


def _alt(trend: Trend, label: str, decimals: int) -> str:
    """Text alternative for screen readers: the span of dates and of period means."""
    means = [p.mean for p in trend.periods]
    first, last = (_named(p.start, trend.period) for p in (trend.periods[0], trend.periods[-1]))
    return (
        f"Line chart of mean {in_sentence(label)} per {trend.period} from {first} to {last}, "
        f"ranging from {fmt(min(means), decimals)} to {fmt(max(means), decimals)}."
    )


def _named(start: dt.date, period: str) -> str:
    """A period's start as the alt text says it: a date for days and weeks, else its name."""
    return f"{start:%d %b %Y}" if period in ("day", "week") else period_label(start, period)


def trend_chart(
    trend: Trend,
    label: str,
    decimals: int,
    confidence: float,
    height: float = 2.9,
    floor: float | None = None,
) -> Chart | None:
    """Means per period with intervals, and the fitted straight-line trend."""
    if len(trend.periods) < 2:
        return None
    with themed():
        figure = new_figure(height)
        axes = figure.subplots()
        draw_trend(axes, trend, floor)
        locator = mdates.AutoDateLocator(minticks=4, maxticks=9)
        axes.xaxis.set_major_locator(locator)
        axes.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
        axes.set_ylabel(f"Mean {in_sentence(label)}")
        axes.legend(loc="upper left", ncols=3, fontsize=8)
        axes.margins(y=0.25)
        axes.tick_params(colors=INK)
        svg = to_svg(figure)
    return Chart(
        key="trend",
        title=f"{label} over time",
        svg=svg,
        alt=_alt(trend, label, decimals),
        caption=_caption(trend, label, confidence) + cut_note(trend.periods, floor),
        rules=(TIME_AXIS,),
    )
