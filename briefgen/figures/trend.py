"""Target over time: one mean per period with its interval, on a true date axis.

Periods sit at their real dates, so gaps show as gaps. Partly covered periods
are drawn hollow, and the straight-line trend through the period means (the line
the brief's change comes from, ``Trend.fit``) is overlaid.
"""

from __future__ import annotations

import datetime as dt

import matplotlib.dates as mdates

from briefgen.figures.theme import ACCENT, INK, LINE, Chart, new_figure, themed, to_svg
from briefgen.numbers import fmt, fmt_count, fmt_level
from briefgen.stats.trend import Trend


def _middle(start: dt.date, end: dt.date) -> dt.datetime:
    return dt.datetime.combine(start, dt.time()) + (end - start) / 2


def _draw_periods(axes, trend: Trend, middles: list[dt.datetime]) -> None:
    """Period means with intervals; periods the data cover only in part are drawn hollow."""
    means = [p.mean for p in trend.periods]
    lows = [p.ci_low if p.ci_low is not None else p.mean for p in trend.periods]
    highs = [p.ci_high if p.ci_high is not None else p.mean for p in trend.periods]
    axes.vlines(middles, lows, highs, color=LINE, linewidth=1.6)
    axes.plot(middles, means, color=LINE, linewidth=0.8, alpha=0.6)
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
            label="period only partly covered",
        )


def _draw_fit(axes, trend: Trend) -> None:
    """The least-squares line through the period means, from the first to the last timestamp."""
    if trend.fit is None or trend.fit.slope is None or trend.first_time is None:
        return
    start, end = trend.first_time, trend.last_time
    # The fit's slope is per day, measured from the first timestamp; its rise over the
    # span is the brief's change.
    ends = [trend.fit.intercept, trend.fit.intercept + trend.fit.slope * trend.span_days]
    axes.plot(
        [start, end],
        ends,
        color=ACCENT,
        linestyle=(0, (4, 2)),
        linewidth=1.3,
        label="straight-line trend",
    )


def _caption(trend: Trend, label: str, confidence: float) -> str:
    """What the points, hollow points and dashed line mean, and how many rows they rest on."""
    n = sum(p.n for p in trend.periods)
    return (
        f"Mean {label[:1].lower() + label[1:]} per {trend.period} with {fmt_level(confidence)} Student t intervals, "
        f"{fmt_count(n)} rows over {len(trend.periods)} {trend.period}s. Hollow points: periods the data cover "
        "only in part. Dashed: least-squares straight line through the period means."
    )


def _alt(trend: Trend, label: str, decimals: int) -> str:
    """Text alternative for screen readers: the span of dates and of period means."""
    means = [p.mean for p in trend.periods]
    return (
        f"Line chart of mean {label.lower()} per {trend.period} from {trend.periods[0].start:%d %b %Y} to "
        f"{trend.periods[-1].start:%d %b %Y}, ranging from {fmt(min(means), decimals)} to "
        f"{fmt(max(means), decimals)}."
    )


def trend_chart(trend: Trend, label: str, decimals: int, confidence: float) -> Chart | None:
    """Means per period with intervals, and the fitted straight-line trend."""
    if len(trend.periods) < 2:
        return None
    middles = [_middle(p.start, p.end) for p in trend.periods]
    with themed():
        figure = new_figure(2.9)
        axes = figure.subplots()
        _draw_periods(axes, trend, middles)
        _draw_fit(axes, trend)
        locator = mdates.AutoDateLocator(minticks=4, maxticks=9)
        axes.xaxis.set_major_locator(locator)
        axes.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
        axes.set_ylabel(f"Mean {label[:1].lower() + label[1:]}")
        axes.legend(loc="upper left", ncols=3, fontsize=8)
        axes.margins(y=0.25)
        axes.tick_params(colors=INK)
        svg = to_svg(figure)
    return Chart(
        key="trend",
        title=f"{label} over time",
        svg=svg,
        alt=_alt(trend, label, decimals),
        caption=_caption(trend, label, confidence),
    )
