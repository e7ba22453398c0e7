"""The numbers behind the family of claims, against reference libraries.

* Holm's step-down adjustment: statsmodels ``multipletests(method="holm")``.
* Dunn's (1964) pairwise rank test: the formula on ``scipy.stats.rankdata`` ranks.
* The interaction F test: statsmodels' nested-model F (``anova_lm``) of
  ``y ~ C(a) * C(b)`` against ``y ~ C(a) + C(b)``, on the raw, log and rank scales.
* Slopes per a readable step: constructed cases (the rule is the project's own).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from scipy import stats as scipy_stats
from statsmodels.stats.anova import anova_lm
from statsmodels.stats.multitest import multipletests

from briefgen.numbers import fmt_step, readable_step
from briefgen.stats.interaction import interaction_test
from briefgen.stats.ranks import rank_test
from briefgen.stats.welch import holm


def test_holm_matches_statsmodels():
    p = [0.01, 0.04, 0.03, 0.005, 0.2, 0.04]
    expected = multipletests(p, method="holm")[1]
    assert holm(p) == pytest.approx(tuple(expected), rel=1e-12)


def _dunn_reference(frame: pd.DataFrame) -> dict:
    """Dunn (1964), eq. for z with the tie correction, on scipy's average ranks."""
    ranks = scipy_stats.rankdata(frame.y)
    n = len(ranks)
    _, counts = np.unique(frame.y, return_counts=True)
    ties = float(np.sum(counts**3 - counts))
    scale = n * (n + 1) / 12 - ties / (12 * (n - 1))
    levels = sorted(frame.level.unique())
    mean_rank = {lv: ranks[frame.level.to_numpy() == lv].mean() for lv in levels}
    size = {lv: int((frame.level == lv).sum()) for lv in levels}
    out = {}
    for i, a in enumerate(levels):
        for b in levels[i + 1 :]:
            z = (mean_rank[a] - mean_rank[b]) / math.sqrt(scale * (1 / size[a] + 1 / size[b]))
            out[(a, b)] = (z, 2 * scipy_stats.norm.sf(abs(z)))
    return out


def test_dunn_pairs_match_the_formula_on_scipy_ranks(engine_table):
    rng = np.random.default_rng(1)
    # Rounded values give many ties, which the correction must handle.
    frame = pd.DataFrame(
        {
            "level": np.repeat(["a", "b", "c", "d"], [30, 45, 25, 60]),
            "y": np.round(
                rng.gamma(2.0, 1.0, 160) + np.repeat([0, 0.3, 0.8, 0], [30, 45, 25, 60]), 1
            ),
        }
    )
    result = rank_test(engine_table(frame), ["a", "b", "c", "d"])
    reference = _dunn_reference(frame)
    assert len(result.pairwise) == 6
    raw = []
    for pair in result.pairwise:
        z, p = reference[(pair.level_a, pair.level_b)]
        assert pair.z == pytest.approx(z, rel=1e-10)
        assert pair.p_value == pytest.approx(p, rel=1e-8)
        raw.append(pair.p_value)
    assert [pair.p_holm for pair in result.pairwise] == pytest.approx(
        list(multipletests(raw, method="holm")[1]), rel=1e-12
    )


def _unbalanced_two_way(seed: int, skewed: bool) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    rows = []
    for a, b, n in [
        ("p", "x", 20),
        ("p", "y", 35),
        ("p", "z", 12),
        ("q", "x", 40),
        ("q", "y", 9),
        ("q", "z", 27),
    ]:
        base = (
            {"p": 1.0, "q": 1.4}[a]
            + {"x": 0.0, "y": 0.5, "z": 0.2}[b]
            + (0.6 if (a, b) == ("q", "z") else 0)
        )
        values = np.exp(base + rng.normal(0, 0.7, n)) if skewed else base + rng.normal(0, 1, n)
        rows += [(a, b, float(v)) for v in values]
    return pd.DataFrame(rows, columns=["a", "b", "y"])


def _statsmodels_interaction(frame: pd.DataFrame, column: str) -> tuple[float, float]:
    additive = smf.ols(f"{column} ~ C(a) + C(b)", frame).fit()
    full = smf.ols(f"{column} ~ C(a) * C(b)", frame).fit()
    table = anova_lm(additive, full)
    return float(table["F"].iloc[1]), float(table["Pr(>F)"].iloc[1])


@pytest.mark.parametrize("scale", ["mean", "log", "rank"])
def test_interaction_f_matches_statsmodels_nested_models(engine_table, scale):
    frame = _unbalanced_two_way(seed=6, skewed=scale != "mean")
    transforms = {"mean": lambda y: y, "log": np.log, "rank": scipy_stats.rankdata}
    reference = frame.assign(t=transforms[scale](frame.y))
    f, p = _statsmodels_interaction(reference, "t")
    result = interaction_test(engine_table(frame), "a", "b", scale)
    assert result.scale == scale
    assert result.df_interaction == 2 and result.df_within == len(frame) - 6
    assert result.f_statistic == pytest.approx(f, rel=1e-9)
    assert result.p_value == pytest.approx(p, rel=1e-7)


def test_interaction_needs_a_degree_of_freedom(engine_table):
    frame = pd.DataFrame({"a": ["p"] * 10 + ["q"] * 10, "b": ["x"] * 20, "y": np.arange(20.0)})
    result = interaction_test(engine_table(frame), "a", "b")
    assert result.p_value is None and result.f_statistic is None


@pytest.mark.parametrize(
    ("slope", "spread", "step"),
    [
        (2.5, 10.0, 1.0),  # already readable per unit
        (0.00768, 5000.0, 1000.0),  # per 1,000
        (0.0266, 40.0, 10.0),  # capped by the range: 100 would pass every observed value
        (35.0, 0.6, 0.1),  # a predictor spanning less than 1 steps by 0.1
        (-0.3, 300.0, 10.0),
    ],
)
def test_readable_step(slope, spread, step):
    assert readable_step(slope, spread) == pytest.approx(step)


def test_step_names():
    assert fmt_step(1.0) == "unit"
    assert fmt_step(1000.0) == "1,000"
    assert fmt_step(0.1) == "0.1"


def test_each_variable_given_the_other_matches_statsmodels_type_2(engine_table):
    # statsmodels anova_lm(typ=2) on the additive model: each factor given the other.
    frame = _unbalanced_two_way(seed=9, skewed=False)
    table = anova_lm(smf.ols("y ~ C(a) + C(b)", frame).fit(), typ=2)
    result = interaction_test(engine_table(frame), "a", "b")
    for adjusted, factor in ((result.row_given_column, "C(a)"), (result.column_given_row, "C(b)")):
        assert adjusted.f_statistic == pytest.approx(table.loc[factor, "F"], rel=1e-9)
        assert adjusted.p_value == pytest.approx(table.loc[factor, "PR(>F)"], rel=1e-7)
        assert adjusted.df_effect == table.loc[factor, "df"]


def test_a_confounded_design_still_tests_each_variable_given_the_other(engine_table):
    # Like islands and species: level q of b occurs only with level y of a, so the
    # interaction has no degree of freedom, yet a given b is estimable within b = p.
    rng = np.random.default_rng(3)
    rows = [("x", "p", 40), ("y", "p", 40), ("y", "q", 60)]
    frame = pd.DataFrame(
        [(a, b, {"p": 1.0, "q": 5.0}[b] + rng.normal()) for a, b, n in rows for _ in range(n)],
        columns=["a", "b", "y"],
    )
    result = interaction_test(engine_table(frame), "a", "b")
    assert result.p_value is None
    table = anova_lm(smf.ols("y ~ C(a) + C(b)", frame).fit(), typ=2)
    assert result.row_given_column.f_statistic == pytest.approx(table.loc["C(a)", "F"], rel=1e-9)
    # Most of a's raw difference is b's: little of it is kept once b is allowed for.
    assert result.row_given_column.kept < 0.1
