"""Comparisons of the target between the levels of one group variable.

Two levels: Welch's t-test and the Welch interval of the difference of means.
More: Welch's one-way ANOVA (Welch 1951), then every pair by Welch's t with
Holm's (1979) step-down correction. The classical one-way ANOVA comes along for
reference. When the residuals are strongly skewed (|g1| > 1, Bulmer 1979) a
rank-based test runs as well and the brief leans on it.

A level whose values are all the same (sd 0) cannot enter Welch's ANOVA, whose
weights are n/s². With more than two levels such levels are left out of the
overall test, which runs on the rest (Welch's t when two remain); they stay in
the pairwise tests, which need spread in only one of the two levels. When fewer
than two levels with spread remain, the overall test is not run and
``undefined_reason`` says why; the rank test, which handles ties, then runs and
the brief leans on it when it is defined.

Everything here works from the per-level n, mean and sd that
``briefgen.stats.groups.summarise_levels`` computed stably; only the skewness
and the rank test go back to the engine (see ``briefgen.stats.ranks``).

Means are never differenced as rounded float64 values. Near an offset of 1e12
float64 values are 1.2e-4 apart, so two rounded means 0.1 apart keep only 3
digits of their difference. Each mean is held instead as its level's median (a
data value) plus ``mean_shift`` (mean − median at full precision): medians close
together difference exactly (Sterbenz 1974), the shifts are small, so
(median_a − median_b) + (shift_a − shift_b) keeps nearly every digit. Sums over
levels use deviations from one common reference, the first level's median.
"""

from __future__ import annotations

import logging
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction

import ibis.expr.types as ir

from briefgen.stats.core.shifted import deviations, pooled_mean
from briefgen.stats.core.summary import Summary
from briefgen.stats.ranks import (
    STRONG_SKEW,
    RankTest,
    lean_on,
    pooled_skewness,
    rank_test,
)
from briefgen.stats.welch import (
    ClassicalAnova,
    PairwiseComparison,
    classical_anova,
    pairwise_welch,
    welch_anova,
    welch_pair,
)

logger = logging.getLogger(__name__)

# The overall test: (test name, statistic, df1, df2, p-value).
MainTest = tuple[str, float | None, float | None, float | None, float | None]


@dataclass(frozen=True, slots=True)
class LevelEffect:
    """How far one level's mean lies from the reference level and from the overall mean.

    ``difference`` = mean − reference mean with a Welch interval; the percentages
    divide by the absolute value of the reference (or overall) mean, so their sign
    says above or below; None when that mean is 0.
    """

    level: str
    n: int
    mean: float
    difference: float
    ci_low: float | None
    ci_high: float | None
    percent_of_reference: float | None
    percent_vs_overall: float | None


@dataclass(frozen=True, slots=True)
class GroupComparison:
    """Every comparison the brief reports for one group variable.

    ``levels`` are the levels compared (n ≥ 2): pairwise, effects, classical ANOVA
    and rank test cover them; ``excluded_levels`` had fewer than two values.
    ``welch_levels`` are those the overall Welch test ran on: ``levels`` less, when
    there are more than two, the levels without spread (sd 0), whose Welch weight
    n/s² would be infinite. ``test`` is "welch_t" when ``welch_levels`` has two
    (statistic t of first − second, df1 its Welch df, df2 None) and "welch_anova"
    when more (statistic F, df1 = k − 1, df2 Welch's denominator df).

    ``undefined_reason`` is None when the overall test ran, else a phrase saying why
    it could not (fewer than two levels with spread); ``welch_levels`` is then
    empty, statistic, df1, df2 and p_value are None, and ``test`` names the test
    that would have run. Use it to tell "test not run" from "test ran, p large".

    ``skewness`` is g1 of the residuals from the level means. ``rank_test`` runs when
    that is strongly skewed or when the Welch test could not run. ``leans_on``
    ("welch" or "rank") names the test the brief's sentence rests on: "rank" when
    strongly skewed or when only the rank test is defined; ``leans_on_reason`` says
    why in a phrase. ``notes`` explain, in sentences, anything left out or undefined.
    """

    variable: str | None
    levels: tuple[str, ...]
    excluded_levels: tuple[str, ...]
    welch_levels: tuple[str, ...]
    undefined_reason: str | None
    test: str
    statistic: float | None
    df1: float | None
    df2: float | None
    p_value: float | None
    confidence: float
    pairwise: tuple[PairwiseComparison, ...]
    classical: ClassicalAnova
    reference_level: str
    overall_mean: float
    effects: tuple[LevelEffect, ...]
    skewness: float | None
    strongly_skewed: bool
    rank_test: RankTest | None
    leans_on: str
    leans_on_reason: str
    notes: tuple[str, ...]


def reference_level(summaries: Sequence[Summary], fold: str | None = None) -> Summary:
    """The level effects are measured from: the one with most values, ties by name.

    The largest level has the most precise mean, so differences from it have the
    narrowest intervals, and it is usually the case a reader thinks of as typical.
    The name breaks ties so the choice never depends on row order. ``fold`` (the
    "Other (k levels)" label) is never the reference: it is a mixture of levels,
    not a case anyone can act on; only when no other level is left does it serve.
    """
    named = [s for s in summaries if fold is None or s.level != fold] or list(summaries)
    return min(named, key=lambda s: (-s.n, str(s.level)))


def _percent(difference: float, base: float) -> float | None:
    return None if base == 0 else 100 * difference / abs(base)


def level_effects(
    tested: Sequence[Summary], reference: Summary, overall_mean: float, confidence: float
) -> tuple[LevelEffect, ...]:
    """Each tested level against the reference level and against the overall mean."""
    # Against the overall mean only the overall mean's own rounding remains: the
    # anchor (a data value) minus it is exact when they are close (Sterbenz 1974).
    versus_overall = deviations(tested, overall_mean)
    effects = []
    for s, above_overall in zip(tested, versus_overall, strict=True):
        if s is reference:
            low = high = None
            difference = 0.0
        else:
            pair = welch_pair(s, reference, confidence)
            difference, low, high = pair.difference, pair.ci_low, pair.ci_high
        effects.append(
            LevelEffect(
                level=s.level,
                n=s.n,
                mean=s.mean,
                difference=difference,
                ci_low=low,
                ci_high=high,
                percent_of_reference=_percent(difference, reference.mean),
                percent_vs_overall=_percent(above_overall, overall_mean),
            )
        )
    return tuple(effects)


def _constant_value(summary: Summary) -> str:
    """The one value of a level without spread, as a note prints it."""
    # The median is one of the level's values, so it prints exactly.
    value = summary.median if summary.median is not None else summary.mean
    return str(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value)


def _welch_levels(compared: Sequence[Summary]) -> list[Summary]:
    """Levels the overall Welch test can use.

    Welch's t for two levels needs spread in only one of them, so both stay; Welch's
    ANOVA weights each level by n/s², so with more levels those with sd 0 leave.
    """
    return list(compared) if len(compared) == 2 else [s for s in compared if s.sd > 0]


def _undefined_reason(compared: Sequence[Summary], welch: Sequence[Summary]) -> str | None:
    """Why the overall Welch test cannot run, in a phrase; None when it can."""
    varying = [s for s in welch if s.sd > 0]
    if len(welch) >= 2 and varying:
        return None
    constants = [s for s in compared if s.sd <= 0]
    if len(constants) == len(compared) and len({_constant_value(s) for s in constants}) == 1:
        return f"every value is {_constant_value(constants[0])}, so there is nothing to compare"
    values = ", ".join(f"'{s.level}' always {_constant_value(s)}" for s in constants)
    if not varying:
        return f"no level's values vary ({values}), so there is no spread to judge the gaps by"
    return (
        f"only '{varying[0].level}' has values that vary ({values}); Welch's test needs at "
        "least two levels with spread"
    )


def _main_test(welch: Sequence[Summary], pairwise: Sequence[PairwiseComparison]) -> MainTest:
    """Welch's t for two levels, Welch's ANOVA for more: (test, statistic, df1, df2, p)."""
    if len(welch) == 2:
        names = (welch[0].level, welch[1].level)
        pair = next(p for p in pairwise if (p.level_a, p.level_b) == names)
        return "welch_t", pair.t, pair.df, None, pair.p_value
    anova = welch_anova(welch)
    return ("welch_anova", *anova) if anova else ("welch_anova", None, None, None, None)


def _overall_welch(
    compared: Sequence[Summary], pairwise: Sequence[PairwiseComparison], notes: list[str]
) -> tuple[list[Summary], str | None, MainTest]:
    """The overall Welch test: (levels it ran on, why it could not run, _main_test's result)."""
    welch = _welch_levels(compared)
    reason = _undefined_reason(compared, welch)
    if reason is not None:
        notes.append(f"The overall Welch test is not run: {reason}")
        name = "welch_t" if len(compared) == 2 else "welch_anova"
        return [], reason, (name, None, None, None, None)
    notes += [
        f"'{s.level}' has no spread (every value is {_constant_value(s)}), so it is left out of "
        "Welch's test across levels; its pairwise comparisons still stand"
        for s in compared
        if s not in welch
    ]
    return welch, None, _main_test(welch, pairwise)


def compare_groups(
    levels_table: ir.Table,
    summaries: Sequence[Summary],
    confidence: float = 0.95,
    *,
    variable: str | None = None,
    fold: str | None = None,
    centred: Mapping[object, tuple[int, Fraction, Fraction]],
) -> GroupComparison | None:
    """Compare the target across levels; None when fewer than two levels have n ≥ 2.

    ``levels_table`` has columns ``level`` and ``y``; ``summaries`` come from
    ``summarise_levels`` on the same table. ``fold`` is the label of the folded
    levels, if any, which is tested like a level but never made the reference.
    ``centred``: each level's (n, centred sums of squares and cubes), from the summaries'
    pass (``summarise(..., third_moments=True)``), for the skewness of residuals.
    """
    tested = [s for s in summaries if s.n >= 2 and s.mean is not None and s.sd is not None]
    tested_names = {s.level for s in tested}
    excluded = tuple(s.level for s in summaries if s.level not in tested_names)
    notes = [
        f"'{level}' has fewer than 2 values and is left out of the tests" for level in excluded
    ]
    if len(tested) < 2:
        logger.info("comparison of %s skipped: %d usable level(s)", variable, len(tested))
        return None
    pairwise = pairwise_welch(tested, confidence)
    welch, undefined_reason, (test, statistic, df1, df2, p_value) = _overall_welch(
        tested, pairwise, notes
    )
    skewness = pooled_skewness(centred[s.level] for s in tested)
    strongly_skewed = skewness is not None and abs(skewness) > STRONG_SKEW
    # Ranks are defined with ties, so the rank test stands in when Welch's cannot run.
    needs_ranks = strongly_skewed or undefined_reason is not None
    ranks = (
        rank_test(levels_table, [s.level for s in tested], sum(s.n for s in tested))
        if needs_ranks
        else None
    )
    leans_on, reason = lean_on(skewness, ranks, welch_runs=undefined_reason is None)
    reference = reference_level(tested, fold)
    overall = pooled_mean(summaries)
    return GroupComparison(
        variable=variable,
        levels=tuple(s.level for s in tested),
        excluded_levels=excluded,
        welch_levels=tuple(s.level for s in welch),
        undefined_reason=undefined_reason,
        test=test,
        statistic=statistic,
        df1=df1,
        df2=df2,
        p_value=p_value,
        confidence=confidence,
        pairwise=pairwise,
        classical=classical_anova(tested),
        reference_level=reference.level,
        overall_mean=overall,
        effects=level_effects(tested, reference, overall, confidence),
        skewness=skewness,
        strongly_skewed=strongly_skewed,
        rank_test=ranks,
        leans_on=leans_on,
        leans_on_reason=reason,
        notes=tuple(notes),
    )
