"""Straight-line fits from the engine, checked against certified values and reference libraries.

References: NIST StRD certified values (Norris), statsmodels OLS, scipy, numpy,
Anscombe's quartet (Anscombe 1973), and exact shifts of hard data.
"""

from __future__ import annotations

import math
import os
import re
from fractions import Fraction
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import scipy
import scipy.stats
import statsmodels.api as sm
from vega_datasets import local_data

from briefgen.stats.core.references import shift_references
from briefgen.stats.correlation import centred_sums
from briefgen.stats.regression import RegressionFit, fit_lines, value_sums

NORRIS = Path(os.path.dirname(scipy.__file__)) / "stats/tests/data/nist_linregress/Norris.dat"


def read_nist_linear(path: Path) -> tuple[dict[str, float], np.ndarray, np.ndarray]:
    """Certified values and data of a NIST StRD linear regression file.

    Values are parsed from the file header, not typed in, so the test cannot carry a typo.
    """
    text = path.read_text()
    lines = text.splitlines()
    number = r"(-?[\d.]+(?:E[-+]?\d+)?)"
    b0 = re.search(rf"^\s*B0\s+{number}\s+{number}", text, re.MULTILINE)
    b1 = re.search(rf"^\s*B1\s+{number}\s+{number}", text, re.MULTILINE)
    residual_sd = re.search(rf"Standard Deviation\s+{number}\s*$", text, re.MULTILINE)
    r_squared = re.search(rf"R-Squared\s+{number}", text)
    anova = re.search(rf"^Residual\s+(\d+)\s+{number}\s+{number}", text, re.MULTILINE)
    first, last = map(int, re.search(r"Data\s+\(lines (\d+) to (\d+)\)", text).groups())
    data = np.array([[float(v) for v in line.split()] for line in lines[first - 1 : last]])
    certified = {
        "intercept": float(b0.group(1)),
        "intercept_se": float(b0.group(2)),
        "slope": float(b1.group(1)),
        "slope_se": float(b1.group(2)),
        "residual_sd": float(residual_sd.group(1)),
        "r_squared": float(r_squared.group(1)),
        "residual_df": float(anova.group(1)),
        "residual_sum_of_squares": float(anova.group(2)),
    }
    # The file's data columns are "y x".
    return certified, data[:, 1], data[:, 0]


def significant_digits(actual: float, expected: float) -> float:
    """Number of agreeing significant digits, −log10 of the relative error (LRE)."""
    if actual == expected:
        return math.inf
    return -math.log10(abs(actual - expected) / abs(expected))


# ---------------------------------------------------------------- NIST StRD Norris

# Measured on this stack (DuckDB 2.0.1): intercept 12.8, intercept_se 13.6, slope 14.4,
# slope_se 13.7, residual_sd 13.7, R² 15.5, residual sum of squares 13.4 digits. The
# certified values carry 15. Each bound sits a little below the measurement.
NORRIS_MINIMUM_DIGITS = {
    "intercept": 12.5,
    "intercept_se": 13.0,
    "slope": 14.0,
    "slope_se": 13.0,
    "residual_sd": 13.0,
    "r_squared": 15.0,
    "residual_sum_of_squares": 13.0,
}


def test_norris_matches_nist_certified_values(engine_table):
    certified, x, y = read_nist_linear(NORRIS)
    assert len(x) == 36
    (fit,) = fit_lines(engine_table(pd.DataFrame({"y": y, "x0": x})), ["x0"], 0.95)
    assert fit.n == 36
    got = {
        "intercept": fit.intercept,
        "intercept_se": fit.intercept_se,
        "slope": fit.slope,
        "slope_se": fit.slope_se,
        "residual_sd": fit.residual_sd,
        "r_squared": fit.r_squared,
        "residual_sum_of_squares": fit.residual_sd**2 * (fit.n - 2),
    }
    assert certified["residual_df"] == fit.n - 2
    for name, minimum in NORRIS_MINIMUM_DIGITS.items():
        # reference: NIST StRD Norris certified value (parsed from the file header)
        digits = significant_digits(got[name], certified[name])
        assert digits >= minimum, (name, got[name], certified[name], digits)


# ---------------------------------------------------------------- statsmodels OLS


def generated_data() -> pd.DataFrame:
    """Two predictors with different missing rows, so each fit has its own complete cases."""
    rng = np.random.default_rng(41)
    n = 300
    x0 = rng.uniform(-5.0, 20.0, n)
    x1 = rng.gamma(2.0, 3.0, n)
    y = 4.0 - 1.3 * x0 + 0.2 * x1 + rng.normal(0.0, 3.0, n)
    x1[rng.random(n) < 0.1] = np.nan
    y[rng.random(n) < 0.05] = np.nan
    return pd.DataFrame({"y": y, "x0": x0, "x1": x1})


@pytest.mark.parametrize("confidence", [0.9, 0.95])
def test_fits_match_statsmodels_ols(engine_table, confidence):
    data = generated_data()
    fits = fit_lines(engine_table(data), ["x0", "x1"], confidence)
    assert [fit.predictor for fit in fits] == ["x0", "x1"]
    for fit in fits:
        complete = data[["y", fit.predictor]].dropna()
        x, y = complete[fit.predictor].to_numpy(), complete["y"].to_numpy()
        model = sm.OLS(y, sm.add_constant(x)).fit()  # reference: statsmodels OLS
        assert fit.n == int(model.nobs)
        assert (fit.intercept, fit.slope) == pytest.approx(tuple(model.params), rel=1e-12)
        assert (fit.intercept_se, fit.slope_se) == pytest.approx(tuple(model.bse), rel=1e-12)
        intervals = model.conf_int(alpha=1 - confidence)  # reference: statsmodels conf_int
        assert (fit.intercept_ci_low, fit.intercept_ci_high) == pytest.approx(
            tuple(intervals[0]), rel=1e-12
        )
        assert (fit.slope_ci_low, fit.slope_ci_high) == pytest.approx(
            tuple(intervals[1]), rel=1e-12
        )
        assert fit.r_squared == pytest.approx(model.rsquared, rel=1e-12)
        assert fit.residual_sd == pytest.approx(math.sqrt(model.scale), rel=1e-12)
        # reference: scipy.stats.pearsonr on the complete cases
        assert fit.pearson_r == pytest.approx(scipy.stats.pearsonr(x, y).statistic, rel=1e-12)
        # reference: numpy on the complete cases
        assert fit.x_mean == pytest.approx(np.mean(x), rel=1e-13)
        assert fit.y_mean == pytest.approx(np.mean(y), rel=1e-13)
        assert fit.sxx == pytest.approx(np.sum((x - x.mean()) ** 2), rel=1e-12)
        assert (fit.x_min, fit.x_max) == (np.min(x), np.max(x))
        check_band(fit, model, confidence)


def check_band(fit: RegressionFit, model, confidence: float) -> None:
    """The band of the fitted mean equals statsmodels' mean_ci at a few x values."""
    where = np.array([fit.x_min, fit.x_mean, fit.x_max, fit.x_max + 10.0])
    # reference: statsmodels get_prediction(...).conf_int(alpha), the mean's interval
    expected = model.get_prediction(sm.add_constant(where, has_constant="add")).conf_int(
        alpha=1 - confidence
    )
    for x, (low, high) in zip(where, expected, strict=True):
        assert fit.band(float(x), confidence) == pytest.approx((low, high), rel=1e-12)


# ---------------------------------------------------------------- Anscombe's quartet


def test_anscombe_quartet_gives_the_published_line(engine_table):
    quartet = local_data.anscombe()  # offline copy shipped with vega_datasets
    frame = pd.DataFrame(
        {
            "series": quartet["Series"].astype(object),
            "x0": quartet["X"].astype(float),
            "y": quartet["Y"].astype(float),
        }
    )
    table = engine_table(frame)
    for series in ["I", "II", "III", "IV"]:
        (fit,) = fit_lines(table.filter(table.series == series), ["x0"], 0.95)
        # reference: Anscombe (1973), "Graphs in statistical analysis", Am. Stat. 27:17-21:
        # n = 11, mean x 9.0, mean y 7.5, line y = 3 + 0.5x, r = 0.82, Σ(x − x̄)² = 110.0,
        # se of slope 0.118 (paper values from memory). Each is checked to its printed
        # digits: within half a unit of the last digit.
        assert fit.n == 11
        assert abs(fit.slope - 0.5) <= 0.05
        assert abs(fit.intercept - 3.0) <= 0.5
        assert abs(fit.pearson_r - 0.82) <= 0.005
        assert abs(fit.slope_se - 0.118) <= 0.0005
        assert abs(fit.sxx - 110.0) <= 0.05
        assert abs(fit.x_mean - 9.0) <= 0.05
        assert abs(fit.y_mean - 7.5) <= 0.05
        # Commonly tabulated three-digit values (e.g. the Wikipedia table): slope 0.500,
        # intercept 3.00, r 0.816. Series IV has r = 0.81652, which rounds to 0.817: the
        # tabulated 0.816 is truncated, so r is checked by truncation to three decimals.
        assert abs(fit.slope - 0.500) <= 0.0005
        assert abs(fit.intercept - 3.00) <= 0.005
        assert math.floor(fit.pearson_r * 1000) / 1000 == 0.816
        # reference: scipy.stats.linregress on the same series, to full precision.
        part = frame[frame.series == series]
        line = scipy.stats.linregress(part.x0, part.y)
        assert (fit.slope, fit.intercept, fit.pearson_r, fit.slope_se) == pytest.approx(
            (line.slope, line.intercept, line.rvalue, line.stderr), rel=1e-12
        )


# ---------------------------------------------------------------- hard inputs


@pytest.mark.parametrize(
    ("x_offset", "x_step", "x_spread", "y_offset", "y_step", "noise"),
    [
        (1e9, 2.0**-20, 8.0, 1e12, 2.0**-10, 0.05),  # both offset, y noise ~400 ulps of 1e12
        (1e12, 2.0**-10, 0.1, 1e12, 2.0**-10, 0.05),  # x near 1e12 with spread 0.1
        (1e9, 2.0**-20, 8.0, 1e12, 2.0**-13, 1e-3),  # y noise ~8 ulps of 1e12
    ],
)
def test_large_offsets_keep_digits(
    engine_table, x_offset, x_step, x_spread, y_offset, y_step, noise
):
    rng = np.random.default_rng(51)
    n = 500
    # Small parts on a grid coarser than the ulp at the offset, so offset + part is exact
    # and statsmodels on the small parts is the exact reference for the shifted data.
    x_small = np.round(rng.uniform(0.0, x_spread, n) / x_step) * x_step
    y_small = np.round((3.0 + 0.7 * x_small + rng.normal(0.0, noise, n)) / y_step) * y_step
    x, y = x_offset + x_small, y_offset + y_small
    assert np.array_equal(x - x_offset, x_small) and np.array_equal(y - y_offset, y_small)

    (fit,) = fit_lines(engine_table(pd.DataFrame({"y": y, "x0": x})), ["x0"], 0.95)
    model = sm.OLS(y_small, sm.add_constant(x_small)).fit()  # reference: statsmodels OLS
    # Slope, its se, residual sd and R² do not change under a shift of x or y. Centred sums
    # done right give ~1e-14 here (measured with the fix proposed in the report); 1e-10 leaves
    # room for summation order while catching a centre rounded to the ulp of the offset.
    assert fit.slope == pytest.approx(model.params[1], rel=1e-10)
    assert fit.slope_se == pytest.approx(model.bse[1], rel=1e-10)
    assert fit.residual_sd == pytest.approx(math.sqrt(model.scale), rel=1e-10)
    assert fit.r_squared == pytest.approx(model.rsquared, rel=1e-10)
    # Intercept at the original x = 0: shift the reference exactly (Fraction) and compare
    # in units of its standard error, which is how far it could honestly move.
    intercept = (
        Fraction(y_offset)
        + Fraction(model.params[0])
        - Fraction(model.params[1]) * Fraction(x_offset)
    )
    # reference: statsmodels prediction se at x_small = −x_offset is the intercept's se.
    at_zero = model.get_prediction(np.array([[1.0, -x_offset]]))
    intercept_se = float(at_zero.se_mean[0])
    assert abs(fit.intercept - float(intercept)) <= 1e-6 * intercept_se
    assert fit.intercept_se == pytest.approx(intercept_se, rel=1e-10)


def test_fits_from_the_correlations_sums_are_the_fits_of_their_own_pass(engine_table):
    """A brief fits lines from the sums the correlations' pass takes (one query fewer).

    Constructed case: two predictors with different missing rows, at an offset of 1e9,
    so the sums, scales and masks of both passes must agree to the last bit.
    """
    data = generated_data()
    data[["y", "x0"]] += 1e9
    table = engine_table(data)
    references = shift_references(table, ["x0", "x1"])
    shared = centred_sums(table, ["x0", "x1"], references)
    own = value_sums(table, ["x0", "x1"], references)
    assert own == {key: value for key, value in shared.items() if key.startswith("value")}
    assert fit_lines(table, ["x0", "x1"], 0.95, references, shared) == fit_lines(
        table, ["x0", "x1"], 0.95
    )


# ---------------------------------------------------------------- edge cases


def test_degenerate_predictors(engine_table):
    data = pd.DataFrame(
        {
            "y": [1.0, 3.0, np.nan, 5.0, 2.0],
            "x0": [0.0, 1.0, 2.0, np.nan, np.nan],  # two complete rows
            "x1": [2.0, 2.0, 2.0, 2.0, 2.0],  # no spread in x
            "x2": [np.nan] * 5,  # no values
        }
    )
    two, flat, empty = fit_lines(engine_table(data), ["x0", "x1", "x2"], 0.95)

    # reference: numpy.polyfit(deg=1) through the two complete points.
    slope, intercept = np.polyfit([0.0, 1.0], [1.0, 3.0], 1)
    assert two.n == 2
    assert (two.slope, two.intercept) == pytest.approx((slope, intercept), rel=1e-14)
    # Two points leave no degrees of freedom: no standard errors, intervals or R².
    assert two.slope_se is None and two.residual_sd is None and two.r_squared is None

    # No spread in x: the slope is undefined (statsmodels gives a singular design).
    assert flat.n == 4 and flat.slope is None and flat.intercept is None and flat.sxx == 0.0

    assert empty.n == 0 and empty.slope is None and empty.x_mean is None
    assert fit_lines(engine_table(data), [], 0.95) == ()


def test_constant_target_gives_flat_line_without_correlation(engine_table):
    x = np.array([0.0, 1.0, 2.0, 5.0])
    (fit,) = fit_lines(engine_table(pd.DataFrame({"y": np.full(4, 4.0), "x0": x})), ["x0"], 0.95)
    slope, intercept = np.polyfit(x, np.full(4, 4.0), 1)  # reference: numpy.polyfit
    assert fit.slope == pytest.approx(slope, abs=1e-15)
    assert fit.intercept == pytest.approx(intercept, rel=1e-15)
    assert fit.residual_sd == 0.0
    # reference: scipy.stats.pearsonr is undefined (nan) for a constant input; the fit says None.
    assert fit.pearson_r is None and fit.r_squared is None
