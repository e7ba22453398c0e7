"""Results ─► plain sentences, each with a number, a comparison and its certainty.

A finding never computes a statistic; it reads the results and words them. Where
a result could mislead a decision (small groups, association read as cause, rows
left out, many comparisons), a caution is written beside it.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from briefgen.numbers import (
    decimals_for,
    fmt,
    fmt_count,
    fmt_interval,
    fmt_level,
    fmt_p,
    fmt_percent,
    fmt_step,
    p_text,
    readable_step,
)
from briefgen.present.direction import confounding
from briefgen.present.family import Family, verdict_test
from briefgen.present.order import Ordering, order_levels
from briefgen.stats import BriefStats
from briefgen.stats.compare import GroupComparison
from briefgen.stats.core.summary import Summary
from briefgen.stats.correlation import Correlation
from briefgen.stats.groups import GroupResult
from briefgen.stats.proportions import newcombe_interval
from briefgen.stats.regression import RegressionFit
from briefgen.stats.relationships import GroupSlopes, LogFit
from briefgen.stats.trend import Trend
from briefgen.stats.twoway import CrossTable
from briefgen.trend_text import partial_text, span_text

SMALL_GROUP = (
    30  # common practice, no published source: below ~30 a mean's interval is wide and fragile
)
# common practice, no published source: a predictor with this few values reads as codes
CODE_LIKE_VALUES = 5


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
        return fmt_interval(low, high, self.unit_decimals)

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


def _test_phrase(comparison: GroupComparison) -> str:
    """Name of the test the brief leans on."""
    if comparison.leans_on == "rank" and comparison.rank_test is not None:
        name = "Mann–Whitney" if comparison.rank_test.test == "mann_whitney" else "Kruskal–Wallis"
        return f"{name} rank test"
    return "Welch's t-test" if comparison.test == "welch_t" else "Welch's ANOVA"


def _adjusted_phrase(p: float, p_adjusted: float | None, family: Family) -> str:
    """'p = 0.004, 0.03 after adjusting for the 9 questions tested' (or just the p)."""
    if p_adjusted is None or family.size <= 1:
        return p_text(p)
    return (
        f"{p_text(p)}, {fmt_p(p_adjusted)} after adjusting for the {family.size} questions "
        "this brief tests"
    )


def group_finding(
    group: GroupResult,
    comparison: GroupComparison | None,
    words: Wording,
    name: str,
    family: Family,
) -> Finding | None:
    """Which levels are highest and lowest, as far as the adjusted tests separate them.

    Welch's tests compare means, so the sentence compares means; rank tests compare
    where values tend to lie, so the sentence orders levels by mean rank and quotes
    medians; a sentence never pairs one test's verdict with the other's numbers.
    """
    if group.share_comparison is not None:
        return binary_group_finding(group, words, name, family)
    usable = [s for s in group.named_summaries if s.n >= 2 and s.mean is not None]
    # compare_groups returns None exactly when fewer than two levels have n ≥ 2.
    if len(usable) < 2 or comparison is None:
        return None
    by_means = words.kind == "count"
    test_name = "Welch's t-test" if comparison.test == "welch_t" else "Welch's ANOVA"
    if not by_means:
        test_name = _test_phrase(comparison)
    test, p = verdict_test(group, words.kind)
    data = {"key": group.key, "kind": "groups", "variables": (group.variable,)}
    if p is None:
        return replace(_untested_finding(comparison, words, name, group.key), **data)
    p_adjusted = family.adjusted(group.key)
    clear = family.passes(group.key)
    ordering = order_levels(
        usable, comparison, family.alpha, clear, group.shown.other_label, by_means=by_means
    )
    finding = _order_finding(ordering, usable, words, name, clear)
    if by_means:
        finding = _with_zero_shares(finding, group, comparison)
    verdict = f"{test_name}, {_adjusted_phrase(p, p_adjusted, family)}"
    certainty = (
        f"Differences this large would be unlikely if {name} made no difference ({verdict})."
        if clear
        else _chance_phrase(name, verdict)
    )
    finding = replace(
        finding,
        certainty=certainty,
        figure=group.key,
        test=test,
        p_value=p,
        p_adjusted=p_adjusted,
        **data,
    )
    return _with_disagreement(finding, comparison, family.alpha)


def _with_zero_shares(finding: Finding, group: GroupResult, comparison: GroupComparison) -> Finding:
    """A count target's sentence adds each named level's share of zeros, and why means."""
    zeros = {s.level: s for s in group.shares}
    named = [zeros[level] for level in finding.levels[:1] + finding.levels[-1:] if level in zeros]
    text = finding.text
    if len(named) == 2 and named[0] is not named[1]:
        text += (
            f" Values are 0 in {_share(named[0].share)} of rows for {named[0].level} and "
            f"{_share(named[1].share)} for {named[1].level}."
        )
    why = (
        "Most values are 0, so medians tie and say little; the brief compares means with Welch's "
        "test, which holds for large groups whatever the skew."
    )
    if comparison.rank_test is not None and comparison.rank_test.p_value is not None:
        why += f" The rank test on typical values gives {p_text(comparison.rank_test.p_value)}."
    return replace(finding, text=text, detail=why)


def _level(confidence: float) -> str:
    """A widened interval level to one decimal (98.3%), where fmt_level would print 98.33333333%."""
    text = fmt_level(confidence)
    return text if len(text) <= 6 else f"{fmt(100 * confidence, 1)}%"


def _listed(levels: tuple[str, ...]) -> str:
    names = [str(level) for level in levels]
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]


def _order_finding(
    ordering: Ordering, usable: list[Summary], words: Wording, name: str, clear: bool
) -> Finding:
    """Sentence and headline from an ordering; certainty and test data are added by the caller."""
    by_level = {s.level: s for s in usable}
    high, low = by_level[ordering.highest], by_level[ordering.lowest]
    rank = ordering.measure == "rank"
    value = (lambda s: words.value(s.median)) if rank else (lambda s: words.value(s.mean))
    if rank:
        text = (
            f"By {name}, values tend to be highest for {high.level} (median {value(high)}) and "
            f"lowest for {low.level} (median {value(low)}); their means are "
            f"{words.value(high.mean)} and {words.value(low.mean)}."
        )
        if high.median == low.median:
            text += (
                " The medians are equal; the rank test compares where all values lie, "
                "not only the middle one."
            )
    else:
        text = (
            f"By {name}, {high.level} has the highest mean {words.lower}, {value(high)}, and "
            f"{low.level} the lowest, {value(low)}: a gap of {words.value(ordering.gap)}"
        )
        if clear and ordering.ends_apart and ordering.gap_ci_low is not None:
            text += (
                f" ({_level(ordering.pair_confidence)} interval "
                f"{words.interval(ordering.gap_ci_low, ordering.gap_ci_high)}, widened because "
                f"this pair was picked as the most different of {ordering.pairs})"
            )
        if (
            words.scale == "ratio"
            and low.mean
            and low.mean > 0
            and abs(ordering.gap / low.mean) >= 0.005
        ):
            text += f", or {fmt_percent(ordering.gap / low.mean)} more"
        text += "."
    estimate = (high.median - low.median) if rank else ordering.gap
    base = {"text": text, "certainty": "", "levels": (high.level, low.level)}
    if not clear:
        return Finding(
            headline=f"By {name}: no clear difference", claim="none", estimate=estimate, **base
        )
    if rank and high.median == low.median:
        # Equal medians in brackets would contradict "highest"; the means show the gap.
        value = lambda s: f"mean {words.value(s.mean)}"  # noqa: E731
    headline, text_more = _order_headline(ordering, by_level, value, name, rank)
    interval = {}
    if not rank and ordering.ends_apart:
        interval = {"ci_low": ordering.gap_ci_low, "ci_high": ordering.gap_ci_high}
    levels = ordering.top[:1] + ordering.bottom[:1]
    if not ordering.single_top or not ordering.single_bottom:
        levels = (*ordering.top, *[lv for lv in ordering.bottom if lv not in ordering.top])
    return Finding(
        headline=headline,
        text=f"{text}{text_more}",
        certainty="",
        claim="difference",
        levels=levels,
        estimate=estimate,
        **interval,
    )


def _order_headline(ordering, by_level, value, name, rank) -> tuple[str, str]:
    """Headline naming only the order the adjusted pairwise tests support, and a note."""
    high, low = by_level[ordering.highest], by_level[ordering.lowest]
    word = "typically highest" if rank else "highest"
    if ordering.flat:
        return (
            f"By {name}: levels differ in spread, not in their {'medians' if rank else 'means'}",
            "",
        )
    if ordering.single_top and ordering.single_bottom:
        return (
            f"By {name}: {high.level} {word} ({value(high)}), {low.level} lowest ({value(low)})",
            "",
        )
    if ordering.single_top:
        note = f" {_listed(ordering.bottom)} are not clearly apart from each other at the bottom."
        return f"By {name}: {high.level} {word} ({value(high)})", note
    if ordering.single_bottom:
        note = f" {_listed(ordering.top)} are not clearly apart from each other at the top."
        return f"By {name}: {low.level} lowest ({value(low)})", note
    note = (
        f" No single level is clearly apart from its neighbours: {_listed(ordering.top)} are not "
        f"told apart at the top, {_listed(ordering.bottom)} at the bottom."
    )
    if ordering.ends_apart:
        return (
            f"By {name}: {high.level} above {low.level} ({value(high)} against {value(low)})",
            note,
        )
    return f"By {name}: levels differ, but no single pair is clearly apart", note


def _chance_phrase(name: str, verdict: str) -> str:
    return (
        f"Gaps this size could easily arise by chance ({verdict}): the data do not show "
        f"that {name} matters, which is not the same as showing that it does not."
    )


def _with_disagreement(finding: Finding, comparison: GroupComparison, alpha: float) -> Finding:
    """Say so when the test on means and the test on ranks reach different verdicts."""
    ranks = comparison.rank_test
    if ranks is None or ranks.p_value is None or comparison.p_value is None:
        return finding
    if (comparison.p_value < alpha) == (ranks.p_value < alpha):
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
    cross: CrossTable, words: Wording, row_name: str, column_name: str, family: Family
) -> Finding | None:
    """Whether one combination departs from what its two parts predict added together.

    The highest cell alone would mislead: it is high whenever its row and column are,
    and it is the largest of many noisy cells. A combination is claimed only when the
    interaction F test passes in the brief's family (on the log or rank scale for a
    strongly skewed target) and the cell's own interval, adjusted for the number of
    cells, excludes zero.
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
        "test": f"interaction_f_{cross.interaction.scale}",
        "p_value": cross.interaction.p_value,
        "p_adjusted": family.adjusted(cross.key),
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
    scale = {
        "log": " (tested on the log scale, as values are strongly skewed)",
        "rank": " (tested on ranks, as values are strongly skewed)",
    }.get(cross.interaction.scale, "")
    if standout.stands_out and family.passes(cross.key):
        text = (
            f"{pair[:1].upper() + pair[1:]} averages {words.value(standout.mean)} (n = {fmt_count(standout.n)}), {excess} against "
            f"the {words.value(standout.expected)} that its {row_name} and its {column_name} predict "
            f"added together ({words.level_name} interval of the difference {interval})."
        )
        return Finding(
            headline=f"{pair[:1].upper() + pair[1:]} stands out ({excess} beyond its parts)",
            text=text,
            certainty=(
                f"The combination itself matters, beyond each part{scale}; that says where, not why."
            ),
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
        certainty=(
            "No departure is larger than chance would produce across this many combinations"
            f"{scale}."
        ),
        figure=figure,
        detail=detail,
        claim="none",
        **data,
    )


def trend_finding(trend: Trend, words: Wording, family: Family) -> Finding | None:
    if trend.change is None or trend.change_ci_low is None or not trend.periods:
        return None
    if words.kind == "binary":
        # A 0/1 target's trend is a change in its share of 1s, in percentage points.
        change, measure = (
            f"{_points(trend.change)} percentage points",
            f"the share of {words.lower} = 1",
        )
        interval = f"{_points(trend.change_ci_low)} to {_points(trend.change_ci_high)} points"
    else:
        change, measure = _signed(trend.change, words), words.lower
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


def _signed(value: float | None, words: Wording) -> str:
    text = words.value(value)
    return text if text.startswith("−") or text == "–" else f"+{text}"


def _step_phrases(fit: RegressionFit, factor: float = 1.0) -> tuple[float, str, str]:
    """The step of the predictor slopes are stated per: (step, 'unit' or '1,000 units', 'per …').

    ``factor`` is how the slope is printed (100 for percentage points of a 0/1 target).
    """
    spread = None if fit.x_min is None or fit.x_max is None else fit.x_max - fit.x_min
    step = readable_step(fit.slope * factor, spread)
    if step == 1:
        return step, "unit", "per unit"
    return step, f"{fmt_step(step)} units", f"per {fmt_step(step)}"


def _signed_slope(value: float, decimals: int) -> str:
    return f"{'+' if value > 0 else '−'}{fmt(abs(value), decimals)}"


def fit_finding(
    fit: RegressionFit,
    correlation: Correlation | None,
    log_fit: LogFit | None,
    slopes: list[tuple[str, GroupSlopes]],
    words: Wording,
    x_label: str,
    family: Family,
) -> Finding | None:
    """Direction of the target with one predictor, only where line, ranks and groups agree."""
    if fit.slope is None or fit.slope_ci_low is None:
        return None
    key = f"fit-{fit.predictor}"
    # A 0/1 target's slope is a change in its share of 1s: said in percentage points.
    points = words.kind == "binary"
    factor = 100.0 if points else 1.0
    step, step_words, per = _step_phrases(fit, factor)
    scale = step * factor
    slope, low, high = fit.slope * scale, fit.slope_ci_low * scale, fit.slope_ci_high * scale
    d = decimals_for(abs(slope))
    amount = " percentage points" if points else ""
    measure = f"in the share of {words.lower} = 1" if points else words.lower
    x_lower = x_label[:1].lower() + x_label[1:]
    direction = "rises" if fit.slope > 0 else "falls"
    text = (
        f"The straight line {direction}: each extra {step_words} of {x_lower} goes with "
        f"{fmt(abs(slope), d)}{amount} {'more' if slope > 0 else 'less'} {measure} on average "
        f"({words.level_name} interval {fmt_interval(low, high, d)}), "
        f"and {x_lower} accounts for {fmt_percent(fit.r_squared)} of the variation (R², {fmt_count(fit.n)} rows)."
    )
    rho = correlation.spearman_rho if correlation is not None else None
    if rho is not None:
        text += (
            f" Rank correlation ρ = {fmt(rho, 2)} (Pearson r = {fmt(correlation.pearson_r, 2)})."
        )
    if log_fit is not None and log_fit.percent_change_per_unit is not None:
        text += (
            f" In relative terms, each extra unit goes with a change of about "
            f"{fmt(log_fit.percent_change_per_unit, 1)}% in {words.lower} "
            f"({fmt_interval(log_fit.percent_ci_low, log_fit.percent_ci_high, 1, suffix='%')}, fit on the log scale)."
        )
    question = family.question(key)
    p_adjusted = family.adjusted(key)
    clear = family.passes(key)
    names = {s.group: name for name, s in slopes}
    found = (
        confounding(fit, [s for _, s in slopes], family.alpha, family.bonferroni_alpha)
        if clear
        else None
    )
    data = {
        "figure": key,
        "key": key,
        "kind": "fit",
        "variables": (fit.predictor,),
        "estimate": fit.slope,
        "ci_low": fit.slope_ci_low,
        "ci_high": fit.slope_ci_high,
        "test": "ols_slope_and_spearman",
        # The direction question's p: the larger of the line's and the ranks' (see family).
        "p_value": question.p_value if question is not None else fit.slope_p_value,
        "p_adjusted": p_adjusted,
    }
    verdict = _adjusted_phrase(data["p_value"], p_adjusted, family)
    if found is not None:
        return _confounded_finding(found, fit, words, x_lower, names, text, data, scale, per)
    if clear:
        differing = [names.get(g, g) for g in family.slopes_differ(fit.predictor)]
        if differing:
            text += f" The slope is not the same everywhere: it differs by {', '.join(differing)} (F test, adjusted)."
        return Finding(
            headline=(
                f"{words.label} {direction} with {x_lower} "
                f"({_signed_slope(slope, d)}{' points' if points else ''} {per})"
            ),
            text=text,
            certainty=(
                f"The line and the rank correlation agree and both are clear ({verdict}). "
                "This is an association in these data, not proof of cause."
            ),
            claim="rise" if fit.slope > 0 else "fall",
            **data,
        )
    line_clear = fit.slope_p_value is not None and fit.slope_p_value < family.alpha
    if rho is not None and rho * fit.slope < 0 and (line_clear or _rank_clear(correlation, family)):
        return Finding(
            headline=f"No consistent direction between {words.lower} and {x_lower}",
            text=text
            + (
                f" The straight line {direction} while the rank correlation points the other way "
                f"(ρ = {fmt(rho, 2)}): a few far-out values tilt the line against most of the data."
            ),
            certainty="Neither direction can be claimed while the two measures disagree.",
            claim="none",
            **data,
        )
    return Finding(
        headline=f"No clear link with {x_lower}",
        text=text,
        certainty=f"No clear straight-line or rank relationship ({verdict}).",
        claim="none",
        **data,
    )


def _rank_clear(correlation: Correlation, family: Family) -> bool:
    p = correlation.spearman_p_value
    return p is not None and p < family.alpha


def _confounded_finding(found, fit, words, x_lower, names, text, data, step, per) -> Finding:
    """The within-group relation, with the group named as the likely confounder."""
    within = found.slopes
    group = names.get(found.group, found.group)
    slope = within.common_slope * step
    low, high = within.common_ci_low * step, within.common_ci_high * step
    d = decimals_for(abs(slope))
    overall = "rises" if fit.slope > 0 else "falls"
    within_text = (
        f" Within each level of {group}, the slope is {_signed_slope(slope, d)} {per} "
        f"({words.level_name} interval {fmt_interval(low, high, d)})."
    )
    data = data | {
        "variables": (fit.predictor, found.group),
        "estimate": within.common_slope,
        "ci_low": within.common_ci_low,
        "ci_high": within.common_ci_high,
        "test": "ols_common_slope_within_groups",
        "p_value": within.common_p_value,
    }
    if found.kind == "reverses":
        direction = "rises" if slope > 0 else "falls"
        return Finding(
            headline=f"Within each {group}, {words.lower} {direction} with {x_lower} ({_signed_slope(slope, d)} {per})",
            text=text
            + within_text
            + (
                f" Overall the line {overall} only because the levels of {group} differ in both "
                f"{x_lower} and {words.lower}: {group} is the likely confounder."
            ),
            certainty=(
                f"The within-group slope is clear at the brief's adjusted level; the overall line "
                f"mixes levels of {group}. An association in these data, not proof of cause."
            ),
            claim="rise" if slope > 0 else "fall",
            **data,
        )
    return Finding(
        headline=f"Link with {x_lower} is explained by {group}",
        text=text
        + within_text
        + (
            f" The overall line {overall} mostly because the levels of {group} differ in both "
            f"{x_lower} and {words.lower}: within a level, no clear link remains."
        ),
        certainty=f"{group[:1].upper() + group[1:]} is the likely confounder; read the levels separately.",
        claim="none",
        **data,
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
    return notes


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
        if shown.numeric and shown.other_label is not None:
            name = names.get(group.variable, group.variable)
            notes.append(
                f"{name[:1].upper() + name[1:]} holds numbers with {fmt_count(shown.levels_in_data)} "
                "distinct values, so as "
                f"a group it shows {len(shown.kept)} of them and folds the rest into "
                f"{shown.other_label} ({fmt_percent(shown.folded_share)} of rows), losing their order. "
                f"To see how {words.lower} changes along it, list {group.variable} under predictors "
                "in the config instead of groups."
            )
    for fit in stats.fits:
        if fit.x_distinct is not None and 1 < fit.x_distinct <= CODE_LIKE_VALUES:
            notes.append(
                f"{fit.predictor} takes only {fit.x_distinct} distinct values: it is likely a code or "
                "a category, and a straight line through so few values can hide the pattern between "
                f"them. If its values are labels, list {fit.predictor} under groups in the config "
                "instead of predictors."
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


def _share_apart(group: GroupResult, a: str, b: str, alpha: float) -> bool:
    """Whether the Holm-adjusted pairwise test on shares separates two levels."""
    comparison = group.share_comparison
    if len(comparison.levels) == 2:
        return True  # the overall test is the pairwise test; the caller checked it
    for pair in comparison.pairwise:
        if {pair.level_a, pair.level_b} == {a, b}:
            return pair.p_holm is not None and pair.p_holm < alpha
    return False


def binary_group_finding(
    group: GroupResult, words: Wording, name: str, family: Family
) -> Finding | None:
    """Highest and lowest share of 1s, as far as adjusted pairwise tests separate them."""
    comparison = group.share_comparison
    fold = group.shown.other_label
    shares = [s for s in group.shares if s.n >= 1 and s.share is not None]
    if len([s for s in shares if s.level != fold]) >= 2:
        shares = [s for s in shares if s.level != fold]
    data = {
        "figure": group.key,
        "key": group.key,
        "kind": "groups",
        "variables": (group.variable,),
        "test": comparison.test,
    }
    if comparison.p_value is None or len(shares) < 2:
        return Finding(
            headline=f"By {name}: difference not tested",
            text=f"The levels of {name} could not be compared: {comparison.undefined_reason}.",
            certainty="Read the table of levels instead; no statement of certainty is possible.",
            claim="not_tested",
            **data,
        )
    ordered = sorted(shares, key=lambda s: (-s.share, str(s.level)))
    high, low = ordered[0], ordered[-1]
    pairs = max(1, len(comparison.levels) * (len(comparison.levels) - 1) // 2)
    # The pair is picked as the most different, so its interval is widened to 1 − α/m.
    pair_confidence = 1 - family.alpha / pairs
    gap, gap_low, gap_high = newcombe_interval(
        high.events, high.n, low.events, low.n, pair_confidence
    )
    test = "two-proportion z test" if comparison.test == "two_proportion_z" else "chi-square test"
    p, p_adjusted = comparison.p_value, family.adjusted(group.key)
    clear = family.passes(group.key)
    verdict = f"{test} on shares, {_adjusted_phrase(p, p_adjusted, family)}"
    text = (
        f"By {name}, {_share(high.share)} of rows are 1 for {high.level} ({words.level_name} "
        f"interval {_share(high.ci_low)} to {_share(high.ci_high)}) and {_share(low.share)} for "
        f"{low.level} ({_share(low.ci_low)} to {_share(low.ci_high)}): a gap of "
        f"{_points(gap)} percentage points"
    )
    top = [
        s.level
        for s in ordered
        if s is high
        or not _share_apart(group, high.level, s.level, family.alpha)
        or s.share == high.share
    ]
    bottom = [
        s.level
        for s in reversed(ordered)
        if s is low
        or not _share_apart(group, low.level, s.level, family.alpha)
        or s.share == low.share
    ]
    single_top, single_bottom = top == [high.level], bottom == [low.level]
    if clear and single_top and single_bottom:
        text += (
            f" ({_level(pair_confidence)} interval {_points(gap_low)} to {_points(gap_high)} "
            "points, Newcombe's hybrid score method"
            f"{', widened for picking this pair of ' + str(pairs) if pairs > 1 else ''})"
        )
    text += "."
    if not clear:
        headline = f"By {name}: no clear difference"
        certainty = _chance_phrase(name, verdict)
    else:
        certainty = (
            f"Differences this large would be unlikely if {name} made no difference ({verdict})."
        )
        if single_top and single_bottom:
            headline = (
                f"By {name}: {high.level} highest ({_share(high.share)}), "
                f"{low.level} lowest ({_share(low.share)}), {_points(gap)} percentage points"
            )
        elif single_top:
            headline = f"By {name}: {high.level} highest ({_share(high.share)})"
            text += (
                f" {_listed(tuple(bottom))} are not clearly apart from each other at the bottom."
            )
        elif single_bottom:
            headline = f"By {name}: {low.level} lowest ({_share(low.share)})"
            text += f" {_listed(tuple(top))} are not clearly apart from each other at the top."
        else:
            headline = f"By {name}: shares differ, but no single level is clearly apart"
    interval = clear and single_top and single_bottom
    return Finding(
        headline=headline,
        text=text,
        certainty=certainty,
        claim="difference" if clear else "none",
        levels=(high.level, low.level),
        estimate=gap,
        ci_low=gap_low if interval else None,
        ci_high=gap_high if interval else None,
        p_value=p,
        p_adjusted=p_adjusted,
        **data,
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
