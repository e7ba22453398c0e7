"""The trend finding: the change across the span, said in the unit of its period."""

from __future__ import annotations

from briefgen.figures.trend import trend_chart
from briefgen.numbers import (
    fmt_interval,
)
from briefgen.present.family import Family
from briefgen.present.finding import Finding
from briefgen.present.section import SHORT_HEIGHT_IN, Section
from briefgen.present.wording import (
    Wording,
    points_text,
    signed,
)
from briefgen.stats.trend import Trend
from briefgen.trend_text import partial_text, span_text


def trend_finding(trend: Trend, words: Wording, family: Family) -> Finding | None:
    if trend.change is None or trend.change_ci_low is None or not trend.periods:
        return None
    if words.kind == "binary":
        # A 0/1 target's trend is a change in its share of 1s, in percentage points.
        change, measure = (
            f"{points_text(trend.change)} percentage points",
            f"the share of {words.lower} = 1",
        )
        interval = (
            f"{points_text(trend.change_ci_low)} to {points_text(trend.change_ci_high)} points"
        )
    else:
        change, measure = signed(trend.change, words), words.lower
        interval = fmt_interval(
            trend.change_ci_low, trend.change_ci_high, words.unit_decimals, sign=True
        )
    text = (
        f"{span_text(trend)}, the straight-line trend of {measure} changed by {change} across "
        f"the span ({words.level_name} interval {interval}).{partial_text(trend)}"
    )
    clear = family.passes(trend.key)
    if clear:
        direction = "rose" if trend.change > 0 else "fell"
        headline = f"{words.label} {direction} over time ({change})"
        certainty = (
            f"Clear after adjusting for the {family.size} questions this brief tests. "
            "A trend says what happened, not why."
        )
    else:
        headline = f"No clear trend in {words.lower} over time"
        certainty = "The data show no steady rise or fall beyond what chance would produce."
    return Finding(
        headline=headline,
        text=text,
        certainty=certainty,
        figure="trend",
        key=trend.key,
        kind="trend",
        claim=("rise" if trend.change > 0 else "fall") if clear else "none",
        estimate=trend.change,
        ci_low=trend.change_ci_low,
        ci_high=trend.change_ci_high,
        test="ols_period_means",
        p_value=trend.fit.slope_p_value if trend.fit is not None else None,
        p_adjusted=family.adjusted(trend.key),
    )


def trend_section(trend: Trend, words: Wording, confidence: float, family: Family) -> Section:
    """The target over time; its period-by-period table goes to the appendix."""
    finding = trend_finding(trend, words, family)
    short = None
    if finding is not None and finding.claim in ("rise", "fall"):
        short = trend_chart(
            trend, words.label, words.unit_decimals, confidence, SHORT_HEIGHT_IN, words.floor
        )
    return Section(
        "trend",
        f"{words.label} over time",
        finding,
        trend_chart(trend, words.label, words.unit_decimals, confidence, floor=words.floor),
        None,
        short,
    )
