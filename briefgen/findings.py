"""Results ─► plain sentences, each with a number, a comparison and its certainty.

A finding never computes a statistic; it reads the results and words them. Where
a result could mislead a decision (small groups, association read as cause, rows
left out, many comparisons), a caution is written beside it.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from briefgen.numbers import decimals_for, fmt, fmt_count, fmt_level, fmt_percent, p_text
from briefgen.stats import BriefStats
from briefgen.stats.compare import GroupComparison
from briefgen.stats.correlation import Correlation
from briefgen.stats.groups import GroupResult
from briefgen.stats.regression import RegressionFit
from briefgen.stats.relationships import GroupSlopes, LogFit
from briefgen.stats.trend import Trend
from briefgen.stats.twoway import CrossTable

SMALL_GROUP = (
    30  # common practice, no published source: below ~30 a mean's interval is wide and fragile
)
SIGNIFICANCE = 0.05  # conventional threshold (Fisher 1925); findings also print the p-value itself


# Claims a finding can make; the document orders page 1 by these, never by reading text.
CLAIMS = ("summary", "difference", "rise", "fall", "none", "not_tested")
SETTLED = ("summary", "difference", "rise", "fall")


@dataclass(frozen=True, slots=True)
class Finding:
    """One sentence for the reader, the certainty behind it, and the figure that backs it.

    Also the claim as data, for stats.json and the document: ``kind`` (the analysis),
    ``claim`` (one of CLAIMS), ``variables`` (data column names, target excluded),
    ``levels`` (in the order the sentence names them), the ``estimate`` with its
    interval, the ``test`` the verdict rests on with its ``p_value`` and, where the
    test was adjusted for multiplicity, ``p_adjusted``.
    """

    headline: str
    text: str
    certainty: str
    figure: str | None = None
    detail: str = ""  # a further sentence for the section; page 1 shows only the certainty
    key: str = ""
    kind: str = ""
    claim: str = "summary"
    variables: tuple[str, ...] = ()
    levels: tuple[str, ...] = ()
    estimate: float | None = None
    ci_low: float | None = None
    ci_high: float | None = None
    test: str | None = None
    p_value: float | None = None
    p_adjusted: float | None = None


@dataclass(frozen=True, slots=True)
class Wording:
    """How the brief names the target and writes its numbers."""

    label: str
    unit_decimals: int
    confidence: float
    kind: str = "continuous"  # stats.target_kind.kind: continuous, binary or count
    scale: str = "ratio"  # percentages of the target only on a ratio scale

    def value(self, number: float | None) -> str:
        return fmt(number, self.unit_decimals)

    def interval(self, low: float | None, high: float | None) -> str:
        return f"{self.value(low)} to {self.value(high)}"

    @property
    def level_name(self) -> str:
        return fmt_level(self.confidence)

    @property
    def lower(self) -> str:
        return self.label[:1].lower() + self.label[1:]


def wording_for(stats: BriefStats, label: str) -> Wording:
    kind = stats.target_kind
    return Wording(
        label=label,
        unit_decimals=decimals_for(stats.overall.sd),
        confidence=stats.confidence,
        kind=kind.kind if kind is not None else "continuous",
        scale=kind.scale if kind is not None else "ratio",
    )


def overall_finding(stats: BriefStats, words: Wording, figure: str | None = None) -> Finding:
    if stats.overall_share is not None and words.kind in ("binary", "count"):
        return kind_overall_finding(stats, words, figure)
    o = stats.overall
    text = (
        f"Across {fmt_count(o.n)} rows, the typical {words.lower} is {words.value(o.median)} "
        f"(median); half of all values lie between {words.value(o.q1)} and {words.value(o.q3)}. "
        f"The mean is {words.value(o.mean)} ({words.level_name} interval {words.interval(o.ci_low, o.ci_high)})."
    )
    if o.mean is not None and o.median is not None and o.sd and (o.mean - o.median) > 0.2 * o.sd:
        text += " The mean sits above the median because a minority of long values pull it up."
    return Finding(
        headline=f"Typical {words.lower}: {words.value(o.median)}",
        text=text,
        certainty=f"Interval from Student's t at {words.level_name} confidence.",
        figure=figure,
        key="overall",
        kind="overall",
        estimate=o.mean,
        ci_low=o.ci_low,
        ci_high=o.ci_high,
        test="student_t",
    )


def _pair(comparison: GroupComparison, a: str, b: str):
    for pair in comparison.pairwise:
        if {pair.level_a, pair.level_b} == {a, b}:
            return pair
    return None


def _test_phrase(comparison: GroupComparison) -> tuple[str, float | None]:
    """Name of the test the brief leans on, and its p-value."""
    if comparison.leans_on == "rank" and comparison.rank_test is not None:
        name = "Mann–Whitney" if comparison.rank_test.test == "mann_whitney" else "Kruskal–Wallis"
        return f"{name} rank test", comparison.rank_test.p_value
    name = "Welch's t-test" if comparison.test == "welch_t" else "Welch's ANOVA"
    return name, comparison.p_value


def group_finding(
    group: GroupResult, comparison: GroupComparison | None, words: Wording, name: str
) -> Finding | None:
    """Highest against lowest level, worded by the test the brief leans on.

    Welch's tests compare means, so the sentence compares means; rank tests compare
    typical values, so the sentence compares medians; a sentence never pairs one
    test's verdict with the other's numbers.
    """
    if group.share_comparison is not None:
        return binary_group_finding(group, words, name)
    usable = [s for s in group.summaries if s.n >= 2 and s.mean is not None]
    # compare_groups returns None exactly when fewer than two levels have n ≥ 2.
    if len(usable) < 2 or comparison is None:
        return None
    figure = group.key
    test, p = _test_phrase(comparison)
    data = {"key": group.key, "kind": "groups", "variables": (group.variable,)}
    if means_instead_of_medians(usable, comparison, words):
        return count_group_finding(group, comparison, usable, words, name)
    if p is None:
        return replace(_untested_finding(comparison, words, name, figure), **data)
    if comparison.leans_on == "rank":
        finding = _median_finding(usable, words, name, test, p, figure)
        data["test"] = comparison.rank_test.test
    else:
        finding = _mean_finding(usable, comparison, words, name, test, p, figure)
        data["test"] = comparison.test
    return replace(_with_disagreement(finding, comparison), p_value=p, **data)


def _mean_finding(usable, comparison, words, name, test, p, figure) -> Finding:
    high = max(usable, key=lambda s: s.mean)
    low = min(usable, key=lambda s: s.mean)
    pair = _pair(comparison, high.level, low.level)
    # The pair holds the exact difference (median + shift); rounded means would lose digits.
    if pair is None:
        gap = high.mean - low.mean
    else:
        gap = pair.difference if pair.level_a == high.level else -pair.difference
    low_end = high_end = None
    text = (
        f"By {name}, {high.level} has the highest mean {words.lower}, {words.value(high.mean)}, and "
        f"{low.level} the lowest, {words.value(low.mean)}: a gap of {words.value(gap)}"
    )
    clear = p < SIGNIFICANCE
    # The interval is shown only when the overall test finds a difference: highest against
    # lowest is chosen after seeing the data, so its own interval alone would overstate certainty.
    if clear and pair is not None and pair.ci_low is not None:
        # The pair's difference is level_a − level_b; turn it round so the gap reads as high − low.
        low_end, high_end = (
            (pair.ci_low, pair.ci_high)
            if pair.level_a == high.level
            else (-pair.ci_high, -pair.ci_low)
        )
        text += f" ({words.level_name} interval {words.interval(low_end, high_end)})"
    if words.scale == "ratio" and low.mean and low.mean > 0 and abs(gap / low.mean) >= 0.005:
        text += f", or {fmt_percent(gap / low.mean)} more"
    text += "."
    if clear:
        headline = (
            f"By {name}: {high.level} highest ({words.value(high.mean)}), "
            f"{low.level} lowest ({words.value(low.mean)})"
        )
        certainty = f"A gap this large would be unlikely if {name} made no difference ({test}, {p_text(p)})."
    else:
        headline = f"By {name}: no clear difference"
        certainty = _chance_phrase(name, test, p)
    return Finding(
        headline=headline,
        text=text,
        certainty=certainty,
        figure=figure,
        claim="difference" if clear else "none",
        levels=(high.level, low.level),
        estimate=gap,
        ci_low=low_end if clear else None,
        ci_high=high_end if clear else None,
    )


def _median_finding(usable, words, name, test, p, figure) -> Finding:
    high = max(usable, key=lambda s: s.median)
    low = min(usable, key=lambda s: s.median)
    text = (
        f"By {name}, the typical (median) {words.lower} is highest for {high.level}, "
        f"{words.value(high.median)}, and lowest for {low.level}, {words.value(low.median)}; "
        f"their means are {words.value(high.mean)} and {words.value(low.mean)}."
    )
    if p < SIGNIFICANCE:
        headline = (
            f"By {name}: {high.level} typically highest ({words.value(high.median)}), "
            f"{low.level} lowest ({words.value(low.median)})"
        )
        certainty = f"Values differ between levels of {name} more than chance would explain ({test}, {p_text(p)})."
    else:
        headline = f"By {name}: no clear difference"
        certainty = _chance_phrase(name, test, p)
    detail = "Values are strongly skewed within groups, so the brief relies on a rank-based test."
    return Finding(
        headline=headline,
        text=text,
        certainty=certainty,
        figure=figure,
        detail=detail,
        claim="difference" if p < SIGNIFICANCE else "none",
        levels=(high.level, low.level),
        estimate=high.median - low.median,
    )


def _chance_phrase(name: str, test: str, p: float) -> str:
    return (
        f"Gaps this size could easily arise by chance ({test}, {p_text(p)}): the data do not show "
        f"that {name} matters, which is not the same as showing that it does not."
    )


def _with_disagreement(finding: Finding, comparison: GroupComparison) -> Finding:
    """Say so when the test on means and the test on ranks reach different verdicts."""
    ranks = comparison.rank_test
    if ranks is None or ranks.p_value is None or comparison.p_value is None:
        return finding
    welch_clear = comparison.p_value < SIGNIFICANCE
    rank_clear = ranks.p_value < SIGNIFICANCE
    if welch_clear == rank_clear:
        return finding
    other = (
        f"the test on means (Welch) gives {p_text(comparison.p_value)}"
        if comparison.leans_on == "rank"
        else f"the rank test on typical values gives {p_text(ranks.p_value)}"
    )
    note = f"Means and typical values tell different stories here: {other}."
    detail = f"{finding.detail} {note}".strip()
    return replace(finding, detail=detail)


def _untested_finding(
    comparison: GroupComparison, words: Wording, name: str, figure: str
) -> Finding:
    reason = getattr(comparison, "undefined_reason", None) or "too few levels vary"
    return Finding(
        headline=f"By {name}: difference not tested",
        text=f"The levels of {name} could not be compared with a test: {reason.rstrip('.')}.",
        certainty="Read the table of levels instead; no statement of certainty is possible.",
        figure=figure,
        claim="not_tested",
    )


def cross_finding(
    cross: CrossTable, words: Wording, row_name: str, column_name: str
) -> Finding | None:
    """Whether one combination departs from what its two parts predict added together.

    The highest cell alone would mislead: it is high whenever its row and column are,
    and it is the largest of many noisy cells. The standout result compares each cell
    with the additive prediction at a level adjusted for the number of cells.
    """
    standout = getattr(cross, "standout", None)
    if standout is None:
        return None
    figure = cross.key
    data = {
        "key": cross.key,
        "kind": "cross",
        "variables": (cross.row_variable, cross.column_variable),
        "levels": (standout.row, standout.column),
        "estimate": standout.excess,
        "ci_low": standout.excess_ci_low,
        "ci_high": standout.excess_ci_high,
        "test": "bonferroni_t_interval",
    }
    pair = f"{standout.row} with {standout.column}"
    interval = (
        f"{words.interval(standout.excess_ci_low, standout.excess_ci_high)}, adjusted for the "
        f"{standout.cells_compared} combinations compared"
    )
    excess = words.value(standout.excess)
    excess = excess if excess.startswith("−") else f"+{excess}"
    small = sum(
        1 for c in cross.cells if c.row is not None and c.column is not None and c.too_small
    )
    detail = (
        f"{small} combinations with fewer than {cross.min_cell} rows are marked and not compared."
        if small
        else ""
    )
    if standout.stands_out:
        text = (
            f"{pair[:1].upper() + pair[1:]} averages {words.value(standout.mean)} (n = {fmt_count(standout.n)}), {excess} against "
            f"the {words.value(standout.expected)} that its {row_name} and its {column_name} predict "
            f"added together ({words.level_name} interval of the difference {interval})."
        )
        return Finding(
            headline=f"{pair[:1].upper() + pair[1:]} stands out ({excess} beyond its parts)",
            text=text,
            certainty="The combination itself matters, beyond each part; that says where, not why.",
            figure=figure,
            detail=detail,
            claim="difference",
            **data,
        )
    text = (
        f"Each combination of {row_name} and {column_name} is close to what its two parts predict added "
        f"together. The largest departure, {pair}, is {excess} ({interval})."
    )
    return Finding(
        headline=f"No clear combination effect of {row_name} and {column_name}",
        text=text,
        certainty="No departure is larger than chance would produce across this many combinations.",
        figure=figure,
        detail=detail,
        claim="none",
        **data,
    )


def trend_finding(trend: Trend, words: Wording) -> Finding | None:
    if trend.change is None or trend.change_ci_low is None or not trend.periods:
        return None
    first, last = trend.first_time, trend.last_time
    text = (
        f"From {first:%-d %b %Y} to {last:%-d %b %Y} ({len(trend.periods)} {trend.period}s), the straight-line "
        f"trend of {words.lower} changed by {_signed(trend.change, words)} across the span "
        f"({words.level_name} interval {_signed(trend.change_ci_low, words)} to {_signed(trend.change_ci_high, words)})."
    )
    clear = trend.change_ci_low > 0 or trend.change_ci_high < 0
    if clear:
        direction = "rose" if trend.change > 0 else "fell"
        headline = f"{words.label} {direction} over time ({_signed(trend.change, words)})"
        certainty = "The interval excludes zero. A trend says what happened, not why."
    else:
        headline = f"No clear trend in {words.lower} over time"
        certainty = "The interval includes zero: the data show no steady rise or fall."
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
    )


def _signed(value: float | None, words: Wording) -> str:
    text = words.value(value)
    return text if text.startswith("−") or text == "–" else f"+{text}"


def fit_finding(
    fit: RegressionFit,
    correlation: Correlation | None,
    log_fit: LogFit | None,
    slopes: list[tuple[str, GroupSlopes]],
    words: Wording,
    x_label: str,
) -> Finding | None:
    """Slope per unit with its interval, strength, and whether groups change it."""
    if fit.slope is None or fit.slope_ci_low is None:
        return None
    d = decimals_for(abs(fit.slope))
    x_lower = x_label[:1].lower() + x_label[1:]
    direction = "rises" if fit.slope > 0 else "falls"
    text = (
        f"{words.label} {direction} with {x_lower}: each extra unit goes with "
        f"{fmt(abs(fit.slope), d)} {'more' if fit.slope > 0 else 'less'} on average "
        f"({words.level_name} interval {fmt(fit.slope_ci_low, d)} to {fmt(fit.slope_ci_high, d)}), "
        f"and {x_lower} accounts for {fmt_percent(fit.r_squared)} of the variation (R², {fmt_count(fit.n)} rows)."
    )
    if correlation is not None and correlation.spearman_rho is not None:
        text += f" Rank correlation ρ = {correlation.spearman_rho:.2f} (Pearson r = {correlation.pearson_r:.2f})."
    if log_fit is not None and log_fit.percent_change_per_unit is not None:
        text += (
            f" In relative terms, each extra unit goes with a change of about "
            f"{fmt(log_fit.percent_change_per_unit, 1)}% in {words.lower} "
            f"({fmt(log_fit.percent_ci_low, 1)}% to {fmt(log_fit.percent_ci_high, 1)}%, fit on the log scale)."
        )
    differing = [name for name, s in slopes if s.p_value is not None and s.p_value < SIGNIFICANCE]
    if differing:
        text += (
            f" The slope is not the same everywhere: it differs by {', '.join(differing)} (F test)."
        )
    excludes_zero = fit.slope_ci_low > 0 or fit.slope_ci_high < 0
    certainty = (
        "The interval excludes zero. This is an association in these data, not proof of cause."
        if excludes_zero
        else "The interval includes zero: no clear straight-line relationship."
    )
    per_unit = f"{'+' if fit.slope > 0 else '−'}{fmt(abs(fit.slope), d)} per unit"
    headline = (
        f"{words.label} {direction} with {x_lower} ({per_unit})"
        if excludes_zero
        else f"No clear link with {x_lower}"
    )
    return Finding(
        headline=headline,
        text=text,
        certainty=certainty,
        figure=f"fit-{fit.predictor}",
        key=f"fit-{fit.predictor}",
        kind="fit",
        claim=("rise" if fit.slope > 0 else "fall") if excludes_zero else "none",
        variables=(fit.predictor,),
        estimate=fit.slope,
        ci_low=fit.slope_ci_low,
        ci_high=fit.slope_ci_high,
        test="ols_slope",
    )


def cautions(stats: BriefStats, words: Wording, names: dict[str, str]) -> list[str]:
    """What a reader must know before acting on the brief."""
    notes = [
        f"{fmt_count(dropped.rows)} rows left out of {dropped.analysis}: {dropped.reason}."
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
    many = sum(len(c.pairwise) for c in stats.comparisons)
    many += sum(len(g.share_comparison.pairwise) for g in stats.groups if g.share_comparison)
    if many > 3:
        notes.append(
            f"The brief makes {many} pairwise comparisons; some small p-values would arise by chance, so "
            "pairwise p-values are adjusted for this (Holm's method)."
        )
    box = stats.overall_box
    # In a count that is mostly zero the box is 0 to 0 and every other value would be "far".
    if box is not None and box.outlier_count and words.kind == "continuous":
        notes.append(
            f"{fmt_count(box.outlier_count)} values lie far from the rest (beyond 1.5 × IQR from the box). "
            "None were removed: every figure and average includes them."
        )
    if stats.trend is not None and any(p.partial for p in stats.trend.periods):
        notes.append(
            "The first or last period of the trend is only partly covered by the data; read its value with care."
        )
    return notes


# ── The kind of target decides the wording (binary shares, counts with many zeros) ──


def _share(value: float | None) -> str:
    """A share (0–1) as a percent with one decimal: shares of rows read in tenths of a percent."""
    return fmt_percent(value, 1)


def _points(value: float | None) -> str:
    """A difference of shares in percentage points, signed."""
    text = fmt(None if value is None else 100 * value, 1)
    return text if text.startswith("−") or text == "–" else f"+{text}"


def _clear(p: float | None, words: Wording) -> bool:
    """A verdict at the brief's configured confidence."""
    return p is not None and p < 1 - words.confidence


def kind_overall_finding(stats: BriefStats, words: Wording, figure: str | None) -> Finding:
    """The target over all rows as a share of 1s (binary), or its mean and zeros (count)."""
    o, share = stats.overall, stats.overall_share
    wilson = f"{words.level_name} interval {_share(share.ci_low)} to {_share(share.ci_high)}"
    if words.kind == "binary":
        return Finding(
            headline=f"{words.label}: {_share(share.share)} of rows are 1 (yes)",
            text=(
                f"Of {fmt_count(share.n)} rows with a value, {fmt_count(share.events)} "
                f"({_share(share.share)}) have {words.lower} equal to 1 (yes) ({wilson})."
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
        headline=f"Average {words.lower}: {words.value(o.mean)}; {_share(share.share)} are 0",
        text=(
            f"Across {fmt_count(o.n)} rows, the mean {words.lower} is {words.value(o.mean)} "
            f"({words.level_name} interval {words.interval(o.ci_low, o.ci_high)}), and "
            f"{_share(share.share)} of values are 0 ({wilson}). With this many zeros the median "
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


def _share_pair(group: GroupResult, high: str, low: str) -> tuple[float, float, float] | None:
    """(gap, low, high) of share(high) − share(low) from the pairwise Newcombe intervals."""
    for pair in group.share_comparison.pairwise:
        if (pair.level_a, pair.level_b) == (high, low):
            return pair.difference, pair.ci_low, pair.ci_high
        if (pair.level_a, pair.level_b) == (low, high):
            return -pair.difference, -pair.ci_high, -pair.ci_low
    return None


def binary_group_finding(group: GroupResult, words: Wording, name: str) -> Finding | None:
    """Highest and lowest share of 1s, the gap in percentage points, and the test on shares."""
    comparison = group.share_comparison
    shares = [s for s in group.shares if s.n >= 1 and s.share is not None]
    data = {
        "figure": group.key,
        "key": group.key,
        "kind": "groups",
        "variables": (group.variable,),
        "test": comparison.test,
    }
    if comparison.p_value is None:
        return Finding(
            headline=f"By {name}: difference not tested",
            text=f"The levels of {name} could not be compared: {comparison.undefined_reason}.",
            certainty="Read the table of levels instead; no statement of certainty is possible.",
            claim="not_tested",
            **data,
        )
    high = max(shares, key=lambda s: s.share)
    # The lowest is picked among the other levels, so no level is named both highest and lowest.
    low = min((s for s in shares if s is not high), key=lambda s: s.share)
    gap, gap_low, gap_high = _share_pair(group, high.level, low.level)
    test = "two-proportion z test" if comparison.test == "two_proportion_z" else "chi-square test"
    p = comparison.p_value
    clear = _clear(p, words)
    text = (
        f"By {name}, {_share(high.share)} of rows are 1 for {high.level} ({words.level_name} "
        f"interval {_share(high.ci_low)} to {_share(high.ci_high)}) and {_share(low.share)} for "
        f"{low.level} ({_share(low.ci_low)} to {_share(low.ci_high)}): a gap of "
        f"{_points(gap)} percentage points"
    )
    if clear:
        text += (
            f" ({words.level_name} interval {_points(gap_low)} to {_points(gap_high)} points, "
            "Newcombe's hybrid score method)"
        )
    text += "."
    if clear:
        headline = (
            f"By {name}: {high.level} highest ({_share(high.share)}), "
            f"{low.level} lowest ({_share(low.share)}), {_points(gap)} percentage points"
        )
        certainty = (
            f"A gap this large would be unlikely if {name} made no difference "
            f"({test} on shares, {p_text(p)})."
        )
    else:
        headline = f"By {name}: no clear difference"
        certainty = _chance_phrase(name, f"{test} on shares", p)
    return Finding(
        headline=headline,
        text=text,
        certainty=certainty,
        claim="difference" if clear else "none",
        levels=(high.level, low.level),
        estimate=gap,
        ci_low=gap_low if clear else None,
        ci_high=gap_high if clear else None,
        p_value=p,
        **data,
    )


def means_instead_of_medians(usable, comparison: GroupComparison, words: Wording) -> bool:
    """True for a count target, and wherever the rank test leans on medians that tie.

    Tied medians would name one level both highest and lowest; a count that is mostly
    zero has medians at 0 in most levels, so its means carry the pattern.
    """
    if words.kind == "count":
        return True
    medians = {s.median for s in usable}
    return comparison.leans_on == "rank" and len(medians) == 1


def count_group_finding(
    group: GroupResult, comparison: GroupComparison, usable, words: Wording, name: str
) -> Finding:
    """Means by Welch's test whatever the skew, with each named level's share of zeros."""
    data = {"key": group.key, "kind": "groups", "variables": (group.variable,)}
    if comparison.p_value is None:
        return replace(_untested_finding(comparison, words, name, group.key), **data)
    test = "Welch's t-test" if comparison.test == "welch_t" else "Welch's ANOVA"
    finding = _mean_finding(usable, comparison, words, name, test, comparison.p_value, group.key)
    zeros = {s.level: s for s in group.shares}
    named = [zeros[level] for level in finding.levels if level in zeros]
    text = finding.text
    if len(named) == 2:
        text += (
            f" Values are 0 in {_share(named[0].share)} of rows for {named[0].level} and "
            f"{_share(named[1].share)} for {named[1].level}."
        )
    why = (
        "Most values are 0, so medians tie and say little; the brief compares means with Welch's "
        "test, which holds for large groups whatever the skew."
        if words.kind == "count"
        else "The medians of every level are equal, so the brief compares means with Welch's test."
    )
    if comparison.rank_test is not None and comparison.rank_test.p_value is not None:
        why += f" The rank test on typical values gives {p_text(comparison.rank_test.p_value)}."
    return replace(
        finding, text=text, detail=why, test=comparison.test, p_value=comparison.p_value, **data
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
