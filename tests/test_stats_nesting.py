"""Nested group pairs (every level of one within a single level of the other) are not crossed.

The open case is statsmodels' ``statecrime`` data (51 states and the District of
Columbia, 2009), grouped by the US Census Bureau's regions and divisions, where
every division lies within one region by definition. Constructed cases check the
boundary: crossed pairs, and a pair with one level spanning two, keep their table.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from census import CENSUS_DIVISIONS, REGION_OF
from constructed import brief_for, findings_by_key
from scipy import stats as scipy_stats
from statsmodels.stats.anova import anova_lm

from briefgen.config import load_spec
from briefgen.present.family import family_sentence
from briefgen.render import render_json
from briefgen.stats.twoway import nesting

PREDICTORS = ["poverty", "hs_grad", "single", "white", "urban"]


@pytest.fixture(scope="module")
def statecrime() -> pd.DataFrame:
    """statsmodels' statecrime with each state's census division and region added."""
    data = pytest.importorskip("statsmodels.datasets.statecrime").load_pandas().data
    frame = data.reset_index()
    frame["state"] = frame["state"].str.strip()  # "Kansas ", "Kentucky ", "Montana "
    division_of = {s: d for d, states in CENSUS_DIVISIONS.items() for s in states}
    assert set(frame["state"]) == set(division_of)  # every row placed, none invented
    frame["division"] = frame["state"].map(division_of)
    frame["region"] = frame["division"].map(REGION_OF)
    return frame[["violent", "region", "division", *PREDICTORS]]


@pytest.fixture(scope="module")
def statecrime_brief(statecrime, tmp_path_factory):
    folder = tmp_path_factory.mktemp("statecrime")
    config = {"target": "violent", "groups": ["region", "division"], "predictors": PREDICTORS}
    stats, doc = brief_for(statecrime, folder, **config)
    return stats, doc, load_spec(folder / "brief.yaml")


def _sentences(doc) -> list[str]:
    """Every sentence-bearing string the brief shows: findings, notes and cautions."""
    texts = [t for f in doc.findings for t in (f.headline, f.text, f.certainty, f.detail)]
    return texts + list(doc.method) + list(doc.cautions)


def test_statecrime_division_is_found_nested_in_region(statecrime_brief, statecrime):
    stats, _, _ = statecrime_brief
    (nested,) = stats.nestings
    assert (nested.inner, nested.outer) == ("division", "region")
    assert (nested.row_variable, nested.column_variable) == ("region", "division")
    assert {lv.level: lv.within for lv in nested.levels} == REGION_OF  # the Census map
    # Sizes against pandas: 9 divisions of 3 to 9 states, 51 rows in all.
    sizes = statecrime.groupby("division")["violent"].count().to_dict()
    assert {lv.level: lv.n for lv in nested.levels} == sizes
    assert sum(sizes.values()) == 51


def test_statecrime_has_no_region_by_division_table_or_interaction(statecrime_brief):
    stats, doc, _ = statecrime_brief
    assert stats.crosses == ()
    assert not [s.key for s in doc.sections if s.key.startswith("cross-")]
    assert not [t.key for t in doc.appendix if "cross" in t.key]
    assert not [f.key for f in doc.findings if f.kind == "cross"]
    assert not [a for a in stats.accounting.used if a.startswith("cross:")]


def test_statecrime_family_counts_only_the_questions_it_asks(statecrime_brief):
    stats, doc, _ = statecrime_brief
    family = doc.family
    # Two group comparisons and five directions; a nested pair adds no interaction:
    # the table would have one cell per division, so the additive model fits it exactly.
    assert [q.key for q in family.questions] == [
        "group-region",
        "group-division",
        *[f"fit-{p}" for p in PREDICTORS],
    ]
    assert family.size == 7
    assert "tests 7 questions" in family_sentence(family)


def test_statecrime_division_verdict_matches_scipy(statecrime_brief, statecrime):
    _, doc, _ = statecrime_brief
    question = doc.family.question("group-division")
    # The division verdict is Kruskal–Wallis (the target is strongly skewed); scipy agrees.
    assert question.test == "kruskal_wallis"
    reference = scipy_stats.kruskal(*[g["violent"] for _, g in statecrime.groupby("division")])
    assert question.p_value == pytest.approx(reference.pvalue, rel=1e-9)


def test_statecrime_never_calls_region_a_confounder_of_division(statecrime_brief):
    _, doc, _ = statecrime_brief
    division = findings_by_key(doc)["group-division"]
    for text in (division.headline, division.text, division.certainty, division.detail):
        assert "confounder" not in text and "explained by" not in text
    for sentence in _sentences(doc):
        # Region may still be named a confounder of a predictor's slope, never of division.
        assert not ("confounder" in sentence and "division" in sentence), sentence


def test_statecrime_division_says_once_that_it_lies_within_region(statecrime_brief):
    _, doc, _ = statecrime_brief
    said = "Each level of division lies within one level of region"
    assert sum(sentence.count(said) for sentence in _sentences(doc)) == 1
    division = findings_by_key(doc)["group-division"]
    assert said in division.certainty  # on page 1 with the claim, and in its section
    assert "the differences by division include the differences by region" in division.certainty
    assert said not in findings_by_key(doc)["group-region"].certainty
    assert any("nested in region" in note and "no table" in note for note in doc.method)


def test_statecrime_stats_json_records_the_nesting(statecrime_brief):
    stats, doc, spec = statecrime_brief
    payload = json.loads(render_json(stats, spec, "2026-12-03", doc.findings, doc.family))
    (nested,) = payload["stats"]["nestings"]
    assert nested["inner"] == "division" and nested["outer"] == "region"
    assert {lv["level"]: lv["within"] for lv in nested["levels"]} == REGION_OF
    assert payload["stats"]["crosses"] == []


def test_missing_levels_do_not_hide_the_nesting(statecrime, tmp_path):
    frame = statecrime.copy()
    frame.loc[[0, 1, 2], "region"] = None  # Alabama, Alaska, Arizona: no region
    frame.loc[[3, 4], "division"] = None  # Arkansas, California: no division
    stats, _ = brief_for(frame, tmp_path, target="violent", groups=["division", "region"])
    (nested,) = stats.nestings
    assert (nested.inner, nested.outer) == ("division", "region")
    assert sum(lv.n for lv in nested.levels) == 46  # rows with both levels
    assert stats.crosses == ()


# Constructed cases: invented data.


def _frame(pairs: list[tuple[str, str]], n: int, seed: int) -> pd.DataFrame:
    """``n`` normal rows for every (a, b) pair, with a mean that depends on both."""
    rng = np.random.default_rng(seed)
    rows = []
    for i, (a, b) in enumerate(pairs):
        for value in rng.normal(10.0 + i % 3, 1.0, n):
            rows.append((a, b, value))
    return pd.DataFrame(rows, columns=["shop", "zone", "sales"])


def test_a_crossed_pair_keeps_its_table_and_interaction(tmp_path):
    # Six shops, each under two of three zones: crossed, not nested.
    zones = ["z0", "z1", "z2"]
    pairs = [(f"s{i}", zones[(i + k) % 3]) for i in range(6) for k in (0, 1)]
    frame = _frame(pairs, 15, seed=11)
    stats, doc = brief_for(frame, tmp_path, target="sales", groups=["shop", "zone"])
    assert stats.nestings == ()
    (cross,) = stats.crosses
    assert len(cross.cells) == 12
    # The table's cells against pandas, and its interaction F against statsmodels: the
    # cell-means model against the additive one.
    reference = frame.groupby(["shop", "zone"])["sales"].agg(["count", "mean"])
    for cell in cross.cells:
        assert cell.n == reference.loc[(cell.row, cell.column), "count"]
        assert cell.mean == pytest.approx(reference.loc[(cell.row, cell.column), "mean"])
    frame["cell"] = frame["shop"] + "·" + frame["zone"]
    additive = smf.ols("sales ~ C(shop) + C(zone)", frame).fit()
    full = smf.ols("sales ~ C(cell)", frame).fit()
    table = anova_lm(additive, full)
    assert cross.interaction.scale == "mean"
    assert cross.interaction.df_interaction == 4  # 12 cells − (6 + 3 − 1)
    assert cross.interaction.p_value == pytest.approx(table["Pr(>F)"].iloc[1], rel=1e-9)
    assert doc.family.question(cross.key) is not None
    assert [s.key for s in doc.sections if s.key == cross.key] == [cross.key]
    assert not any("lies within one level" in s for s in _sentences(doc))


def test_one_level_spanning_two_is_not_nested(tmp_path):
    # Shops s0–s4 each within one zone, s5 in two: not nested, so the table stays.
    pairs = [("s0", "z0"), ("s1", "z0"), ("s2", "z1"), ("s3", "z1"), ("s4", "z2")]
    pairs += [("s5", "z2"), ("s5", "z0")]
    stats, doc = brief_for(
        _frame(pairs, 12, seed=5), tmp_path, target="sales", groups=["shop", "zone"]
    )
    assert stats.nestings == ()
    (cross,) = stats.crosses
    assert {(c.row, c.column) for c in cross.cells} == set(pairs)
    assert not any("lies within one level" in s for s in _sentences(doc))


@pytest.mark.parametrize(
    ("counts", "expected"),
    [
        # Column nested in row (divisions listed as columns, regions as rows).
        ({("r1", "a"): 3, ("r1", "b"): 2, ("r2", "c"): 4}, ("column", "row")),
        # Row nested in column.
        ({("a", "r1"): 3, ("b", "r1"): 2, ("c", "r2"): 4}, ("row", "column")),
        # A cell with no target value is not a place the level lies.
        ({("a", "r1"): 3, ("a", "r2"): 0, ("b", "r1"): 2, ("c", "r2"): 4}, ("row", "column")),
        # One level in two: crossed.
        ({("a", "r1"): 3, ("a", "r2"): 1, ("b", "r1"): 2, ("c", "r2"): 4}, None),
        # One-to-one relabelling: neither has fewer levels.
        ({("a", "r1"): 3, ("b", "r2"): 2}, None),
        # A single outer level: nothing for the inner to lie within apart.
        ({("a", "r1"): 3, ("b", "r1"): 2}, None),
    ],
)
def test_nesting_from_cell_counts(counts, expected):
    found = nesting(counts, "row", "column")
    assert (None if found is None else (found.inner, found.outer)) == expected


def test_a_level_within_the_outer_fold_is_not_called_nested():
    # "Other (2 levels)" may hold two real zones, so s1 and s2 need not lie within one.
    counts = {("s0", "z0"): 5, ("s1", "Other (2 levels)"): 5, ("s2", "Other (2 levels)"): 5}
    assert nesting(counts, "shop", "zone", folds=(None, "Other (2 levels)")) is None
    # An inner fold lying within one real outer level is nested: all its levels lie there.
    counts = {("s0", "z0"): 5, ("Other (3 levels)", "z0"): 5, ("s2", "z1"): 5}
    found = nesting(counts, "shop", "zone", folds=("Other (3 levels)", None))
    assert found is not None and found.inner == "shop"
