"""Group summaries and Tukey boxes from the engine, checked against reference libraries.

References: numpy (type 7 quantiles, sd), scipy (t intervals), matplotlib
(``cbook.boxplot_stats``), pandas (groupby) on the Palmer penguins data, and exact
rational arithmetic (``fractions.Fraction``) where floating-point references
themselves lose digits.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest
import scipy.stats
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from matplotlib import cbook
from palmerpenguins import load_penguins

from briefgen.stats.core.summary import MAX_LISTED_OUTLIERS, BoxStats, Summary, summarise_levels

EPS = float(np.finfo(float).eps)


def long_table(parts: dict[str, np.ndarray]) -> pd.DataFrame:
    """One row per value: columns ``level`` and ``y``, as ``AnalysisFrame.levels`` gives."""
    levels = np.repeat(list(parts), [len(values) for values in parts.values()])
    values = np.concatenate([np.asarray(v, dtype=float) for v in parts.values()])
    return pd.DataFrame({"level": pd.Series(levels, dtype=object), "y": values})


def summarise(engine_table, parts: dict[str, np.ndarray], confidence: float = 0.95):
    """Run ``summarise_levels`` on ``parts`` and index the results by level."""
    summaries, boxes = summarise_levels(engine_table(long_table(parts)), confidence)
    return {s.level: s for s in summaries}, {b.level: b for b in boxes}


def exact_mean_sd(values: np.ndarray) -> tuple[Fraction, Fraction | None]:
    """Mean and sample variance of the given floats in exact rational arithmetic."""
    exact = [Fraction(float(v)) for v in values]
    mean = sum(exact, Fraction(0)) / len(exact)
    if len(exact) < 2:
        return mean, None
    return mean, sum(((v - mean) ** 2 for v in exact), Fraction(0)) / (len(exact) - 1)


def assert_within(actual: float, expected: float, tolerance: float) -> None:
    assert abs(actual - expected) <= tolerance, (
        f"{actual!r} vs {expected!r}, tolerance {tolerance:.3g}"
    )


# ---------------------------------------------------------------- 1. quantiles

QUANTILE_CASES = {
    "one": np.array([4.2]),
    "two": np.array([1.0, 10.0]),
    "three": np.array([3.0, -1.0, 2.5]),
    "four": np.array([1.0, 2.0, 3.0, 4.0]),
    "seven_with_ties": np.array([5.0, 1.0, 5.0, 2.0, 5.0, 9.0, 1.0]),
    "negative": -(np.arange(1.0, 12.0) ** 1.5),
    "normal_101": np.random.default_rng(11).normal(50.0, 7.0, 101),
    "lognormal_250": np.random.default_rng(12).lognormal(0.0, 2.0, 250),
}


def test_quantiles_match_numpy_linear_method(engine_table):
    summaries, _ = summarise(engine_table, QUANTILE_CASES)
    for level, values in QUANTILE_CASES.items():
        summary = summaries[level]
        # reference: numpy.percentile(method="linear"), Hyndman & Fan (1996) type 7.
        expected = np.percentile(values, [0, 25, 50, 75, 100], method="linear")
        # Two correct type 7 interpolations may round differently: allow a few ulps.
        tolerance = 4 * EPS * float(np.max(np.abs(values)))
        actual = [summary.min, summary.q1, summary.median, summary.q3, summary.max]
        for got, want in zip(actual, expected, strict=True):
            assert_within(got, float(want), tolerance)
        # reference: numpy.quantile default method is the same type 7 rule.
        assert_within(summary.median, float(np.quantile(values, 0.5)), tolerance)
        assert summary.min == float(np.min(values))  # reference: numpy.min (exact)
        assert summary.max == float(np.max(values))  # reference: numpy.max (exact)


# ---------------------------------------------------------------- 2. box statistics

BOX_CASES = {
    "heavy_tails": np.random.default_rng(21).standard_t(2, 300),  # more than 20 outliers
    "skewed": np.random.default_rng(22).lognormal(0.0, 1.5, 200),
    "one_outlier": np.array([1.0, 2.0, 3.0, 4.0, 50.0]),
    "repeated_outliers": np.concatenate([np.linspace(0.0, 1.0, 40), np.full(25, 100.0)]),
    "both_sides": np.concatenate([np.linspace(-1.0, 1.0, 30), [-40.0, -9.0, 8.0, 30.0]]),
    "low_whisker_clamped": np.array([0.0, 10.0, 10.0, 10.0]),  # q1 = 7.5, nothing in [7.5, 10)
    "high_whisker_clamped": np.array([10.0, 10.0, 10.0, 20.0]),
    # q1 = 1, q3 = 3, so the fences are -2 and 6 exactly: values on a fence are not outliers.
    "on_the_fences": np.array([-2.0, 1.0, 1.0, 1.0, 2.0, 3.0, 3.0, 3.0, 6.0]),
    "single": np.array([3.5]),
}


def test_box_statistics_match_matplotlib(engine_table):
    _, boxes = summarise(engine_table, BOX_CASES)
    for level, values in BOX_CASES.items():
        box = boxes[level]
        # reference: matplotlib.cbook.boxplot_stats(x, whis=1.5) (Tukey 1977 whiskers,
        # McGill, Tukey & Larsen 1978 notches).
        (reference,) = cbook.boxplot_stats(values, whis=1.5)
        tolerance = 8 * EPS * float(np.max(np.abs(values)))
        assert box.n == len(values)
        for field, key in [
            ("q1", "q1"),
            ("median", "med"),
            ("q3", "q3"),
            ("mean", "mean"),
            ("notch_low", "cilo"),
            ("notch_high", "cihi"),
        ]:
            assert_within(getattr(box, field), float(reference[key]), tolerance)
        # Whiskers are data values (or the clamped box edge): they must agree exactly.
        assert box.whisker_low == float(reference["whislo"])
        assert box.whisker_high == float(reference["whishi"])
        assert_listed_outliers(box, np.asarray(reference["fliers"], dtype=float))


def assert_listed_outliers(box: BoxStats, fliers: np.ndarray) -> None:
    """Count equals matplotlib's fliers; the list holds the farthest ones from the median."""
    assert box.outlier_count == len(fliers)  # reference: len(boxplot_stats(...)["fliers"])
    assert len(box.outliers) == min(len(fliers), MAX_LISTED_OUTLIERS)
    # Every listed value is one of matplotlib's fliers (as a multiset).
    remaining = list(fliers)
    for value in box.outliers:
        assert value in remaining, value
        remaining.remove(value)
    # Farthest first, and no unlisted flier is farther than a listed one (DESIGN.md:
    # "the most extreme outliers per group"). Distances, not values, so ties may go either way.
    listed = [abs(value - box.median) for value in box.outliers]
    assert listed == sorted(listed, reverse=True)
    farthest = sorted((abs(value - box.median) for value in fliers), reverse=True)
    assert listed == farthest[: len(listed)]


# ---------------------------------------------------------------- 3. mean, sd, interval


@pytest.mark.parametrize("confidence", [0.9, 0.95, 0.99])
def test_mean_sd_and_t_interval_match_scipy(engine_table, confidence):
    rng = np.random.default_rng(31)
    parts = {
        "small": np.array([2.0, 4.0, 4.0, 5.0]),
        "normal": rng.normal(-3.0, 2.0, 57),
        "skewed": rng.exponential(5.0, 400),
    }
    summaries, _ = summarise(engine_table, parts, confidence)
    for level, values in parts.items():
        summary = summaries[level]
        n = len(values)
        assert summary.mean == pytest.approx(np.mean(values), rel=1e-13)  # reference: numpy.mean
        # reference: numpy.std(ddof=1)
        assert summary.sd == pytest.approx(np.std(values, ddof=1), rel=1e-13)
        # reference: scipy.stats.t.interval with scale scipy.stats.sem (Student t, n - 1 df)
        low, high = scipy.stats.t.interval(
            confidence, n - 1, loc=np.mean(values), scale=scipy.stats.sem(values)
        )
        assert summary.ci_low == pytest.approx(low, rel=1e-12, abs=1e-12)
        assert summary.ci_high == pytest.approx(high, rel=1e-12, abs=1e-12)


# ---------------------------------------------------------------- 5. Palmer penguins


def test_penguin_body_mass_matches_pandas_groupby(engine_table):
    penguins = load_penguins()
    frame = pd.DataFrame(
        {"level": penguins["species"].astype(object), "y": penguins["body_mass_g"].astype(float)}
    )
    summaries, boxes = summarise_levels(engine_table(frame), 0.95)
    by_level = {s.level: s for s in summaries}
    grouped = penguins.groupby("species")["body_mass_g"]
    assert sorted(by_level) == sorted(grouped.groups)
    for species, masses in grouped:
        summary = by_level[species]
        present = masses.dropna().to_numpy()
        # reference: pandas groupby size / count / isna; missing body masses count as missing.
        assert summary.rows == len(masses)
        assert summary.n == masses.count()
        assert summary.missing == masses.isna().sum()
        assert summary.mean == pytest.approx(masses.mean(), rel=1e-13)  # reference: pandas mean
        assert summary.sd == pytest.approx(
            masses.std(), rel=1e-13
        )  # reference: pandas std (ddof=1)
        for field, q in [("min", 0.0), ("q1", 0.25), ("median", 0.5), ("q3", 0.75), ("max", 1.0)]:
            # reference: pandas quantile (default interpolation "linear", type 7)
            assert getattr(summary, field) == pytest.approx(masses.quantile(q), rel=1e-14)
        # reference: scipy.stats.t.interval(0.95, n - 1, mean, scipy.stats.sem)
        low, high = scipy.stats.t.interval(
            0.95, len(present) - 1, loc=present.mean(), scale=scipy.stats.sem(present)
        )
        assert (summary.ci_low, summary.ci_high) == pytest.approx((low, high), rel=1e-13)
    # Adelie and Gentoo each have one penguin without a body mass (palmerpenguins data).
    assert {s.level: s.missing for s in summaries} == {"Adelie": 1, "Chinstrap": 0, "Gentoo": 1}
    assert [b.level for b in boxes] == sorted(grouped.groups)


# ---------------------------------------------------------------- 6. hard inputs


@pytest.mark.parametrize("offset", [1e12, 1e9])
def test_large_offset_tiny_spread_keeps_digits(engine_table, offset):
    values = offset + np.random.default_rng(61).normal(0.0, 0.1, 2000)
    summaries, _ = summarise(engine_table, {"hard": values})
    summary = summaries["hard"]
    mean, variance = exact_mean_sd(values)  # reference: exact rational arithmetic on the floats
    exact_sd = math.sqrt(float(variance))
    # The data is hard: the textbook Σx² − n·x̄² in doubles is far off.
    naive = float(np.sum(values * values)) - len(values) * float(np.mean(values)) ** 2
    assert abs(naive / (len(values) - 1) - float(variance)) > 1e-3 * float(variance)
    # Mean: one rounding of a value near the offset, so a couple of ulps at most.
    assert_within(summary.mean, float(mean), 2 * math.ulp(float(mean)))
    # Sd: required ~1e-9 relative (brief); theory for median-shifted sums gives ~n·eps.
    assert summary.sd == pytest.approx(exact_sd, rel=1e-10)
    # reference: numpy.percentile type 7 on the same floats (values near the offset).
    for field, q in [("q1", 25), ("median", 50), ("q3", 75)]:
        assert_within(
            getattr(summary, field), float(np.percentile(values, q)), 4 * math.ulp(offset)
        )


def test_single_row_constant_and_all_missing_levels(engine_table):
    parts = {
        "single": np.array([3.0]),
        "constant": np.full(5, 7.25),
        "all_missing": np.full(3, np.nan),
        "some_missing": np.array([1.0, np.nan, 3.0, np.nan, 8.0]),
    }
    summaries, boxes = summarise(engine_table, parts)

    single = summaries["single"]
    # reference: numpy.std(ddof=1) is undefined (nan) for one value; the brief shows no sd.
    assert (single.n, single.rows, single.missing) == (1, 1, 0)
    assert single.mean == 3.0 and single.sd is None
    assert single.ci_low is None and single.ci_high is None
    # reference: matplotlib.cbook.boxplot_stats([3.0]): everything collapses to the value.
    (one,) = cbook.boxplot_stats(parts["single"], whis=1.5)
    assert (boxes["single"].whisker_low, boxes["single"].whisker_high) == (
        one["whislo"],
        one["whishi"],
    )
    assert (boxes["single"].notch_low, boxes["single"].notch_high) == (one["cilo"], one["cihi"])

    constant = summaries["constant"]
    assert constant.sd == float(np.std(parts["constant"], ddof=1)) == 0.0  # reference: numpy.std
    # A zero sd gives a zero-width interval: t·0/√n (scipy's t.interval rejects scale 0).
    assert (constant.ci_low, constant.ci_high) == (7.25, 7.25)

    empty = summaries["all_missing"]
    # reference: pandas Series.count / isna on the same values.
    assert (empty.rows, empty.n, empty.missing) == (3, 0, 3)
    assert empty.mean is None and empty.sd is None and empty.median is None
    assert empty.ci_low is None and empty.min is None and empty.max is None
    assert "all_missing" not in boxes

    partial = summaries["some_missing"]
    series = pd.Series(parts["some_missing"])
    assert (partial.rows, partial.n, partial.missing) == (5, series.count(), series.isna().sum())
    assert partial.mean == pytest.approx(series.mean())  # reference: pandas mean skips NaN
    assert partial.median == series.median()  # reference: pandas median skips NaN
    assert boxes["some_missing"].n == 3


def test_order_argument_sets_level_order(engine_table):
    # reference: the documented contract of summarise_levels (given order, unknown levels skipped).
    parts = {"b": np.array([1.0, 2.0]), "a": np.array([3.0]), "c": np.array([4.0, 5.0])}
    summaries, boxes = summarise_levels(
        engine_table(long_table(parts)), 0.95, order=["c", "x", "a", "b"]
    )
    assert [s.level for s in summaries] == ["c", "a", "b"]
    assert [b.level for b in boxes] == ["c", "a", "b"]
    default, _ = summarise_levels(engine_table(long_table(parts)), 0.95)
    assert [s.level for s in default] == ["a", "b", "c"]


# ---------------------------------------------------------------- 7. property test

LEVEL_SPECS = st.tuples(
    st.integers(min_value=1, max_value=200),  # rows in the level
    st.one_of(st.just(0.0), st.floats(min_value=-1e9, max_value=1e9)),  # offset
    st.floats(min_value=-6.0, max_value=6.0).map(lambda exponent: 10.0**exponent),  # scale
    st.sampled_from(["normal", "lognormal", "rounded"]),  # shape; "rounded" makes ties
    st.sampled_from([0.0, 0.0, 0.1, 0.5]),  # share of missing values
)


def draw_values(rng: np.random.Generator, spec: tuple) -> np.ndarray:
    rows, offset, scale, shape, missing_share = spec
    noise = rng.standard_normal(rows)
    if shape == "lognormal":
        noise = np.exp(1.5 * noise)
    elif shape == "rounded":
        noise = np.round(2 * noise)
    values = offset + scale * noise
    values[rng.random(rows) < missing_share] = np.nan
    return values


@settings(
    max_examples=30,
    deadline=None,
    # The engine_table factory writes a new file per call, so sharing it between examples is safe.
    suppress_health_check=[HealthCheck.function_scoped_fixture],
)
@given(specs=st.lists(LEVEL_SPECS, min_size=1, max_size=4), seed=st.integers(0, 2**32 - 1))
def test_summaries_match_references_on_random_data(engine_table, specs, seed):
    rng = np.random.default_rng(seed)
    parts = {f"level {i}": draw_values(rng, spec) for i, spec in enumerate(specs)}
    summaries, boxes = summarise(engine_table, parts)
    for level, values in parts.items():
        check_random_level(summaries[level], boxes.get(level), values)


def check_random_level(summary: Summary, box: BoxStats | None, values: np.ndarray) -> None:
    """Compare one level with pandas/numpy/scipy/matplotlib and exact arithmetic.

    Tolerances, with M = max|y|, R = max − min and n the count:
    - quantiles: both sides interpolate type 7 with one or two roundings: 4·eps·M.
    - mean: the engine adds the median to Σ(y − median)/n. The sum's rounding error is at
      most (n − 1)·eps·Σ|y − median| ≤ n²·eps·R (recursive summation bound, Higham 2002
      §4.2, from memory), so n·eps·R after dividing by n; the final addition rounds once:
      2·eps·|mean| + n·eps·R.
    - sd: the median-shifted sum of squares is at most twice the centred one (|mean − median|
      ≤ sd, Mallows 1991), so its relative error stays about 2n·eps ≤ 1e-13 for n ≤ 200;
      we allow 1e-12. numpy's own sd loses ~eps·M/sd relative (1e-1 for offset 1e9, scale
      1e-6), so the sd reference is exact rational arithmetic on the same floats.
    """
    series = pd.Series(values)
    present = values[~np.isnan(values)]
    # reference: pandas Series.size / count / isna.
    assert (summary.rows, summary.n, summary.missing) == (
        len(series),
        series.count(),
        series.isna().sum(),
    )
    if len(present) == 0:
        assert summary.mean is None and summary.sd is None and box is None
        return
    n = len(present)
    largest = float(np.max(np.abs(present)))
    spread = float(np.ptp(present))
    assert summary.min == float(np.min(present)) and summary.max == float(np.max(present))
    for field, q in [("q1", 25), ("median", 50), ("q3", 75)]:
        # reference: numpy.percentile(method="linear"), type 7.
        assert_within(getattr(summary, field), float(np.percentile(present, q)), 4 * EPS * largest)
    mean, variance = exact_mean_sd(present)  # reference: exact rational arithmetic
    mean_tolerance = 2 * EPS * abs(float(mean)) + n * EPS * spread
    assert_within(summary.mean, float(mean), mean_tolerance)
    # reference: pandas mean, whose own error is at most ~log2(n)·eps·M (pairwise sums).
    assert_within(summary.mean, float(series.mean()), mean_tolerance + 8 * EPS * largest)
    if n == 1:
        assert summary.sd is None and summary.ci_low is None
    else:
        exact_sd = math.sqrt(float(variance))
        assert summary.sd == pytest.approx(exact_sd, rel=1e-12, abs=1e-300)
        # reference: scipy.stats.t.interval(0.95, n − 1, loc=mean, scale=sd/√n) on exact moments.
        half = float(scipy.stats.t.ppf(0.975, n - 1)) * exact_sd / math.sqrt(n)
        interval_tolerance = mean_tolerance + 1e-12 * half + 2 * EPS * (abs(float(mean)) + half)
        assert_within(summary.ci_low, float(mean) - half, interval_tolerance)
        assert_within(summary.ci_high, float(mean) + half, interval_tolerance)
    check_random_box(box, present)


def check_random_box(box: BoxStats | None, present: np.ndarray) -> None:
    """Box against matplotlib, unless a value sits within rounding of a fence."""
    assert box is not None
    (reference,) = cbook.boxplot_stats(present, whis=1.5)  # reference: matplotlib boxplot_stats
    tolerance = 16 * EPS * float(np.max(np.abs(present)))
    assert_within(box.notch_low, float(reference["cilo"]), tolerance)
    assert_within(box.notch_high, float(reference["cihi"]), tolerance)
    reach = 1.5 * (reference["q3"] - reference["q1"])
    fences = np.array([reference["q1"] - reach, reference["q3"] + reach])
    # Quartiles may differ by an ulp between engine and numpy; a value that close to a fence
    # may then fall on either side, and both answers are right.
    if np.min(np.abs(present[:, None] - fences[None, :])) <= tolerance:
        return
    assert box.whisker_low == float(reference["whislo"])
    assert box.whisker_high == float(reference["whishi"])
    assert_listed_outliers(box, np.asarray(reference["fliers"], dtype=float))
