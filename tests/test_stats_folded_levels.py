"""With more than max_levels levels, every test of a group variable covers the shown levels.

Constructed case (invented, seeded): 10 levels of skewed values, the three smallest
far above the rest, so leaving "Other" out of a test changes its answer. References:
scipy.stats.kruskal and scipy.stats.skew on the folded data, statsmodels'
anova_oneway (Welch 1951, use_var="unequal") and scipy's Welch t-test for a pair.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats as scipy_stats
from statsmodels.stats.oneway import anova_oneway

from briefgen.config import parse_spec
from briefgen.source import open_source
from briefgen.stats import compute


@pytest.fixture(scope="module")
def folded_case(tmp_path_factory):
    rng = np.random.default_rng(20261202)
    frames = []
    for i in range(10):
        size = 60 - 4 * i
        shift = 3.0 if i >= 7 else 0.0  # the smallest levels differ: folding must keep them
        values = shift + rng.lognormal(0.0, 1.0, size)
        frames.append(pd.DataFrame({"site": f"site {i:02d}", "y": values}))
    frame = pd.concat(frames, ignore_index=True)
    folder = tmp_path_factory.mktemp("folded")
    frame.to_parquet(folder / "data.parquet", index=False)
    spec = parse_spec(
        "title: Folded\ndata:\n  path: data.parquet\ntarget: y\ngroups: [site]\nmax_levels: 8\n",
        folder / "brief.yaml",
    )
    stats = compute(open_source(spec), spec)
    shown = stats.groups[0].shown
    folded = frame.assign(site=frame.site.where(frame.site.isin(shown.kept), shown.other_label))
    return stats, folded


def test_other_holds_the_folded_rows(folded_case):
    stats, folded = folded_case
    group = stats.groups[0]
    assert group.shown.other_label == "Other (3 levels)"
    assert [s.level for s in group.summaries][-1] == "Other (3 levels)"
    assert sum(s.n for s in group.summaries) == len(folded)
    assert group.comparison.levels[-1] == "Other (3 levels)"


def test_rank_test_covers_other(folded_case):
    stats, folded = folded_case
    comparison = stats.groups[0].comparison
    assert comparison.rank_test is not None and comparison.rank_test.test == "kruskal_wallis"
    samples = [g.y.to_numpy() for _, g in folded.groupby("site")]
    # Reference: scipy.stats.kruskal (tie-corrected H, chi-square on k − 1 df).
    h, p = scipy_stats.kruskal(*samples)
    assert comparison.rank_test.statistic == pytest.approx(h, rel=1e-9)
    assert comparison.rank_test.p_value == pytest.approx(p, rel=1e-7)


def test_skewness_covers_other(folded_case):
    stats, folded = folded_case
    residuals = folded.y - folded.groupby("site").y.transform("mean")
    # Reference: scipy.stats.skew(bias=True), g1 of the residuals from the level means.
    assert stats.groups[0].comparison.skewness == pytest.approx(
        scipy_stats.skew(residuals, bias=True), rel=1e-9
    )


def test_welch_tests_cover_other(folded_case):
    stats, folded = folded_case
    comparison = stats.groups[0].comparison
    samples = [g.y.to_numpy() for _, g in folded.groupby("site")]
    # Reference: statsmodels anova_oneway, Welch's (1951) ANOVA for unequal variances.
    welch = anova_oneway(samples, use_var="unequal", welch_correction=True)
    assert comparison.statistic == pytest.approx(welch.statistic, rel=1e-9)
    assert comparison.p_value == pytest.approx(welch.pvalue, rel=1e-7)
    other = folded[folded.site == "Other (3 levels)"].y
    first = folded[folded.site == comparison.levels[0]].y
    pair = next(
        p
        for p in comparison.pairwise
        if {p.level_a, p.level_b} == {comparison.levels[0], "Other (3 levels)"}
    )
    # Reference: scipy.stats.ttest_ind(equal_var=False), Welch's t-test.
    expected = scipy_stats.ttest_ind(first, other, equal_var=False)
    assert pair.p_value == pytest.approx(expected.pvalue, rel=1e-7)
