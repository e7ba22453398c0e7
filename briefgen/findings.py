"""Results ─► plain sentences, each with a number, a comparison and its certainty.

A finding never computes a statistic; it reads the results and words them. Where
a result could mislead a decision (small groups, association read as cause, rows
left out), a caution is written beside it.
"""

from __future__ import annotations

from dataclasses import dataclass

from briefgen.numbers import decimals_for, fmt, fmt_count, fmt_percent
from briefgen.stats import BriefStats
from briefgen.stats.groups import GroupStats, Summary
from briefgen.stats.regression import RegressionFit

SMALL_GROUP = (
    30  # common practice, no published source: below ~30 a mean's interval is wide and fragile
)


@dataclass(frozen=True, slots=True)
class Finding:
    """One sentence for the reader, the certainty behind it, and the figure that backs it."""

    headline: str
    text: str
    certainty: str
    figure: str | None = None


@dataclass(frozen=True, slots=True)
class Wording:
    """How the brief names the target and writes its numbers."""

    label: str
    unit_decimals: int
    confidence: float

    def value(self, number: float | None) -> str:
        return fmt(number, self.unit_decimals)

    def interval(self, low: float | None, high: float | None) -> str:
        return f"{self.value(low)} to {self.value(high)}"

    @property
    def level_name(self) -> str:
        return f"{self.confidence:.0%}"


def wording_for(stats: BriefStats, label: str) -> Wording:
    return Wording(
        label=label, unit_decimals=decimals_for(stats.overall.sd), confidence=stats.confidence
    )


def overall_finding(stats: BriefStats, words: Wording) -> Finding:
    o = stats.overall
    text = (
        f"Across {fmt_count(o.n)} rows, the typical {words.label.lower()} is {words.value(o.median)} "
        f"(median); half of all values lie between {words.value(o.q1)} and {words.value(o.q3)}. "
        f"The mean is {words.value(o.mean)} ({words.level_name} interval {words.interval(o.ci_low, o.ci_high)})."
    )
    skew = ""
    if o.mean is not None and o.median is not None and o.sd and (o.mean - o.median) > 0.2 * o.sd:
        skew = " The mean sits above the median because a minority of long values pull it up."
    return Finding(
        headline=f"Typical {words.label.lower()}: {words.value(o.median)}",
        text=text + skew,
        certainty=f"Interval from Student's t at {words.level_name} confidence.",
    )


def _overlap(a: Summary, b: Summary) -> bool:
    return not (
        a.ci_low is None or b.ci_low is None or a.ci_low > b.ci_high or b.ci_low > a.ci_high
    )


def group_finding(group: GroupStats, words: Wording, name: str | None = None) -> Finding | None:
    """Highest against lowest mean, worded by whether their intervals overlap."""
    name = name or group.variable
    usable = [s for s in group.summaries if s.n >= 2 and s.mean is not None]
    if len(usable) < 2:
        return None
    high = max(usable, key=lambda s: s.mean)
    low = min(usable, key=lambda s: s.mean)
    gap = high.mean - low.mean
    relative = gap / low.mean if low.mean else None
    text = (
        f"By {name}, {high.level} has the highest mean {words.label.lower()}, "
        f"{words.value(high.mean)} ({words.interval(high.ci_low, high.ci_high)}), and {low.level} the lowest, "
        f"{words.value(low.mean)} ({words.interval(low.ci_low, low.ci_high)}): a gap of {words.value(gap)}"
        + (f" ({fmt_percent(relative)} more)." if relative is not None and low.mean > 0 else ".")
    )
    if _overlap(high, low):
        certainty = f"The {words.level_name} intervals overlap: the data cannot separate these levels with confidence."
        headline = f"By {name}: no clear difference"
    else:
        certainty = f"The {words.level_name} intervals do not overlap, so chance alone is an unlikely explanation."
        headline = (
            f"By {name}: {high.level} highest ({words.value(high.mean)}), "
            f"{low.level} lowest ({words.value(low.mean)})"
        )
    return Finding(
        headline=headline, text=text, certainty=certainty, figure=f"group-{group.variable}"
    )


def fit_finding(fit: RegressionFit, words: Wording, x_label: str) -> Finding | None:
    if fit.slope is None or fit.slope_ci_low is None:
        return None
    x_decimals = decimals_for(abs(fit.slope))
    direction = "rises" if fit.slope > 0 else "falls"
    text = (
        f"{words.label} {direction} with {x_label.lower()}: each extra unit goes with "
        f"{fmt(abs(fit.slope), x_decimals)} {'more' if fit.slope > 0 else 'less'} on average "
        f"({words.level_name} interval {fmt(fit.slope_ci_low, x_decimals)} to {fmt(fit.slope_ci_high, x_decimals)}). "
        f"{x_label} accounts for {fmt_percent(fit.r_squared)} of the variation (R², {fmt_count(fit.n)} rows)."
    )
    excludes_zero = fit.slope_ci_low > 0 or fit.slope_ci_high < 0
    certainty = (
        "The interval excludes zero. This is an association in these data, not proof of cause."
        if excludes_zero
        else "The interval includes zero: no clear straight-line relationship."
    )
    headline = (
        f"{words.label} {direction} with {x_label.lower()}"
        if excludes_zero
        else f"No clear link with {x_label.lower()}"
    )
    return Finding(headline=headline, text=text, certainty=certainty, figure=f"fit-{fit.predictor}")


def cautions(stats: BriefStats, words: Wording) -> list[str]:
    """What a reader must know before acting on the brief."""
    notes = []
    for group in stats.groups:
        small = [s for s in group.summaries if s.n < SMALL_GROUP]
        if small:
            names = ", ".join(f"{s.level} (n = {s.n})" for s in small)
            notes.append(
                f"Small groups in {group.variable}: {names}. Their averages can move a lot with a few more rows."
            )
    if stats.fits:
        notes.append(
            "Relationships shown are associations in these data; they do not show that one thing causes "
            "another, and other factors not in the data may explain them."
        )
    box = stats.overall_box
    if box is not None and box.outlier_count:
        notes.append(
            f"{fmt_count(box.outlier_count)} values lie far from the rest (beyond 1.5 × IQR from the box). "
            "None were removed: every figure and average includes them."
        )
    acc = stats.accounting
    for dropped in acc.dropped:
        notes.append(
            f"{fmt_count(dropped.rows)} rows left out of {dropped.analysis}: {dropped.reason}."
        )
    return notes
