"""Findings for one group variable: which levels are highest and lowest, and how surely.

The verdict reads the brief's family; the order comes from ``present.order`` (means
and Welch pairs, or mean ranks and Dunn pairs), or from Holm-adjusted tests on
shares for a 0/1 target.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from functools import partial

from briefgen.config import BriefSpec
from briefgen.figures.distribution import distribution_chart
from briefgen.figures.shares import share_chart
from briefgen.figures.theme import ROW_IN, Chart, compact_row_in
from briefgen.numbers import (
    fmt_count,
    fmt_percent,
    fmt_share,
    p_text,
)
from briefgen.present.bounds import interval_floor
from briefgen.present.cautions import SMALL_GROUP
from briefgen.present.direction import VANISHING
from briefgen.present.family import Family, verdict_test
from briefgen.present.finding import SETTLED, Finding
from briefgen.present.order import Ordering, order_levels
from briefgen.present.section import Section
from briefgen.present.wording import (
    Wording,
    adjusted_phrase,
    chance_phrase,
    listed,
    name_for,
    points_text,
    share_text,
    test_name,
    widened_level,
)
from briefgen.stats import BriefStats
from briefgen.stats.compare import GroupComparison
from briefgen.stats.core.summary import Summary
from briefgen.stats.groups import GroupResult
from briefgen.stats.interaction import AdjustedTest
from briefgen.stats.proportions import newcombe_interval
from briefgen.tables import (
    Table,
    effects_table,
    group_table,
    pairwise_table,
    share_pairs_table,
)


def _test_phrase(comparison: GroupComparison) -> str:
    """Name of the test the brief leans on."""
    if comparison.leans_on == "rank" and comparison.rank_test is not None:
        return test_name(comparison.rank_test.test)
    return test_name(comparison.test)


def group_finding(
    group: GroupResult,
    comparison: GroupComparison | None,
    words: Wording,
    name: str,
    family: Family,
    others: Sequence[tuple[str, str, AdjustedTest, AdjustedTest]] = (),
) -> Finding | None:
    """Which levels are highest and lowest, as far as the adjusted tests separate them.

    ``others`` are (column, name, test of this group given that column) for each
    two-way table the group is in: a clear difference that vanishes once the other
    group is allowed for is said to be explained by it (the likely confounder). A
    group nested in another has no table with it (``stats.twoway.Nesting``), so it
    never comes here: ``_with_nesting`` says what the nesting means instead.

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
    named_test = _test_phrase(comparison) if not by_means else test_name(comparison.test)
    test, p = verdict_test(group, words.kind)
    data = {"key": group.key, "kind": "groups", "variables": (group.variable,)}
    if p is None:
        return replace(untested_finding(comparison, words, name, group.key), **data)
    p_adjusted = family.adjusted(group.key)
    clear = family.passes(group.key)
    ordering = order_levels(
        usable, comparison, family.alpha, clear, group.shown.other_label, by_means=by_means
    )
    finding = _order_finding(ordering, usable, words, name, clear)
    if by_means:
        finding = _with_zero_shares(
            finding, group, comparison, usable, (ordering.highest, ordering.lowest)
        )
    verdict = f"{named_test}, {adjusted_phrase(p, p_adjusted, family)}"
    certainty = (
        f"Differences this large would be unlikely if {name} made no difference ({verdict})."
        if clear
        else chance_phrase(name, verdict)
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
    if clear and others:
        finding = _with_confounders(finding, name, words, others, family.alpha)
    finding = _with_disagreement(finding, comparison, family.alpha)
    return _with_small_levels(finding, usable, _headline_levels(ordering))


def _with_small_levels(
    finding: Finding, usable: list[Summary], headline_levels: tuple[str, ...]
) -> Finding:
    """A claim whose headline names a level with few rows says so, page 1 included."""
    if finding.claim != "difference":
        return finding
    sizes = {s.level: s.n for s in usable}
    small = [
        (level, sizes[level])
        for level in dict.fromkeys(headline_levels)
        if sizes.get(level, SMALL_GROUP) < SMALL_GROUP
    ]
    if not small:
        return finding
    named = listed(tuple(f"{level} (n = {fmt_count(n)})" for level, n in small))
    note = (
        f"{named} {'is a small group' if len(small) == 1 else 'are small groups'}: "
        f"a few more rows could move {'its' if len(small) == 1 else 'their'} figures a lot."
    )
    return replace(finding, certainty=f"{finding.certainty} {note}")


def _with_confounders(
    finding: Finding,
    name: str,
    words: Wording,
    others: Sequence[tuple[str, str, AdjustedTest, AdjustedTest]],
    alpha: float,
) -> Finding:
    """Say when another configured group explains this one's differences, wholly or in part.

    Only for pairs with a two-way table (crossed, neither nested in the other), where
    either group can be compared with the other held fixed. "In part" is said only when
    the other group's own differences are not in turn mostly this one's: of two tangled
    groups, the one that keeps its differences is the driver.
    """
    defined = [o for o in others if o[2].p_value is not None and o[2].kept is not None]
    for column, other, test, _ in defined:
        if test.p_value >= alpha and test.kept < VANISHING:
            text = (
                f"{finding.text} Once {other} is allowed for, the differences by {name} shrink to "
                f"{fmt_share(test.kept)} of their size and are no longer clear "
                f"({p_text(test.p_value)}): the levels of {name} differ mostly in their mix of "
                f"{other}, the likely confounder."
            )
            return replace(
                finding,
                headline=f"By {name}: differences explained by {other}",
                text=text,
                certainty=f"Compare levels of {name} within each {other} before acting on them.",
                claim="explained",
                variables=(*finding.variables, column),
                ci_low=None,
                ci_high=None,
            )
    partial = [
        (n, t)
        for _, n, t, back in defined
        if t.kept < VANISHING and (back.kept is None or back.kept >= VANISHING)
    ]
    if partial:
        other, test = partial[0]
        note = (
            f"Most of this goes with {other}: allowing for it, only {fmt_share(test.kept)} of "
            f"the differences by {name} remain ({p_text(test.p_value)})."
        )
        # On page 1 too: a reader acting on the order should know the other group drives it.
        return replace(finding, certainty=f"{finding.certainty} {note}")
    return finding


def _with_nesting(finding: Finding, name: str, outers: Sequence[str]) -> Finding:
    """Say once that each level of this group lies within one level of another.

    The differences by the inner group then include the outer group's by construction:
    the outer group is part of what the inner one measures, not a confounder of it, and
    the outer group cannot be compared with the inner one held fixed. In the certainty,
    so page 1 says it wherever it states the claim.
    """
    notes = [
        f"Each level of {name} lies within one level of {outer}, so the differences by {name} "
        f"include the differences by {outer}."
        for outer in outers
    ]
    return replace(finding, certainty=" ".join([finding.certainty, *notes]).strip())


def _with_zero_shares(
    finding: Finding,
    group: GroupResult,
    comparison: GroupComparison,
    usable: list[Summary],
    ends: tuple[str, str],
) -> Finding:
    """A count target's sentence adds the shares of zeros of the highest and lowest level, and
    why means. ``ends`` are those two levels, the ones the sentence names: ``finding.levels``
    lists every level tied at the top and bottom, so its last entry need not be the lowest."""
    zeros = {s.level: s for s in group.shares}
    named = [zeros[level] for level in ends if level in zeros]
    text = finding.text
    if len(named) == 2 and named[0] is not named[1]:
        text += (
            f" Values are 0 in {share_text(named[0].share)} of rows for {named[0].level} and "
            f"{share_text(named[1].share)} for {named[1].level}."
        )
    counted = sum(s.n for s in group.shares)
    zero_share = sum(s.events for s in group.shares) / counted if counted else None
    share = (
        f"{share_text(zero_share)} of values are 0"
        if zero_share is not None
        else "Many values are 0"
    )
    why = (
        f"{share}, so medians tie and say little; the brief compares means with Welch's "
        "test, which holds for large groups whatever the skew."
    )
    smallest = min(s.n for s in usable)
    if smallest < SMALL_GROUP:
        why += f" Some groups here are small (the smallest has {fmt_count(smallest)} rows), so read its p-values as rough."
    if comparison.rank_test is not None and comparison.rank_test.p_value is not None:
        why += f" The rank test on typical values gives {p_text(comparison.rank_test.p_value)}."
    return replace(finding, text=text, detail=why)


def _order_finding(
    ordering: Ordering, usable: list[Summary], words: Wording, name: str, clear: bool
) -> Finding:
    """Sentence and headline from an ordering; certainty and test data are added by the caller."""
    by_level = {s.level: s for s in usable}
    high, low = by_level[ordering.highest], by_level[ordering.lowest]
    rank = ordering.measure == "rank"
    value = (lambda s: words.value(s.median)) if rank else (lambda s: words.value(s.mean))
    # Headlines say which measure their numbers are: medians on the rank path.
    headline_value = (lambda s: f"median {words.value(s.median)}") if rank else value
    # "Highest" and "lowest" in the sentence only where the tests support them; otherwise
    # the range is stated, which is true whatever the order.
    ordered = clear and ordering.single_top and ordering.single_bottom
    text = (_rank_text if rank else _mean_text)(ordering, usable, high, low, words, name, ordered)
    estimate = (high.median - low.median) if rank else ordering.gap
    base = {"text": text, "certainty": "", "levels": (high.level, low.level)}
    if not clear:
        return Finding(
            headline=f"By {name}: no clear difference", claim="none", estimate=estimate, **base
        )
    if rank and high.median == low.median:
        # Equal medians in brackets would contradict "highest"; the means show the gap.
        headline_value = lambda s: f"mean {words.value(s.mean)}"  # noqa: E731
    headline, text_more = _order_headline(ordering, by_level, headline_value, name, rank)
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


def _extremes(usable: list[Summary]) -> tuple[str, str]:
    """'higher'/'lower' between two levels, 'highest'/'lowest' among more."""
    return ("higher", "lower") if len(usable) == 2 else ("highest", "lowest")


def _rank_text(ordering, usable, high, low, words: Wording, name: str, ordered: bool) -> str:
    """The sentence on the rank path: medians quoted, levels placed by mean rank."""
    high_word, low_word = _extremes(usable)
    if ordered:
        text = (
            f"By {name}, values tend to be {high_word} for {high.level} (median "
            f"{words.value(high.median)}) and {low_word} for {low.level} (median "
            f"{words.value(low.median)}); their means are {words.value(high.mean)} and "
            f"{words.value(low.mean)}."
        )
    else:
        # No order is supported, so no level is said to sit highest: the levels holding the
        # extreme medians are named, as the table (ordered by median) shows them. Naming the
        # top by mean rank here put West South Central first where the table had South Atlantic.
        medians = [s for s in usable if s.level in ordering.values]
        top = max(medians, key=lambda s: s.median)
        bottom = min(medians, key=lambda s: s.median)
        text = (
            f"By {name}, medians of {words.lower} range from {words.value(bottom.median)} "
            f"({bottom.level}) to {words.value(top.median)} ({top.level})."
        )
    if high.median == low.median:
        text += (
            " The medians are equal; the rank test compares where all values lie, "
            "not only the middle one."
        )
    return text


def _mean_text(ordering, usable, high, low, words: Wording, name: str, ordered: bool) -> str:
    """The sentence on the means path: the gap, its widened interval when the ends are apart."""
    gap = words.value(ordering.gap)
    if ordered:
        high_word, low_word = _extremes(usable)
        text = (
            f"By {name}, {high.level} has the {high_word} mean {words.lower}, "
            f"{words.value(high.mean)}, and {low.level} the {low_word}, {words.value(low.mean)}: "
            f"a gap of {gap}"
        )
    else:
        text = (
            f"By {name}, the mean {words.lower} runs from {words.value(low.mean)} ({low.level}) "
            f"to {words.value(high.mean)} ({high.level}): a gap of {gap}"
        )
    # ends_apart already requires the overall test to pass.
    if ordering.ends_apart and ordering.gap_ci_low is not None:
        widened = (
            f", widened because this pair was picked as the most different of {ordering.pairs}"
            if ordering.pairs > 1
            else ""
        )
        text += (
            f" ({widened_level(ordering.pair_confidence)} interval "
            f"{words.interval(ordering.gap_ci_low, ordering.gap_ci_high)}{widened})"
        )
    relative = ordering.gap / low.mean if low.mean and low.mean > 0 else 0.0
    if words.scale == "ratio" and abs(relative) >= 0.005:
        text += f", or {fmt_percent(relative)} more"
    return text + "."


def _order_headline(ordering, by_level, value, name, rank) -> tuple[str, str]:
    """Headline naming only the order the adjusted pairwise tests support, and a note."""
    high, low = by_level[ordering.highest], by_level[ordering.lowest]
    word = "typically highest" if rank else "highest"
    if ordering.flat:
        return (
            f"By {name}: levels differ in spread, not in their {'medians' if rank else 'means'}",
            "",
        )
    if ordering.single_top and ordering.single_bottom and len(by_level) == 2:
        # Of two levels, "highest" and "lowest" overstate: one is simply above the other.
        return (
            f"By {name}: {high.level} above {low.level} ({value(high)} against {value(low)})",
            "",
        )
    if ordering.single_top and ordering.single_bottom:
        return (
            f"By {name}: {high.level} {word} ({value(high)}), {low.level} lowest ({value(low)})",
            "",
        )
    if ordering.single_top:
        note = f" {listed(ordering.bottom)} are not clearly apart from each other at the bottom."
        return f"By {name}: {high.level} {word} ({value(high)})", note
    if ordering.single_bottom:
        note = f" {listed(ordering.top)} are not clearly apart from each other at the top."
        return f"By {name}: {low.level} lowest ({value(low)})", note
    note = (
        f" No single level is clearly apart from its neighbours: {listed(ordering.top)} are not "
        f"told apart at the top, {listed(ordering.bottom)} at the bottom."
    )
    if set(ordering.top) == set(ordering.bottom) == set(ordering.values):
        # Every level in both lists: naming them all twice says nothing the reader can use.
        note = (
            " In the pairwise tests no level is clearly apart from either end, and the two ends "
            "are not clearly apart from each other."
        )
    if ordering.ends_apart:
        return (
            f"By {name}: {high.level} above {low.level} ({value(high)} against {value(low)})",
            note,
        )
    return f"By {name}: levels differ, but no single pair is clearly apart", note


def _headline_levels(ordering: Ordering) -> tuple[str, ...]:
    """The levels ``_order_headline`` names, in its order."""
    if ordering.flat:
        return ()
    if ordering.single_top and ordering.single_bottom:
        return (ordering.highest, ordering.lowest)
    if ordering.single_top:
        return (ordering.highest,)
    if ordering.single_bottom:
        return (ordering.lowest,)
    return (ordering.highest, ordering.lowest) if ordering.ends_apart else ()


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


def untested_finding(
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
    test = test_name(comparison.test)
    p, p_adjusted = comparison.p_value, family.adjusted(group.key)
    clear = family.passes(group.key)
    verdict = f"{test} on shares, {adjusted_phrase(p, p_adjusted, family)}"
    text = (
        f"By {name}, {share_text(high.share)} of rows are 1 for {high.level} ({words.level_name} "
        f"interval {share_text(high.ci_low)} to {share_text(high.ci_high)}) and {share_text(low.share)} for "
        f"{low.level} ({share_text(low.ci_low)} to {share_text(low.ci_high)}): a gap of "
        f"{points_text(gap)} percentage points"
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
            f" ({widened_level(pair_confidence)} interval {points_text(gap_low)} to {points_text(gap_high)} "
            "points, Newcombe's hybrid score method"
            f"{', widened for picking this pair of ' + str(pairs) if pairs > 1 else ''})"
        )
    text += "."
    if not clear:
        headline = f"By {name}: no clear difference"
        certainty = chance_phrase(name, verdict)
    else:
        certainty = (
            f"Differences this large would be unlikely if {name} made no difference ({verdict})."
        )
        if single_top and single_bottom and len(shares) == 2:
            headline = (
                f"By {name}: {high.level} above {low.level} ({share_text(high.share)} against "
                f"{share_text(low.share)}), {points_text(gap)} percentage points"
            )
        elif single_top and single_bottom:
            headline = (
                f"By {name}: {high.level} highest ({share_text(high.share)}), "
                f"{low.level} lowest ({share_text(low.share)}), {points_text(gap)} percentage points"
            )
        elif single_top:
            headline = f"By {name}: {high.level} highest ({share_text(high.share)})"
            text += f" {listed(tuple(bottom))} are not clearly apart from each other at the bottom."
        elif single_bottom:
            headline = f"By {name}: {low.level} lowest ({share_text(low.share)})"
            text += f" {listed(tuple(top))} are not clearly apart from each other at the top."
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


def group_sections(
    stats: BriefStats, spec: BriefSpec, words: Wording, family: Family
) -> tuple[list[Section], list[Table]]:
    """One section per group, and the pairwise tests of each compared group for the appendix."""
    label, decimals, confidence = words.label, words.unit_decimals, stats.confidence
    sections: list[Section] = []
    pairwise: list[Table] = []
    for group in stats.groups:
        name = name_for(spec, group.variable)
        comparison = stats.comparison(group.variable)
        finding = group_finding(
            group,
            comparison,
            words,
            name,
            family,
            _adjusted_for_others(stats, spec, group.variable),
        )
        outers = [name_for(spec, n.outer) for n in stats.nested_in(group.variable)]
        if finding is not None and outers:
            finding = _with_nesting(finding, name, outers)
        draw = partial(_group_chart, group, stats, label, decimals, confidence, name)
        chart = draw(ROW_IN)
        # A claim may lead page 1; a chart too tall for it is drawn again with rows closed up.
        short = None
        if chart is not None and finding is not None and finding.claim in SETTLED[1:]:
            rows = len(group.shares) if group.share_comparison is not None else len(group.boxes)
            row_in = compact_row_in(rows)
            if row_in is not None and row_in < ROW_IN:
                short = draw(row_in)
        sections.append(
            Section(
                f"group-{group.variable}",
                f"{label} by {name}",
                finding,
                chart,
                group_table(group, words, name),
                short_chart=short,
            )
        )
        if comparison is not None:
            pairwise.append(pairwise_table(comparison, words, name))
            pairwise.append(effects_table(comparison, words, name))
        elif group.share_comparison is not None:
            pairwise.append(share_pairs_table(group.share_comparison, words, name))
    return sections, pairwise


def _group_chart(
    group: GroupResult,
    stats: BriefStats,
    label: str,
    decimals: int,
    confidence: float,
    name: str,
    row_in: float,
) -> Chart | None:
    """Shares for a 0/1 target, else boxes beside means; None when no level has a value."""
    if group.share_comparison is not None:
        return share_chart(group, stats.overall_share, label, confidence, name, row_in)
    if group.boxes:
        return distribution_chart(
            group, stats.overall, label, decimals, confidence, name, row_in, interval_floor(stats)
        )
    return None


def _adjusted_for_others(stats: BriefStats, spec: BriefSpec, variable: str) -> list[tuple]:
    """(other column, its name, ``variable`` given it, it given ``variable``) per two-way table."""
    found = []
    for cross in stats.crosses:
        tests = cross.interaction
        if cross.row_variable == variable:
            other, test, back = (
                cross.column_variable,
                tests.row_given_column,
                tests.column_given_row,
            )
        elif cross.column_variable == variable:
            other, test, back = cross.row_variable, tests.column_given_row, tests.row_given_column
        else:
            continue
        found.append((other, name_for(spec, other), test, back))
    return found
