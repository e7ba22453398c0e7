"""The target over all rows: its typical value, or its share of 1s or zeros."""

from __future__ import annotations

from briefgen.figures.histogram import histogram_chart
from briefgen.numbers import (
    fmt_count,
)
from briefgen.present.finding import Finding
from briefgen.present.section import Section
from briefgen.present.wording import (
    Wording,
    share_text,
)
from briefgen.stats import BriefStats
from briefgen.stats.core.summary import Summary

STUDENT_T = ", Student's t"


def _interval_phrase(o: Summary, words: Wording, method: str = "") -> str:
    """The mean's interval as a phrase, or why there is none (n < 2, or every value equal)."""
    text = words.mean_interval(o)
    if text != "–":
        return f"{words.level_name} interval {text}{method}"
    return "no interval: every value is the same" if o.n >= 2 else "no interval from one value"


def overall_finding(stats: BriefStats, words: Wording, figure: str | None = None) -> Finding:
    if stats.overall_share is not None and words.kind in ("binary", "count"):
        return kind_overall_finding(stats, words, figure)
    o = stats.overall
    # Page 2 prints the text and then the certainty; page 1 prints the certainty under the
    # headline. So the mean is stated once, in the certainty, and no "it" is left to guess at.
    text = (
        f"Across {fmt_count(o.n)} rows, the typical {words.lower} is {words.value(o.median)} "
        f"(median); half of all values lie between {words.value(o.q1)} and {words.value(o.q3)}."
    )
    certainty = f"The mean is {words.value(o.mean)} ({_interval_phrase(o, words, STUDENT_T)})"
    if o.mean is not None and o.median is not None and o.sd and (o.mean - o.median) > 0.2 * o.sd:
        certainty += ", above the median because a minority of high values pull the mean up"
    return Finding(
        headline=f"Typical {words.lower}: {words.value(o.median)} (median)",
        text=text,
        certainty=certainty + ".",
        figure=figure,
        key="overall",
        kind="overall",
        estimate=o.mean,
        ci_low=o.ci_low,
        ci_high=o.ci_high,
        test="student_t",
    )


def kind_overall_finding(stats: BriefStats, words: Wording, figure: str | None) -> Finding:
    """The target over all rows as a share of 1s (binary), or its mean and zeros (count)."""
    o, share = stats.overall, stats.overall_share
    wilson = (
        f"{words.level_name} interval {share_text(share.ci_low)} to {share_text(share.ci_high)}"
    )
    if words.kind == "binary":
        return Finding(
            headline=f"{words.label}: {share_text(share.share)} of rows are 1",
            text=(
                f"Of {fmt_count(share.n)} rows with a value, {fmt_count(share.events)} "
                f"({share_text(share.share)}) have {words.lower} equal to 1 ({wilson})."
            ),
            certainty=f"Interval from Wilson's score method at {words.level_name} confidence.",
            figure=figure,
            key="overall",
            kind="overall",
            estimate=share.share,
            ci_low=share.ci_low,
            ci_high=share.ci_high,
            test="wilson_score",
        )
    return Finding(
        headline=f"Average {words.lower}: {words.value(o.mean)}; {share_text(share.share)} are 0",
        text=(
            f"Across {fmt_count(o.n)} rows, the mean {words.lower} is {words.value(o.mean)} "
            f"({_interval_phrase(o, words)}), and "
            f"{share_text(share.share)} of values are 0 ({wilson}). With this many zeros the median "
            "says little, so the brief compares means."
        ),
        certainty=(
            f"Mean interval from Student's t, share of zeros from Wilson's score method, at "
            f"{words.level_name} confidence."
        ),
        figure=figure,
        key="overall",
        kind="overall",
        estimate=o.mean,
        ci_low=o.ci_low,
        ci_high=o.ci_high,
        test="student_t",
    )


def kind_note(stats: BriefStats) -> str | None:
    """How the kind and scale of the target shaped the brief, for the method notes."""
    kind = stats.target_kind
    if kind is None:
        return None
    notes = {
        "binary": "The target is read as a 0/1 outcome ({why}): shares of 1s with Wilson (1927) "
        "score intervals, gaps in percentage points with Newcombe's (1998) hybrid score interval, "
        "and a two-proportion z test (two levels) or Pearson's chi-square test (more), pairs "
        "adjusted by Holm's method; no box plots or outliers.",
        "count": "The target is read as a count with many zeros ({why}): means with Student t "
        "intervals and the share of zeros with Wilson score intervals; groups are compared by "
        "their means (Welch), since medians at 0 cannot tell levels apart.",
        "continuous": "",
    }
    text = notes[kind.kind].format(why=kind.kind_reason)
    if kind.scale == "interval":
        text += (
            f" The target has no true zero ({kind.scale_reason}), so the brief gives differences "
            "in its units and never as percentages of it."
        )
    return text.strip() or None


def overall_section(stats: BriefStats, words: Wording) -> Section:
    """The target over all rows: the overall finding, and the histogram when there is one."""
    chart = (
        histogram_chart(stats.histogram, words.label, words.unit_decimals)
        if stats.histogram is not None
        else None
    )
    finding = overall_finding(stats, words, figure="overall" if chart else None)
    return Section("overall", f"{words.label} over all rows", finding, chart, None)
