"""What a reader must know before acting on the brief: the notes under 'Read with care'."""

from __future__ import annotations

import math

from briefgen.numbers import (
    fmt_count,
    fmt_share,
)
from briefgen.present.wording import (
    Wording,
    labelled_analysis,
    opening,
)
from briefgen.stats import BriefStats
from briefgen.stats.trend import Trend

# Periods shorter than a year: a series of them over years carries the seasons with it.
SUB_YEAR = ("day", "week", "month", "quarter")

SMALL_GROUP = (
    30  # common practice, no published source: below ~30 a mean's interval is wide and fragile
)


# common practice, no published source: a predictor with this few values reads as codes
CODE_LIKE_VALUES = 5


def cautions(stats: BriefStats, words: Wording, names: dict[str, str]) -> list[str]:
    """What a reader must know before acting on the brief."""
    notes = [
        f"{fmt_count(dropped.rows)} rows left out of "
        f"{labelled_analysis(dropped.analysis, names)}: {dropped.reason}."
        for dropped in stats.accounting.dropped
    ]
    for group in stats.groups:
        small = [s for s in group.summaries if s.n < SMALL_GROUP]
        if small:
            listed = ", ".join(f"{s.level} (n = {s.n})" for s in small)
            notes.append(
                f"Small groups in {names.get(group.variable, group.variable)}: {listed}. "
                "Their averages can move a lot with a few more rows."
            )
    notes += level_cautions(stats, words, names)
    skewed = [c for c in stats.comparisons if c.strongly_skewed and c.skewness is not None]
    skewed = skewed if words.kind == "continuous" else []  # counts are read by their means
    if skewed:
        pull = (
            "a few high values pull means up"
            if skewed[0].skewness > 0
            else "a few low values pull means down"
        )
        notes.append(
            f"{words.label} is strongly skewed: {pull}. The median is the better "
            "'typical' value, and group tests were checked with rank-based tests."
        )
    if stats.fits or stats.crosses:
        notes.append(
            "Relationships and differences shown are associations in these data; they do not show that one "
            "thing causes another, and factors not in the data may explain them."
        )
    box = stats.overall_box
    # In a count that is mostly zero the box is 0 to 0 and every other value would be "far".
    if box is not None and box.outlier_count and words.kind == "continuous":
        notes.append(
            f"{fmt_count(box.outlier_count)} {'value lies' if box.outlier_count == 1 else 'values lie'} "
            "far from the rest (beyond 1.5 × IQR from the box "
            f"of all values{_within_level_note(stats)}). "
            "None were removed: every figure and average includes them."
        )
    if stats.trend is not None and any(p.partial for p in stats.trend.periods):
        notes.append(
            "The first or last period of the trend is only partly covered by the data; read its value with care."
        )
    trend = stats.trend
    if trend is not None and trend.period in SUB_YEAR and trend.span_days >= 2 * 365:
        notes.append(
            f"The trend spans {trend.span_days / 365.25:.0f} years in {trend.period}ly values, so it "
            "runs through seasons: the straight line does not remove seasonal swings, which widen "
            "its interval and can hide a steady change. Compare the same "
            f"{trend.period} across years before concluding there is no trend."
        )
    if trend is not None and trend.serially_dependent:
        notes.append(serial_caution(trend, words))
    return notes


def serial_caution(trend: Trend, words: Wording) -> str:
    """Successive periods alike: every test here assumes independent rows or periods."""
    fitted = trend.fit.n if trend.fit is not None else len(trend.periods)
    return (
        f"Successive {trend.period}s of {words.lower} are alike: each {trend.period}'s departure "
        f"from the trend line correlates {trend.serial_correlation:.2f} with the next, where "
        f"independent {trend.period}s would rarely exceed {2 / math.sqrt(fitted):.2f}. Every "
        "test and interval in this brief treats rows (and the trend's "
        f"{trend.period}s) as independent, so its p-values can be too small and its intervals "
        "too narrow: treat its claims as weaker than they read."
    )


def _within_level_note(stats: BriefStats) -> str:
    """Why the tables by group count other outliers: each level is held to its own box."""
    if not stats.groups:
        return ""
    return "; the tables by group count outliers against each level's own box, so their counts can differ"


def level_cautions(stats: BriefStats, words: Wording, names: dict[str, str]) -> list[str]:
    """Variables whose role in the config looks wrong for the values they hold.

    A numeric group with more distinct values than the brief can show loses its order
    and most of its rows to "Other"; a predictor with a handful of values is probably
    a code, and a straight line through codes means little.
    """
    notes = []
    for group in stats.groups:
        shown = group.shown
        if shown.numeric and shown.other_label is None and _fractional(shown.kept):
            name = names.get(group.variable, group.variable)
            notes.append(
                f"{opening(name)} holds numbers with fractions "
                f"({fmt_count(shown.levels_in_data)} distinct values), and each is compared as a "
                f"group of its own, in no order. If it is a measure, list {group.variable} under "
                "predictors in the config instead of groups."
            )
        if shown.numeric and shown.other_label is not None:
            name = names.get(group.variable, group.variable)
            notes.append(
                f"{opening(name)} holds numbers with {fmt_count(shown.levels_in_data)} "
                "distinct values, so as "
                f"a group it shows {len(shown.kept)} of them and folds the rest into "
                f"{shown.other_label} ({fmt_share(shown.folded_share)} of rows), losing their order. "
                f"To see how {words.lower} changes along it, list {group.variable} under predictors "
                "in the config instead of groups."
            )
    for fit in stats.fits:
        if fit.x_distinct is not None and 1 < fit.x_distinct <= CODE_LIKE_VALUES:
            # The label names it; the column name stays only where the reader types it.
            name = names.get(fit.predictor, fit.predictor)
            notes.append(
                f"{opening(name)} takes only {fit.x_distinct} distinct values: it is likely a code or "
                "a category, and a straight line through so few values can hide the pattern between "
                f"them. If its values are labels, list {fit.predictor} under groups in the config "
                "instead of predictors."
            )
    return notes


def _fractional(levels: tuple[str, ...]) -> bool:
    """True when a numeric group's levels include a number that is not whole (a measure)."""
    for level in levels:
        try:
            value = float(level)
        except ValueError:
            continue
        if math.isfinite(value) and not value.is_integer():
            return True
    return False
