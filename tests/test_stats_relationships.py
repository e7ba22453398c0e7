"""Correlation, slopes per group and log-target fits, checked against scipy and statsmodels."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from palmerpenguins import load_penguins
from scipy import stats as scipy_stats
from statsmodels.stats.anova import anova_lm

from briefgen.stats.relationships import (
    LogFit,
    LogSkipped,
    correlate,
    fit_log_target,
    level_sums,
    slopes_by_group,
)

CONFIDENCE = 0.95


def _penguins() -> pd.DataFrame:
    """Palmer penguins in analysis-frame shape: y body mass, x0..x2 measures, g0..g2 groups."""
    raw = load_penguins()
    return pd.DataFrame(
        {
            "y": raw["body_mass_g"].astype("float64"),
            "x0": raw["flipper_length_mm"].astype("float64"),
            "x1": raw["bill_length_mm"].astype("float64"),
            "x2": raw["bill_depth_mm"].astype("float64"),
            "g0": raw["species"].astype(object),
            "g1": raw["sex"].astype(object),
            "g2": raw["island"].astype(object),
        }
    )


def _scipy_reference(x: np.ndarray, y: np.ndarray):
    """Pearson and Spearman from scipy over the rows with both values."""
    used = ~np.isnan(x) & ~np.isnan(y)
    pearson = scipy_stats.pearsonr(x[used], y[used])
    spearman = scipy_stats.spearmanr(x[used], y[used])
    return int(used.sum()), pearson, spearman


def _assert_matches_scipy(result, x: np.ndarray, y: np.ndarray, rtol: float = 1e-9) -> None:
    n, pearson, spearman = _scipy_reference(x, y)
    interval = pearson.confidence_interval(CONFIDENCE)
    assert result.n == n  # reference: numpy count of rows with both values
    # reference: scipy.stats.pearsonr statistic, pvalue and confidence_interval(0.95) (Fisher z)
    assert result.pearson_r == pytest.approx(pearson.statistic, rel=rtol, abs=1e-12)
    assert result.pearson_p_value == pytest.approx(pearson.pvalue, rel=1e-7, abs=1e-300)
    assert result.pearson_ci_low == pytest.approx(interval.low, rel=rtol, abs=1e-12)
    assert result.pearson_ci_high == pytest.approx(interval.high, rel=rtol, abs=1e-12)
    # reference: scipy.stats.spearmanr statistic and pvalue (t approximation)
    assert result.spearman_rho == pytest.approx(spearman.statistic, rel=rtol, abs=1e-12)
    assert result.spearman_p_value == pytest.approx(spearman.pvalue, rel=1e-7, abs=1e-300)


# --- correlation -----------------------------------------------------------------------------


def test_correlation_matches_scipy_with_missing_values_and_ties(engine_table):
    rng = np.random.default_rng(7)
    n = 300
    x0 = rng.normal(10, 3, n)
    y = 2.0 * x0 + rng.normal(0, 4, n)
    x1 = rng.integers(0, 5, n).astype(float)  # five values: ties everywhere
    x2 = np.round(rng.exponential(2.0, n))  # skewed, rounded: many ties
    y[rng.choice(n, 20, replace=False)] = np.nan
    x0[rng.choice(n, 15, replace=False)] = np.nan
    x2[rng.choice(n, 40, replace=False)] = np.nan
    frame = pd.DataFrame({"y": y, "x0": x0, "x1": x1, "x2": x2})
    table = engine_table(frame)

    results = correlate(table, ["x0", "x1", "x2"], ["a", "b", "c"], CONFIDENCE)

    assert [r.predictor for r in results] == ["a", "b", "c"]
    for result, column in zip(results, ["x0", "x1", "x2"], strict=True):
        _assert_matches_scipy(result, frame[column].to_numpy(), y)


def test_spearman_with_heavy_ties_in_both_variables(engine_table):
    rng = np.random.default_rng(11)
    n = 500
    x = rng.integers(0, 4, n).astype(float)
    y = np.minimum(x + rng.integers(0, 3, n), 4).astype(float)  # five levels, tied blocks
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))

    (result,) = correlate(table, ["x0"], ["x"], CONFIDENCE)

    reference = scipy_stats.spearmanr(x, y)  # reference: scipy.stats.spearmanr (average ranks)
    assert result.spearman_rho == pytest.approx(reference.statistic, rel=1e-12)
    assert result.spearman_p_value == pytest.approx(reference.pvalue, rel=1e-7, abs=1e-300)


def test_correlation_on_penguins_matches_scipy(engine_table):
    frame = _penguins()
    table = engine_table(frame)

    results = correlate(table, ["x0", "x1", "x2"], ["flipper", "bill length", "bill depth"], 0.95)

    for result, column in zip(results, ["x0", "x1", "x2"], strict=True):
        # reference: scipy.stats.pearsonr / spearmanr on Palmer penguins (open dataset)
        _assert_matches_scipy(result, frame[column].to_numpy(), frame["y"].to_numpy())
    # reference: penguins flipper length vs body mass r ≈ 0.871 (value from memory, widely quoted)
    assert results[0].pearson_r == pytest.approx(0.871, abs=0.001)


def test_correlation_at_large_offsets_matches_offset_free_reference(engine_table):
    rng = np.random.default_rng(3)
    n = 2000
    x_small = rng.uniform(0, 1.0, n)
    y_small = 0.3 * x_small + rng.normal(0, 0.1, n)
    x_offset, y_offset = 1e9, 1e12
    x, y = x_offset + x_small, y_offset + y_small
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))

    (result,) = correlate(table, ["x0"], ["x"], CONFIDENCE)

    # Sterbenz: subtracting the offset back is exact, so the reference sees the very same values.
    _assert_matches_scipy(result, x - x_offset, y - y_offset, rtol=1e-12)


@settings(
    max_examples=20, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)  # the engine_table factory writes a fresh file per call
@given(
    seed=st.integers(0, 2**32 - 1),
    n=st.integers(5, 60),
    x_offset=st.floats(0, 1e9),
    y_offset=st.floats(0, 1e9),
    spread=st.floats(0.1, 1.0),
)
def test_correlation_is_unchanged_by_offsets(engine_table, seed, n, x_offset, y_offset, spread):
    rng = np.random.default_rng(seed)
    x_small = np.round(rng.normal(0, spread, n), 2)  # rounding makes some ties
    y_small = rng.uniform(-1, 1) * x_small + rng.normal(0, spread, n)
    x, y = x_offset + x_small, y_offset + y_small
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))
    (result,) = correlate(table, ["x0"], ["x"], CONFIDENCE)
    # reference: scipy.stats.pearsonr / spearmanr on the same values with the offset taken off
    reference_x, reference_y = x - x_offset, y - y_offset
    if np.ptp(reference_x) == 0 or np.ptp(reference_y) == 0:
        assert result.pearson_r is None
        return
    pearson = scipy_stats.pearsonr(reference_x, reference_y)
    spearman = scipy_stats.spearmanr(reference_x, reference_y)
    assert result.pearson_r == pytest.approx(pearson.statistic, abs=1e-9)
    assert result.spearman_rho == pytest.approx(spearman.statistic, abs=1e-12)


@pytest.mark.filterwarnings("ignore::scipy.stats.ConstantInputWarning")
def test_correlation_without_enough_data_is_empty(engine_table):
    frame = pd.DataFrame(
        {
            "y": [1.0, 2.0, 3.0, 4.0, np.nan],
            "x0": [5.0, 5.0, 5.0, 5.0, 1.0],
            "x1": [1.0, np.nan, np.nan, np.nan, 2.0],
        }
    )
    table = engine_table(frame)

    constant, too_few = correlate(table, ["x0", "x1"], ["constant", "few"], CONFIDENCE)

    # reference: scipy.stats.pearsonr and spearmanr return nan for a constant input
    assert math.isnan(scipy_stats.spearmanr([5.0] * 4, [1.0, 2.0, 3.0, 4.0]).statistic)
    assert constant.n == 4 and constant.pearson_r is None and constant.spearman_rho is None
    assert too_few.n == 1 and too_few.pearson_r is None and too_few.pearson_p_value is None


# --- slopes per group -------------------------------------------------------------------------


def _check_level_slopes(levels, frame: pd.DataFrame, group: str, predictor: str) -> None:
    used = frame.dropna(subset=["y", group, predictor])
    for level in levels:
        rows = used[used[group] == level.level]
        # reference: statsmodels OLS fitted within the level
        fit = sm.OLS(rows["y"], sm.add_constant(rows[predictor])).fit()
        low, high = fit.conf_int(alpha=1 - CONFIDENCE).iloc[1]
        assert level.n == len(rows)
        assert level.slope == pytest.approx(fit.params.iloc[1], rel=1e-9)
        assert level.intercept == pytest.approx(fit.params.iloc[0], rel=1e-9, abs=1e-9)
        assert level.slope_se == pytest.approx(fit.bse.iloc[1], rel=1e-7)
        assert level.slope_ci_low == pytest.approx(low, rel=1e-7)
        assert level.slope_ci_high == pytest.approx(high, rel=1e-7)


def _check_slope_test(result, frame: pd.DataFrame, group: str, predictor: str) -> None:
    used = frame.dropna(subset=["y", group, predictor])
    parallel = smf.ols(f"y ~ C({group}) + {predictor}", used).fit()
    separate = smf.ols(f"y ~ C({group}) * {predictor}", used).fit()
    table = anova_lm(parallel, separate)  # reference: statsmodels anova_lm nested models
    assert result.f_statistic == pytest.approx(table["F"].iloc[1], rel=1e-7)
    assert result.p_value == pytest.approx(table["Pr(>F)"].iloc[1], rel=1e-6)
    assert result.df_between == table["df_diff"].iloc[1]
    assert result.df_within == table["df_resid"].iloc[1]
    # reference: statsmodels OLS slope of the parallel-lines model
    assert result.common_slope == pytest.approx(parallel.params[predictor], rel=1e-9)


@pytest.mark.parametrize(
    ("group", "predictor"), [("g0", "x0"), ("g0", "x2"), ("g1", "x1"), ("g2", "x0")]
)
def test_penguin_slopes_by_group_match_statsmodels(engine_table, group, predictor):
    frame = _penguins()
    table = engine_table(frame)

    result = slopes_by_group(table, group, predictor, "group", "predictor", CONFIDENCE)

    # Levels come back sorted; sex has missing values that must not form a level.
    expected = sorted(frame[group].dropna().unique())
    assert [level.level for level in result.levels] == expected
    _check_level_slopes(result.levels, frame, group, predictor)
    _check_slope_test(result, frame, group, predictor)


def test_slopes_by_group_at_large_offset_match_offset_free_reference(engine_table):
    rng = np.random.default_rng(5)
    levels = np.repeat(["north", "south", "west"], [150, 200, 120])
    true_slope = pd.Series({"north": 0.2, "south": 0.5, "west": 0.25})[levels].to_numpy()
    x_small = rng.uniform(0, 1.0, len(levels))
    y_small = true_slope * x_small + rng.normal(0, 0.1, len(levels))
    x_offset, y_offset = 1e11, 1e12
    engine_frame = pd.DataFrame(
        {"y": y_offset + y_small, "x0": x_offset + x_small, "g0": levels.astype(object)}
    )
    table = engine_table(engine_frame)

    result = slopes_by_group(table, "g0", "x0", "region", "distance", CONFIDENCE)

    # Same values with the offsets taken off exactly (Sterbenz), as the reference sees them.
    reference = pd.DataFrame(
        {"y": engine_frame["y"] - y_offset, "x0": engine_frame["x0"] - x_offset, "g0": levels}
    )
    _check_slope_test(result, reference, "g0", "x0")
    for level in result.levels:
        rows = reference[reference["g0"] == level.level]
        fit = sm.OLS(rows["y"], sm.add_constant(rows["x0"])).fit()  # reference: statsmodels OLS
        assert level.slope == pytest.approx(fit.params.iloc[1], rel=1e-9)
        assert level.slope_se == pytest.approx(fit.bse.iloc[1], rel=1e-7)
        assert level.x_mean - x_offset == pytest.approx(rows["x0"].mean(), abs=1e-4)


@pytest.mark.filterwarnings("ignore:The design matrix is rank-deficient")
def test_slope_test_with_degenerate_levels_matches_statsmodels(engine_table):
    rng = np.random.default_rng(9)
    x = rng.normal(0, 1, 60)
    groups = np.array(["a"] * 25 + ["b"] * 25 + ["flat"] * 8 + ["pair"] * 2, dtype=object)
    x[50:58] = 3.0  # "flat": the predictor does not vary, so the level has no slope
    y = np.where(groups == "b", 2.0, 1.0) * x + rng.normal(0, 0.5, 60)
    frame = pd.DataFrame({"y": y, "x0": x, "g0": groups})
    table = engine_table(frame)

    result = slopes_by_group(table, "g0", "x0", "g", "x", CONFIDENCE)

    by_level = {level.level: level for level in result.levels}
    assert by_level["flat"].slope is None and by_level["pair"].slope is None
    _check_level_slopes([by_level["a"], by_level["b"]], frame, "g0", "x0")
    # reference: statsmodels anova_lm; its rank-deficient fit counts only estimable slopes
    _check_slope_test(result, frame, "g0", "x0")


# --- log target -------------------------------------------------------------------------------


def test_log_fit_on_penguins_matches_statsmodels_and_gmean(engine_table):
    frame = _penguins()
    table = engine_table(frame)

    fits = fit_log_target(table, ["x0", "x1"], ["flipper", "bill length"], CONFIDENCE)

    assert isinstance(fits, tuple) and all(isinstance(fit, LogFit) for fit in fits)
    for fit, column in zip(fits, ["x0", "x1"], strict=True):
        used = frame.dropna(subset=["y", column])
        # reference: statsmodels OLS on np.log(y)
        model = sm.OLS(np.log(used["y"]), sm.add_constant(used[column])).fit()
        low, high = model.conf_int(alpha=1 - CONFIDENCE).iloc[1]
        assert fit.n == len(used)
        assert fit.log_slope == pytest.approx(model.params.iloc[1], rel=1e-9)
        assert fit.log_slope_se == pytest.approx(model.bse.iloc[1], rel=1e-7)
        assert fit.percent_change_per_unit == pytest.approx(
            100 * math.expm1(model.params.iloc[1]), rel=1e-9
        )
        assert fit.percent_ci_low == pytest.approx(100 * math.expm1(low), rel=1e-7)
        assert fit.percent_ci_high == pytest.approx(100 * math.expm1(high), rel=1e-7)
        assert fit.r_squared == pytest.approx(model.rsquared, rel=1e-9)
        # reference: scipy.stats.gmean over the rows used
        assert fit.geometric_mean == pytest.approx(scipy_stats.gmean(used["y"]), rel=1e-12)


def test_log_fit_is_skipped_when_a_target_value_is_not_positive(engine_table):
    frame = pd.DataFrame({"y": [3.0, 0.0, 5.0, -2.0, np.nan, 7.0], "x0": [1.0, 2, 3, 4, 5, 6]})
    table = engine_table(frame)

    result = fit_log_target(table, ["x0"], ["x"], CONFIDENCE)

    assert isinstance(result, LogSkipped)
    # reference: numpy count and minimum of the non-missing target values
    values = frame["y"].dropna().to_numpy()
    assert result.values == values.size
    assert result.nonpositive_count == int((values <= 0).sum())
    assert result.minimum == values.min()
    assert "above zero" in result.reason


def test_log_fit_with_multiplicative_effect_matches_statsmodels(engine_table):
    rng = np.random.default_rng(21)
    x = rng.uniform(0, 10, 400)
    y = 50.0 * np.exp(0.08 * x + rng.normal(0, 0.2, 400))  # about +8.3% per unit
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))

    (fit,) = fit_log_target(table, ["x0"], ["x"], CONFIDENCE)

    model = sm.OLS(np.log(y), sm.add_constant(x)).fit()  # reference: statsmodels OLS on np.log(y)
    assert fit.percent_change_per_unit == pytest.approx(100 * math.expm1(model.params[1]), rel=1e-9)
    assert fit.geometric_mean == pytest.approx(scipy_stats.gmean(y), rel=1e-12)  # scipy gmean


def test_spearman_ranks_a_tied_column_by_counting_and_a_continuous_one_by_sorting(
    engine_table, monkeypatch
):
    # Constructed: x takes 6 values (ranked from counts of each value), y is continuous
    # (ranked by a sort); missing cells in each, on different rows.
    from briefgen.stats import correlation

    rng = np.random.default_rng(12)
    n = 2_000
    x = rng.integers(0, 6, n).astype(float)
    y = x * 0.3 + rng.normal(0, 1, n)
    x[::17], y[::23] = np.nan, np.nan
    counted = []
    original = correlation.doubled_ranks_of_values
    monkeypatch.setattr(
        correlation,
        "doubled_ranks_of_values",
        lambda rows, axis: counted.append(axis) or original(rows, axis),
    )
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))

    (result,) = correlate(table, ["x0"], ["x"], CONFIDENCE)

    assert counted == ["x"]
    used = ~np.isnan(x) & ~np.isnan(y)
    reference = scipy_stats.spearmanr(x[used], y[used])  # reference: scipy.stats.spearmanr
    assert result.n == used.sum()
    assert result.spearman_rho == pytest.approx(reference.statistic, rel=1e-12)
    assert result.pearson_r == pytest.approx(scipy_stats.pearsonr(x[used], y[used])[0], rel=1e-12)


def test_per_level_sums_of_several_predictors_equal_one_at_a_time(engine_table):
    """A brief takes every predictor's per-level sums of one group in one pair of queries.

    Constructed from Palmer penguins with extra holes in one predictor and a level
    (Torgersen) where another has no value at all: each predictor's sums must be those
    of its own rows, bit for bit.
    """
    frame = _penguins()
    rng = np.random.default_rng(5)
    frame.loc[rng.random(len(frame)) < 0.2, "x1"] = np.nan
    frame.loc[frame.g2 == "Torgersen", "x2"] = np.nan
    table = engine_table(frame)
    together = level_sums(table, "g2", ["x0", "x1", "x2"])
    for column in ("x0", "x1", "x2"):
        assert together[column] == level_sums(table, "g2", [column])[column]
    assert [level["level"] for level in together["x2"]] == ["Biscoe", "Dream"]
    # reference: pandas counts of rows with the target, the predictor and the group
    counts = frame.dropna(subset=["y", "x1", "g2"]).groupby("g2").size()
    assert {level["level"]: level["n"] for level in together["x1"]} == counts.to_dict()
