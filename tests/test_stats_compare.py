"""Group comparisons against scipy and statsmodels on small reference data."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from scipy import stats as scipy_stats
from statsmodels.stats.multitest import multipletests
from statsmodels.stats.oneway import anova_oneway
from statsmodels.stats.weightstats import CompareMeans

from briefgen.stats import ranks
from briefgen.stats.compare import compare_groups
from briefgen.stats.core.summary import summarise, summarise_levels
from briefgen.stats.ranks import kruskal_wallis, pooled_skewness, rank_sums, rank_test
from briefgen.stats.welch import classical_anova, holm, welch_anova, welch_pair

RELATIVE = 1e-10  # both sides compute in float64 from the same few dozen values


def _frame(groups: dict[str, list[float]]) -> pd.DataFrame:
    rows = [(level, value) for level, values in groups.items() for value in values]
    return pd.DataFrame({"level": [r[0] for r in rows], "y": [float(r[1]) for r in rows]})


def _prepared(engine_table, groups: dict[str, list[float]]):
    table = engine_table(_frame(groups))
    summaries, _ = summarise_levels(table, 0.95)
    return table, summaries


def _compare(table, summaries, *args, **kwargs):
    """``compare_groups`` as a brief calls it: the centred sums from the summaries' pass."""
    keyed = summarise(table, ["level"], 0.95, third_moments=True)
    centred = {key[0]: sums for key, sums in keyed.centred.items()}
    return compare_groups(table, summaries, *args, centred=centred, **kwargs)


def _clean(values: list[float]) -> np.ndarray:
    array = np.asarray(values, dtype=float)
    return array[~np.isnan(array)]


RNG = np.random.default_rng(20240601)
TWO = {
    "north": list(RNG.normal(10.0, 1.0, 23)),
    "south": list(RNG.normal(11.0, 3.0, 11)) + [math.nan, math.nan],
}
FOUR = {
    "a": list(RNG.normal(5.0, 1.0, 12)),
    "b": list(RNG.normal(5.5, 2.0, 20)),
    "c": list(RNG.normal(4.0, 0.5, 8)),
    "d": list(RNG.normal(6.0, 3.0, 15)),
}


def test_welch_t_matches_scipy(engine_table):
    table, summaries = _prepared(engine_table, TWO)
    result = _compare(table, summaries, variable="region")
    reference = scipy_stats.ttest_ind(
        _clean(TWO["north"]), _clean(TWO["south"]), equal_var=False
    )  # reference: scipy.stats.ttest_ind(equal_var=False)
    assert result.test == "welch_t"
    assert result.variable == "region"
    assert result.statistic == pytest.approx(reference.statistic, rel=RELATIVE)
    assert result.df1 == pytest.approx(reference.df, rel=RELATIVE)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-8)
    assert result.pairwise[0].p_holm == pytest.approx(reference.pvalue, rel=1e-8)


@pytest.mark.parametrize("confidence", [0.95, 0.90])
def test_welch_interval_matches_statsmodels(engine_table, confidence):
    table, summaries = _prepared(engine_table, TWO)
    pair = _compare(table, summaries, confidence).pairwise[0]
    low, high = CompareMeans.from_data(_clean(TWO["north"]), _clean(TWO["south"])).tconfint_diff(
        alpha=1 - confidence, usevar="unequal"
    )  # reference: statsmodels CompareMeans.tconfint_diff(usevar="unequal")
    assert pair.ci_low == pytest.approx(low, rel=1e-9)
    assert pair.ci_high == pytest.approx(high, rel=1e-9)


def test_welch_anova_matches_statsmodels(engine_table):
    table, summaries = _prepared(engine_table, FOUR)
    result = _compare(table, summaries)
    frame = _frame(FOUR)
    reference = anova_oneway(
        frame["y"].to_numpy(), frame["level"].to_numpy(), use_var="unequal"
    )  # reference: statsmodels.stats.oneway.anova_oneway(use_var="unequal")
    assert result.test == "welch_anova"
    assert result.statistic == pytest.approx(reference.statistic, rel=RELATIVE)
    assert result.df1 == pytest.approx(reference.df[0], rel=RELATIVE)
    assert result.df2 == pytest.approx(reference.df[1], rel=RELATIVE)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-8)


def test_pairwise_welch_and_holm_match_scipy_and_statsmodels(engine_table):
    table, summaries = _prepared(engine_table, FOUR)
    pairs = _compare(table, summaries).pairwise
    assert [(p.level_a, p.level_b) for p in pairs] == [
        ("a", "b"),
        ("a", "c"),
        ("a", "d"),
        ("b", "c"),
        ("b", "d"),
        ("c", "d"),
    ]
    for pair in pairs:
        reference = scipy_stats.ttest_ind(
            FOUR[pair.level_a], FOUR[pair.level_b], equal_var=False
        )  # reference: scipy.stats.ttest_ind(equal_var=False)
        assert pair.t == pytest.approx(reference.statistic, rel=RELATIVE)
        assert pair.p_value == pytest.approx(reference.pvalue, rel=1e-8)
    expected = multipletests([p.p_value for p in pairs], method="holm")[1]  # reference: statsmodels
    assert [p.p_holm for p in pairs] == pytest.approx(list(expected), rel=1e-12)


@pytest.mark.parametrize(
    "p_values",
    [
        [0.01, 0.04, 0.03, 0.005],
        [0.2, 0.2, 0.01, 0.9, 0.6],  # ties and values that reach the cap at 1
        [0.5],
        list(np.random.default_rng(3).uniform(0, 0.2, 30)),
    ],
)
def test_holm_matches_statsmodels(p_values):
    expected = multipletests(p_values, method="holm")[1]  # reference: statsmodels multipletests
    assert list(holm(p_values)) == pytest.approx(list(expected), rel=1e-12)


def test_classical_anova_matches_scipy_and_statsmodels(engine_table):
    import statsmodels.api as sm

    _, summaries = _prepared(engine_table, FOUR)
    result = classical_anova(summaries)
    reference = scipy_stats.f_oneway(*FOUR.values())  # reference: scipy.stats.f_oneway
    assert result.f == pytest.approx(reference.statistic, rel=RELATIVE)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-8)
    frame = _frame(FOUR)
    design = sm.add_constant(pd.get_dummies(frame["level"], drop_first=True).astype(float))
    fit = sm.OLS(frame["y"], design).fit()  # reference: statsmodels OLS on level dummies
    assert result.residual_sd == pytest.approx(math.sqrt(fit.mse_resid), rel=RELATIVE)
    assert result.r_squared == pytest.approx(fit.rsquared, rel=RELATIVE)
    assert (result.df_between, result.df_within) == (3, len(frame) - 4)


def test_welch_anova_of_two_levels_is_welch_t_squared(engine_table):
    _, summaries = _prepared(engine_table, TWO)
    f, df1, df2, p = welch_anova(summaries)
    reference = scipy_stats.ttest_ind(
        _clean(TWO["north"]), _clean(TWO["south"]), equal_var=False
    )  # reference: scipy.stats.ttest_ind; Welch (1951): F = t², df2 = Welch df for k = 2
    assert f == pytest.approx(reference.statistic**2, rel=RELATIVE)
    assert df2 == pytest.approx(reference.df, rel=RELATIVE)
    assert p == pytest.approx(reference.pvalue, rel=1e-8)


TIED_TWO = {"x": [1, 2, 2, 3, 3, 3, 7, 9, 2, 40], "y": [2, 3, 3, 5, 8, 8, 8, 11, 60, 3, 3, 1]}
TIED_THREE = {
    "p": [1, 1, 2, 3, 5, 8, 13, 1, 2],
    "q": [2, 2, 2, 4, 4, 9, 30, 100],
    "r": [1, 3, 3, 3, 6, 6, 7, 20, 20, 21, 50],
}


def test_mann_whitney_with_ties_matches_scipy(engine_table):
    table = engine_table(_frame(TIED_TWO))
    result = rank_test(table, ["x", "y"])
    reference = scipy_stats.mannwhitneyu(
        TIED_TWO["x"], TIED_TWO["y"], alternative="two-sided", method="asymptotic"
    )  # reference: scipy.stats.mannwhitneyu (use_continuity=True by default)
    assert result.test == "mann_whitney"
    assert result.statistic == pytest.approx(reference.statistic, rel=1e-12)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-9)


def test_mann_whitney_statistic_is_for_the_first_level(engine_table):
    table = engine_table(_frame(TIED_TWO))
    result = rank_test(table, ["y", "x"])
    reference = scipy_stats.mannwhitneyu(
        TIED_TWO["y"], TIED_TWO["x"], alternative="two-sided", method="asymptotic"
    )  # reference: scipy.stats.mannwhitneyu
    assert result.statistic == pytest.approx(reference.statistic, rel=1e-12)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-9)


def test_kruskal_wallis_with_ties_matches_scipy(engine_table):
    table = engine_table(_frame(TIED_THREE))
    result = rank_test(table, ["p", "q", "r"])
    reference = scipy_stats.kruskal(*TIED_THREE.values())  # reference: scipy.stats.kruskal
    assert result.test == "kruskal_wallis"
    assert result.df == 2
    assert result.statistic == pytest.approx(reference.statistic, rel=1e-12)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-9)


def _skewness(engine_table, groups: dict[str, list[float]]) -> float | None:
    """The within-level skewness from the summaries' pass, as a brief computes it."""
    table, summaries = _prepared(engine_table, groups)
    keyed = summarise(table, ["level"], 0.95, third_moments=True)
    return pooled_skewness(keyed.centred[(s.level,)] for s in summaries)


def test_skewness_of_residuals_matches_scipy(engine_table):
    result = _skewness(engine_table, TIED_THREE)
    residuals = np.concatenate([np.subtract(v, np.mean(v)) for v in TIED_THREE.values()])
    # reference: scipy.stats.skew(bias=True), the sample skewness g1
    assert result == pytest.approx(scipy_stats.skew(residuals, bias=True), rel=1e-12)


def test_skewness_survives_a_large_offset(engine_table):
    shifted = {level: [1e12 + v for v in values] for level, values in TIED_THREE.items()}
    result = _skewness(engine_table, shifted)
    residuals = np.concatenate([np.subtract(v, np.mean(v)) for v in TIED_THREE.values()])
    # reference: scipy.stats.skew(bias=True) on the unshifted data (skewness ignores offsets);
    # the data are integers, exactly representable at 1e12, and each level is centred
    # exactly (a query joining rounded level means back was 2.3e-7 off here).
    assert result == pytest.approx(scipy_stats.skew(residuals, bias=True), rel=1e-12)


def test_skewed_lognormal_levels_match_scipy(engine_table):
    """Constructed: strongly skewed levels of unequal size, where the choice of test turns."""
    rng = np.random.default_rng(11)
    groups = {name: list(rng.lognormal(0, 1.5, size)) for name, size in (("a", 300), ("b", 45))}
    residuals = np.concatenate([np.subtract(v, np.mean(v)) for v in groups.values()])
    # reference: scipy.stats.skew(bias=True)
    assert _skewness(engine_table, groups) == pytest.approx(
        scipy_stats.skew(residuals, bias=True), rel=1e-12
    )


def test_strong_skew_leans_on_the_rank_test(engine_table):
    rng = np.random.default_rng(7)
    groups = {"low": list(rng.lognormal(0, 1.2, 40)), "high": list(rng.lognormal(0.4, 1.2, 30))}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    residuals = np.concatenate([np.subtract(v, np.mean(v)) for v in groups.values()])
    assert abs(scipy_stats.skew(residuals)) > 1  # reference: scipy.stats.skew; Bulmer (1979) > 1
    assert result.strongly_skewed and result.leans_on == "rank"
    reference = scipy_stats.mannwhitneyu(
        groups["high"], groups["low"], alternative="two-sided", method="asymptotic"
    )  # reference: scipy.stats.mannwhitneyu; levels are sorted, so "high" comes first
    assert result.rank_test.p_value == pytest.approx(reference.pvalue, rel=1e-9)


def test_symmetric_data_leans_on_welch(engine_table):
    table, summaries = _prepared(engine_table, FOUR)
    result = _compare(table, summaries)
    assert result.leans_on == "welch" and result.rank_test is None


def test_effects_against_the_largest_level(engine_table):
    table, summaries = _prepared(engine_table, FOUR)
    result = _compare(table, summaries)
    assert result.reference_level == "b"  # 20 values, the most
    overall = np.mean(np.concatenate(list(FOUR.values())))  # reference: numpy mean
    assert result.overall_mean == pytest.approx(overall, rel=1e-12)
    reference_mean = np.mean(FOUR["b"])
    for effect in result.effects:
        level_mean = np.mean(FOUR[effect.level])  # reference: numpy mean
        assert effect.difference == pytest.approx(level_mean - reference_mean, abs=1e-12)
        assert effect.percent_of_reference == pytest.approx(
            100 * (level_mean - reference_mean) / abs(reference_mean), abs=1e-10
        )
        assert effect.percent_vs_overall == pytest.approx(
            100 * (level_mean - overall) / abs(overall), abs=1e-10
        )
        if effect.level == "b":
            assert effect.ci_low is None
            continue
        low, high = CompareMeans.from_data(FOUR[effect.level], FOUR["b"]).tconfint_diff(
            usevar="unequal"
        )  # reference: statsmodels CompareMeans.tconfint_diff(usevar="unequal")
        assert (effect.ci_low, effect.ci_high) == pytest.approx((low, high), rel=1e-9)


def test_reference_ties_are_broken_by_name(engine_table):
    table, summaries = _prepared(
        engine_table, {"zeta": [1, 2, 3], "alpha": [4, 5, 7], "mu": [1, 2]}
    )
    assert _compare(table, summaries).reference_level == "alpha"


def test_small_levels_are_excluded_and_said_so(engine_table):
    groups = {"a": [1.0, 2.0, 4.0], "b": [3.0, 5.0, 6.0, 9.0], "lonely": [100.0]}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    assert result.excluded_levels == ("lonely",)
    assert result.levels == ("a", "b") and result.test == "welch_t"
    reference = scipy_stats.ttest_ind(groups["a"], groups["b"], equal_var=False)  # reference: scipy
    assert result.statistic == pytest.approx(reference.statistic, rel=RELATIVE)
    assert any("lonely" in note for note in result.notes)


def test_one_usable_level_gives_no_comparison(engine_table):
    table, summaries = _prepared(engine_table, {"a": [1.0, 2.0, 4.0], "b": [3.0]})
    assert _compare(table, summaries) is None


# scipy warns about its own cancellation on constant samples; the results are exact.
@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_levels_without_spread_do_not_crash(engine_table):
    groups = {"a": [2.0, 2.0, 2.0], "b": [5.0, 5.0]}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    pair = result.pairwise[0]
    assert pair.difference == -3.0 and pair.t is None and pair.p_holm is None
    assert result.statistic is None and result.p_value is None and result.notes
    assert result.undefined_reason is not None and result.welch_levels == ()
    # scipy agrees the test is undefined: zero standard error gives t = -inf or nan, not a number
    reference = scipy_stats.ttest_ind(groups["a"], groups["b"], equal_var=False)
    assert not np.isfinite(reference.statistic)  # reference: scipy.stats.ttest_ind


# scipy warns about its own cancellation on constant samples; the results are exact.
@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_one_level_without_spread_keeps_welch_t(engine_table):
    groups = {"a": [2.0, 2.0, 2.0], "b": [5.0, 6.0, 8.0, 4.0]}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    pair = result.pairwise[0]
    reference = scipy_stats.ttest_ind(groups["a"], groups["b"], equal_var=False)  # reference: scipy
    assert pair.t == pytest.approx(reference.statistic, rel=RELATIVE)
    assert pair.df == pytest.approx(reference.df, rel=RELATIVE)
    # Two levels: Welch's t needs spread in only one, so the constant level stays in.
    assert result.welch_levels == ("a", "b") and result.undefined_reason is None
    assert result.statistic == pytest.approx(reference.statistic, rel=RELATIVE)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-8)


def _by_name(result, level_a: str, level_b: str):
    return next(p for p in result.pairwise if {p.level_a, p.level_b} == {level_a, level_b})


# scipy warns about its own cancellation on constant samples; the results are exact.
@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_a_constant_level_leaves_the_overall_test_to_the_others(engine_table):
    # The review's repro: a constant level used to make the whole test undefined, so an
    # obvious difference between a and b was reported as "no clear difference".
    rng = np.random.default_rng(20240602)
    groups = {"a": list(rng.normal(10, 1, 50)), "b": list(rng.normal(20, 1, 50)), "c": [15, 15]}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    assert result.levels == ("a", "b", "c") and result.excluded_levels == ()
    assert result.welch_levels == ("a", "b") and result.undefined_reason is None
    assert any("'c'" in note and "15" in note for note in result.notes)
    reference = scipy_stats.ttest_ind(
        groups["a"], groups["b"], equal_var=False
    )  # reference: scipy.stats.ttest_ind(equal_var=False) on a and b alone
    assert result.test == "welch_t"
    assert result.statistic == pytest.approx(reference.statistic, rel=RELATIVE)
    assert result.df1 == pytest.approx(reference.df, rel=RELATIVE)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-8)
    # c stays in the pairwise tests, defined because the other level has spread.
    for other in ("a", "b"):
        pair = _by_name(result, other, "c")
        reference = scipy_stats.ttest_ind(
            groups[pair.level_a], groups[pair.level_b], equal_var=False
        )  # reference: scipy.stats.ttest_ind(equal_var=False)
        assert pair.t == pytest.approx(reference.statistic, rel=RELATIVE)
        assert pair.p_value == pytest.approx(reference.pvalue, rel=1e-8)
    assert [e.level for e in result.effects] == ["a", "b", "c"]


def test_welch_anova_runs_on_the_levels_with_spread(engine_table):
    groups = {key: values for key, values in FOUR.items()} | {"flat": [4.5] * 6}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    assert result.welch_levels == ("a", "b", "c", "d") and "flat" in result.levels
    varying = _frame(FOUR)
    reference = anova_oneway(
        varying["y"].to_numpy(), varying["level"].to_numpy(), use_var="unequal"
    )  # reference: statsmodels anova_oneway(use_var="unequal") on the four levels with spread
    assert result.test == "welch_anova"
    assert result.statistic == pytest.approx(reference.statistic, rel=RELATIVE)
    assert result.df2 == pytest.approx(reference.df[1], rel=RELATIVE)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-8)
    # The classical ANOVA keeps the constant level: it pools the spread, so sd 0 is fine.
    assert result.classical.f == pytest.approx(
        scipy_stats.f_oneway(*groups.values()).statistic, rel=RELATIVE
    )  # reference: scipy.stats.f_oneway
    assert len(result.pairwise) == 10 and all(p.p_holm is not None for p in result.pairwise)


def test_constant_levels_that_differ_say_why_and_lean_on_ranks(engine_table):
    groups = {"five": [5.0] * 6, "seven": [7.0] * 4}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    assert result.statistic is None and result.p_value is None and result.welch_levels == ()
    assert "5" in result.undefined_reason and "7" in result.undefined_reason
    assert any(result.undefined_reason in note for note in result.notes)
    assert result.leans_on == "rank" and "tie" in result.leans_on_reason
    # reference: scipy.stats.mannwhitneyu(method="asymptotic"); tie and continuity corrections
    reference = scipy_stats.mannwhitneyu(
        groups["five"], groups["seven"], alternative="two-sided", method="asymptotic"
    )
    assert result.rank_test.test == "mann_whitney"
    assert result.rank_test.statistic == pytest.approx(reference.statistic, rel=1e-12)
    assert result.rank_test.p_value == pytest.approx(reference.pvalue, rel=1e-9)


def test_one_varying_level_among_constants_gives_kruskal_wallis(engine_table):
    groups = {"low": [1.0] * 5, "high": [9.0] * 3, "spread": [2.0, 4.0, 6.0, 8.0]}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    assert result.test == "welch_anova" and result.statistic is None
    assert "'spread'" in result.undefined_reason
    reference = scipy_stats.kruskal(*groups.values())  # reference: scipy.stats.kruskal
    assert result.leans_on == "rank" and result.rank_test.test == "kruskal_wallis"
    assert result.rank_test.statistic == pytest.approx(reference.statistic, rel=1e-12)
    assert result.rank_test.p_value == pytest.approx(reference.pvalue, rel=1e-9)


# scipy warns about its own cancellation on constant samples; the results are exact.
@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_every_value_the_same_runs_no_test(engine_table):
    groups = {"a": [3.0, 3.0], "b": [3.0, 3.0, 3.0]}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    assert result.undefined_reason is not None and result.p_value is None
    # reference: scipy.stats.kruskal gives nan when every value ties (the tie correction is 0);
    # scipy.stats.mannwhitneyu returns p = 1 by convention, we report "undefined" instead.
    assert math.isnan(scipy_stats.kruskal(groups["a"], groups["b"]).pvalue)
    assert result.rank_test.p_value is None and result.leans_on == "welch"


# scipy warns about its own cancellation on constant samples; the results are exact.
@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_all_values_tied_gives_undefined_rank_test(engine_table):
    table = engine_table(_frame({"a": [3.0, 3.0], "b": [3.0, 3.0, 3.0]}))
    result = rank_test(table, ["a", "b"])
    # reference: scipy.stats.kruskal gives nan here (tie correction 0); scipy 1.17's
    # mannwhitneyu returns p = 1 by convention, where we report the test as undefined.
    assert result.p_value is None
    assert math.isnan(scipy_stats.kruskal([3.0, 3.0], [3.0, 3.0, 3.0]).pvalue)


def test_welch_pair_on_summaries_matches_statsmodels(engine_table):
    _, summaries = _prepared(engine_table, FOUR)
    by_level = {s.level: s for s in summaries}
    pair = welch_pair(by_level["c"], by_level["d"], confidence=0.99)
    low, high = CompareMeans.from_data(FOUR["c"], FOUR["d"]).tconfint_diff(
        alpha=0.01, usevar="unequal"
    )  # reference: statsmodels CompareMeans.tconfint_diff(usevar="unequal")
    assert (pair.ci_low, pair.ci_high) == pytest.approx((low, high), rel=1e-9)


@pytest.mark.parametrize("offset", [0.0, 1e6, 1e12])
def test_mean_shift_is_the_mean_less_the_median_at_full_precision(engine_table, offset):
    rng = np.random.default_rng(11)
    groups = {level: list(offset + rng.normal(0, 0.1, 17)) for level in ("a", "b", "c")}
    _, summaries = _prepared(engine_table, groups)
    for summary in summaries:
        values = np.asarray(groups[summary.level])
        median = np.median(values)  # reference: numpy median (type 7, like the engine's)
        assert summary.median == median
        # reference: numpy mean of the deviations from the median; each subtraction is
        # exact (Sterbenz 1974), so this is the full-precision mean − median at any offset
        expected = np.mean(values - median)
        assert summary.mean_shift == pytest.approx(expected, rel=1e-12, abs=1e-15)
    # Differences of means keep their digits at 1e12 (rounded means near 1e12 are
    # 1.2e-4 apart, which would leave about 3 digits of a 0.1 difference).
    a, b = (np.asarray(groups[level]) for level in ("a", "b"))
    shifted_a, shifted_b = a - a[0], b - a[0]  # exact, same data without the offset
    pair = welch_pair(summaries[0], summaries[1])
    reference = scipy_stats.ttest_ind(
        shifted_a, shifted_b, equal_var=False
    )  # reference: scipy.stats.ttest_ind(equal_var=False) on the exactly shifted values
    assert pair.difference == pytest.approx(shifted_a.mean() - shifted_b.mean(), rel=1e-11)
    assert pair.t == pytest.approx(reference.statistic, rel=1e-11)


EPSILON = np.finfo(float).eps


# scipy warns about its own cancellation with large offsets; the tolerances account for it.
@pytest.mark.filterwarnings("ignore::RuntimeWarning")
@settings(
    max_examples=30,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture],
)
@given(
    offset=st.floats(-1e9, 1e9),
    scale=st.sampled_from([0.01, 0.5, 3.0, 250.0]),
    steps=st.lists(st.lists(st.integers(-40, 40), min_size=2, max_size=25), min_size=2, max_size=4),
)
def test_welch_t_and_kruskal_match_scipy_with_large_offsets(engine_table, offset, scale, steps):
    groups = {f"g{i}": [offset + scale * step for step in values] for i, values in enumerate(steps)}
    values = np.concatenate(list(groups.values()))
    assume(np.ptp(values) > 0)
    table, summaries = _prepared(engine_table, groups)

    first, second = summaries[0], summaries[1]
    a, b = np.asarray(groups["g0"]), np.asarray(groups["g1"])
    if np.ptp(a) > 0 or np.ptp(b) > 0:
        ours = welch_pair(first, second)
        reference = scipy_stats.ttest_ind(a, b, equal_var=False)  # reference: scipy.stats.ttest_ind
        standard_error = math.sqrt(np.var(a, ddof=1) / a.size + np.var(b, ddof=1) / b.size)
        # Each mean, ours or scipy's, is a float64 near the offset and carries an
        # absolute error of a few ulps of max|y| (up to ~1e9·2.2e-16 ≈ 2e-7); that
        # error divided by the standard error bounds the disagreement in t.
        tolerance = 32 * EPSILON * np.max(np.abs(values)) / standard_error
        assert ours.t == pytest.approx(reference.statistic, rel=1e-9, abs=tolerance)

    # Kruskal–Wallis also for two levels here (the brief would use Mann–Whitney).
    ours_h = kruskal_wallis(rank_sums(table, [s.level for s in summaries]))
    reference_h = scipy_stats.kruskal(*groups.values())  # reference: scipy.stats.kruskal
    # Ranks depend only on the order of identical float64 values, so both rank the
    # same way. scipy forms H as 12/(N(N+1))·ΣR²/n − 3(N+1), a difference of terms
    # of size 3(N+1); its rounding error is a few eps times that. Ours is exact up
    # to the last division.
    total = values.size
    assert ours_h.statistic == pytest.approx(
        reference_h.statistic, rel=1e-12, abs=64 * EPSILON * 3 * (total + 1)
    )


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
@settings(
    max_examples=15,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture],
)
@given(
    levels=st.lists(
        st.one_of(
            st.lists(st.integers(-20, 20), min_size=2, max_size=12),  # usually varies
            st.tuples(st.integers(-20, 20), st.integers(2, 6)).map(lambda v: [v[0]] * v[1]),
        ),
        min_size=3,
        max_size=5,
    )
)
def test_overall_welch_uses_exactly_the_levels_with_spread(engine_table, levels):
    groups = {f"g{i}": [float(v) for v in values] for i, values in enumerate(levels)}
    table, summaries = _prepared(engine_table, groups)
    result = _compare(table, summaries)
    varying = [level for level, values in groups.items() if np.ptp(values) > 0]
    if len(varying) < 2:
        assert result.undefined_reason and result.p_value is None and result.welch_levels == ()
        return
    assert result.undefined_reason is None and set(result.welch_levels) == set(varying)
    if len(varying) == 2:
        a, b = result.welch_levels
        reference = scipy_stats.ttest_ind(
            groups[a], groups[b], equal_var=False
        )  # reference: scipy.stats.ttest_ind(equal_var=False) on the two levels with spread
        assert result.statistic == pytest.approx(reference.statistic, rel=1e-9)
    else:
        frame = _frame({level: groups[level] for level in varying})
        reference = anova_oneway(
            frame["y"].to_numpy(), frame["level"].to_numpy(), use_var="unequal"
        )  # reference: statsmodels anova_oneway(use_var="unequal") on the levels with spread
        assert result.statistic == pytest.approx(reference.statistic, rel=1e-9)
        assert result.df2 == pytest.approx(reference.df[1], rel=1e-9)


def test_rank_sums_by_counting_equal_the_sorted_ranks_and_scipy(engine_table, monkeypatch):
    # Constructed: 120,000 whole-number scores (21 distinct values) in three levels, so
    # the rank sums come from counts of each value rather than a sort of every row.
    rng = np.random.default_rng(7)
    levels = {
        "p": list(rng.binomial(20, 0.50, 50_000).astype(float)),
        "q": list(rng.binomial(20, 0.52, 40_000).astype(float)),
        "r": list(rng.binomial(20, 0.49, 30_000).astype(float)) + [math.nan] * 5,
    }
    table = engine_table(_frame(levels))
    counting = []
    monkeypatch.setattr(ranks, "doubled_ranks_of_values", _spy(counting))
    counted = rank_sums(table, ["p", "q", "r"], values=120_000)
    assert counting, "21 distinct values in 120,000 rows should be ranked by counting"
    sorted_ = rank_sums(table, ["p", "q", "r"])  # no row count given: the window is used
    assert counted == sorted_
    values = np.concatenate([_clean(v) for v in levels.values()])
    average = scipy_stats.rankdata(values)  # reference: scipy.stats.rankdata (average ties)
    bounds = np.cumsum([0, 50_000, 40_000, 30_000])
    assert counted.doubled_rank_sums == tuple(
        int(round(2 * average[a:b].sum())) for a, b in zip(bounds[:-1], bounds[1:], strict=True)
    )
    # The tie term Σ(t³ − t) over groups of t equal values, from numpy's counts of each value.
    sizes = np.unique(values, return_counts=True)[1].astype(object)
    assert counted.tie_term == float(sum(sizes**3 - sizes))
    result = kruskal_wallis(counted)
    reference = scipy_stats.kruskal(*(_clean(v) for v in levels.values()))
    assert result.statistic == pytest.approx(reference.statistic, rel=1e-10)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-8)


def _spy(calls: list):
    function = ranks.doubled_ranks_of_values

    def spied(*args, **kwargs):
        calls.append(args)
        return function(*args, **kwargs)

    return spied
