"""Shares and their comparison: Wilson, Newcombe, the z and chi-square tests, Holm.

References: statsmodels (proportion_confint, confint_proportions_2indep,
proportions_ztest, multipletests), scipy.stats.chi2_contingency, and the worked
examples in Newcombe (1998) Tables I and II (from memory; each value also agrees
with statsmodels to the four decimals the paper prints).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy.stats import chi2_contingency
from statsmodels.stats.multitest import multipletests
from statsmodels.stats.proportion import (
    confint_proportions_2indep,
    proportion_confint,
    proportions_ztest,
)

from briefgen.stats.proportions import (
    chi_square_homogeneity,
    compare_shares,
    level_shares,
    newcombe_interval,
    share_of,
    two_proportion_z,
    wilson_interval,
)

# Newcombe (1998a), Statistics in Medicine 17:857–872, Table I, method 3 (Wilson score,
# no continuity correction), from memory.
NEWCOMBE_TABLE_I = [
    ((81, 263), (0.2553, 0.3662)),
    ((15, 148), (0.0624, 0.1605)),
    ((0, 20), (0.0000, 0.1611)),
    ((1, 29), (0.0061, 0.1718)),
]

# Newcombe (1998b), Statistics in Medicine 17:873–890, Table II, method 10 (hybrid score),
# from memory: (events_a, n_a, events_b, n_b) ─► interval of share_a − share_b.
NEWCOMBE_TABLE_II = [
    ((56, 70, 48, 80), (0.0524, 0.3339)),
    ((9, 10, 3, 10), (0.1705, 0.8090)),
    ((5, 56, 0, 29), (-0.0381, 0.1926)),
    ((0, 10, 0, 20), (-0.1611, 0.2775)),
    ((10, 10, 0, 20), (0.6791, 1.0000)),
]


@pytest.mark.parametrize(("counts", "expected"), NEWCOMBE_TABLE_I)
def test_wilson_matches_newcombe_table_i(counts, expected):
    low, high = wilson_interval(*counts, 0.95)
    assert low == pytest.approx(expected[0], abs=5e-5)
    assert high == pytest.approx(expected[1], abs=5e-5)


@pytest.mark.parametrize(("counts", "expected"), NEWCOMBE_TABLE_II)
def test_newcombe_difference_matches_table_ii(counts, expected):
    _, low, high = newcombe_interval(*counts, 0.95)
    assert low == pytest.approx(expected[0], abs=5e-5)
    assert high == pytest.approx(expected[1], abs=5e-5)


@given(
    st.integers(1, 5000).flatmap(lambda n: st.tuples(st.integers(0, n), st.just(n))),
    st.sampled_from([0.8, 0.9, 0.95, 0.99]),
)
def test_wilson_matches_statsmodels(counts, confidence):
    events, n = counts
    # statsmodels.stats.proportion.proportion_confint(method="wilson") is the reference.
    expected = proportion_confint(events, n, alpha=1 - confidence, method="wilson")
    low, high = wilson_interval(events, n, confidence)
    assert low == pytest.approx(expected[0], abs=1e-12)
    assert high == pytest.approx(expected[1], abs=1e-12)
    assert 0.0 <= low <= events / n <= high <= 1.0


@given(
    st.integers(1, 400).flatmap(lambda n: st.tuples(st.integers(0, n), st.just(n))),
    st.integers(1, 400).flatmap(lambda n: st.tuples(st.integers(0, n), st.just(n))),
    st.sampled_from([0.9, 0.95, 0.99]),
)
def test_newcombe_matches_statsmodels(a, b, confidence):
    # statsmodels confint_proportions_2indep(method="newcomb", compare="diff") is the reference.
    expected = confint_proportions_2indep(
        a[0], a[1], b[0], b[1], method="newcomb", compare="diff", alpha=1 - confidence
    )
    difference, low, high = newcombe_interval(a[0], a[1], b[0], b[1], confidence)
    assert low == pytest.approx(float(expected[0]), abs=1e-12)
    assert high == pytest.approx(float(expected[1]), abs=1e-12)
    assert low <= difference <= high


@pytest.mark.parametrize("counts", [(56, 70, 48, 80), (9, 10, 3, 10), (120, 1000, 150, 1000)])
def test_two_proportion_z_matches_statsmodels_and_chi_square(counts):
    a, n_a, b, n_b = counts
    z, p = two_proportion_z(a, n_a, b, n_b)
    # statsmodels proportions_ztest pools the two shares under the null, as we do.
    expected_z, expected_p = proportions_ztest([a, b], [n_a, n_b])
    assert z == pytest.approx(expected_z, rel=1e-12)
    assert p == pytest.approx(expected_p, rel=1e-10)
    # z² is Pearson's chi-square on the 2 × 2 table without Yates's correction.
    chi2, chi_p, _, _ = chi2_contingency([[a, n_a - a], [b, n_b - b]], correction=False)
    assert z * z == pytest.approx(chi2, rel=1e-10)
    assert p == pytest.approx(chi_p, rel=1e-8)


def test_chi_square_homogeneity_matches_scipy():
    rng = np.random.default_rng(1998)
    n = rng.integers(20, 400, size=5)
    events = rng.binomial(n, [0.1, 0.15, 0.2, 0.12, 0.3])
    shares = [
        share_of(f"l{i}", int(e), int(m), 0.95)
        for i, (e, m) in enumerate(zip(events, n, strict=True))
    ]
    statistic, df, p = chi_square_homogeneity(shares)
    # scipy.stats.chi2_contingency on the k × 2 table (no correction applies beyond 2 × 2).
    expected = chi2_contingency(np.column_stack([events, n - events]))
    assert statistic == pytest.approx(expected[0], rel=1e-12)
    assert df == expected[2]
    assert p == pytest.approx(expected[1], rel=1e-9)


def test_pairwise_holm_matches_statsmodels():
    shares = [
        share_of(level, e, n, 0.95)
        for level, e, n in [("a", 30, 100), ("b", 18, 90), ("c", 9, 110), ("d", 25, 95)]
    ]
    comparison = compare_shares(shares, 0.95, variable="v")
    assert comparison.test == "chi_square" and comparison.df == 3
    raw = [pair.p_value for pair in comparison.pairwise]
    # statsmodels multipletests(method="holm") is the reference for the step-down adjustment.
    expected = multipletests(raw, method="holm")[1]
    assert [pair.p_holm for pair in comparison.pairwise] == pytest.approx(list(expected), rel=1e-12)


def test_two_levels_use_the_z_test_and_every_value_the_same_is_not_tested():
    two = compare_shares([share_of("a", 56, 70, 0.95), share_of("b", 48, 80, 0.95)], 0.95)
    assert two.test == "two_proportion_z" and two.df is None
    assert two.statistic == pytest.approx(two.pairwise[0].z)
    flat = compare_shares([share_of("a", 0, 70, 0.95), share_of("b", 0, 80, 0.95)], 0.95)
    assert flat.p_value is None and "every value is 0" in flat.undefined_reason


def test_level_shares_count_in_the_engine(engine_table):
    rng = np.random.default_rng(27)
    frame = pd.DataFrame({"level": rng.choice(["x", "y"], 500), "y": rng.integers(0, 2, 500)})
    frame.loc[::17, "y"] = None
    shares = level_shares(engine_table(frame), 1.0, 0.95)
    for level, share in shares.items():
        values = frame.loc[frame.level == level, "y"].dropna()
        # numpy counts on the same rows are the reference.
        assert share.n == len(values) and share.events == int((values == 1).sum())
        assert (share.ci_low, share.ci_high) == pytest.approx(
            proportion_confint(share.events, share.n, method="wilson")
        )
