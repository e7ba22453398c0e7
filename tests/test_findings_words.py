"""Sentences of the brief that must say each thing once, name things as the reader knows them,
and never round a real effect to nothing.

Reference data: statsmodels.datasets (statecrime, randhie), shipped offline with statsmodels;
reference values from pandas on those frames.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from census import CENSUS_DIVISIONS
from constructed import brief_for, findings_by_key

from briefgen.figures.distribution import _cut, _limits, _past_edges, distribution_chart
from briefgen.numbers import fmt_share
from briefgen.stats.core.summary import BoxStats


def _statecrime():
    # statsmodels.datasets.statecrime: 2009 violent crime per 100,000 for the 50 states and DC.
    return sm.datasets.statecrime.load_pandas().data.reset_index()


def test_overall_section_states_the_mean_once_and_leaves_no_it_to_guess(tmp_path):
    frame = _statecrime()
    # pandas: median 366.4, mean 411.48, sd 208.0; mean − median = 45.1 > 0.2 × sd = 41.6,
    # so the brief says why the mean sits above the median.
    assert frame.violent.mean() - frame.violent.median() > 0.2 * frame.violent.std()
    _, doc = brief_for(frame, tmp_path, target="violent")
    finding = findings_by_key(doc)["overall"]
    page2 = f"{finding.text} {finding.certainty}"
    assert page2.count("The mean is 411") == 1
    assert " it " not in f" {page2} " and " it;" not in page2
    assert "pull the mean up" in finding.certainty
    assert "typical violent is 366 (median)" in finding.text


def _randhie():
    # statsmodels.datasets.randhie: RAND Health Insurance Experiment, 20,190 person-years.
    return sm.datasets.randhie.load_pandas().data


def test_fmt_share_never_rounds_a_real_share_to_nothing_or_to_all():
    # Constructed cases: the rule is the brief's own (a share that is not 0 never prints "0%").
    assert fmt_share(0.0049) == "under 1%"
    assert fmt_share(0.0049, 1) == "0.5%"
    assert fmt_share(0.0004, 1) == "under 0.1%"
    assert fmt_share(0.0) == "0%"
    assert fmt_share(0.006) == "1%"
    assert fmt_share(0.996) == "over 99%"
    assert fmt_share(1.0) == "100%"
    assert fmt_share(None) == "–"


def test_a_clear_slope_with_tiny_r_squared_says_under_one_percent(tmp_path):
    frame = _randhie()
    # numpy: r(lncoins, mdvis)² = 0.0049 (rounds to 0%), yet the slope's p is far below 0.001
    # with 20,190 rows, so the brief calls the relationship clear.
    r2 = np.corrcoef(frame.lncoins, frame.mdvis)[0, 1] ** 2
    assert 0 < r2 < 0.005
    _, doc = brief_for(
        frame[["mdvis", "lncoins"]], tmp_path, target="mdvis", predictors=["lncoins"]
    )
    finding = next(f for f in doc.findings if "lncoins" in f.key)
    assert "accounts for under 1% of the variation" in finding.text
    assert "accounts for 0%" not in finding.text


RANDHIE_LABELS = {"idp": "Individual deductible plan", "lncoins": "log(coinsurance+1)"}


def test_configured_labels_name_columns_except_where_the_reader_types_them(tmp_path):
    frame = _randhie()[["mdvis", "idp", "lncoins"]]
    # pandas: lncoins takes 5 distinct values, idp 2 (statsmodels randhie).
    assert frame.lncoins.nunique() == 5 and frame.idp.nunique() == 2
    _, doc = brief_for(
        frame,
        tmp_path,
        target="mdvis",
        groups=["idp"],
        predictors=["lncoins"],
        labels=RANDHIE_LABELS,
    )
    code_note = next(c for c in doc.cautions if "distinct values" in c)
    assert code_note.startswith("Log(coinsurance+1) takes only 5 distinct values")
    assert "list lncoins under groups" in code_note  # the column name the config needs
    rows = next(t for t in doc.appendix if t.key == "table-rows")
    titles = [row[0] for row in rows.rows]
    assert "Used: comparison by Individual deductible plan" in titles
    assert "Used: comparison by idp" not in titles


def test_two_levels_read_one_above_the_other(tmp_path):
    frame = _randhie()[["mdvis", "idp"]]
    # pandas: mean visits 2.996 for idp = 0 and 2.473 for idp = 1 (20,190 rows).
    means = frame.groupby("idp").mdvis.mean()
    _, doc = brief_for(frame, tmp_path, target="mdvis", groups=["idp"], labels=RANDHIE_LABELS)
    finding = findings_by_key(doc)["group-idp"]
    assert finding.headline.startswith(
        f"By Individual deductible plan: 0 above 1 ({means[0]:.2f} against {means[1]:.2f})"
    )
    assert "highest" not in finding.headline and "lowest" not in finding.headline
    assert "highest" not in finding.text and "lowest" not in finding.text


def test_zero_shares_are_for_the_two_levels_the_headline_names(tmp_path):
    frame = _randhie()[["mdvis", "physlm"]]
    # pandas on statsmodels randhie: by physlm, the highest mean visits is level 0.0327869
    # (5.40, 17.1% zeros, n = 129) and the lowest level 0.12982 (0.73, 73.3% zeros, n = 15).
    by_level = frame.groupby("physlm").mdvis
    means, zeros = by_level.mean(), by_level.apply(lambda v: (v == 0).mean())
    high, low = means.idxmax(), means.idxmin()
    assert round(means[high], 2) == 5.40 and round(means[low], 2) == 0.73
    _, doc = brief_for(frame, tmp_path, target="mdvis", groups=["physlm"])
    finding = findings_by_key(doc)["group-physlm"]
    assert "0.12982" in finding.headline
    sentence = finding.text[finding.text.index("Values are 0 in") :]
    assert sentence.startswith(
        f"Values are 0 in {100 * zeros[high]:.1f}% of rows for 0.0327869 and "
        f"{100 * zeros[low]:.1f}% for 0.12982."
    )


def test_unordered_levels_name_the_extreme_medians_as_the_table_does(tmp_path):
    frame = _statecrime()
    division = {state: d for d, states in CENSUS_DIVISIONS.items() for state in states}
    frame["division"] = frame.state.str.strip().map(division)
    assert frame.division.notna().all()
    # pandas: medians run from 211.9 (New England) to 590.0 (South Atlantic); by mean rank
    # West South Central (39.75, n = 4) leads South Atlantic (35.8), so "sits highest" by
    # mean rank contradicted the table, which orders levels by median.
    medians = frame.groupby("division").violent.median()
    assert medians.idxmax() == "South Atlantic" and medians.idxmin() == "New England"
    ranks = frame.violent.rank().groupby(frame.division).mean()
    assert ranks.idxmax() == "West South Central"
    _, doc = brief_for(
        frame[["violent", "division"]], tmp_path, target="violent", groups=["division"]
    )
    finding = findings_by_key(doc)["group-division"]
    assert finding.headline == "By division: levels differ, but no single pair is clearly apart"
    assert "range from 212 (New England) to 590 (South Atlantic)." in finding.text
    assert "sits highest" not in finding.text
    # All nine levels are tied with both ends: the text says so once instead of listing them twice.
    assert finding.text.count("West North Central") == 0
    assert "no level is clearly apart from either end" in finding.text


def test_box_axis_marks_only_values_past_its_drawn_edge(tmp_path):
    frame = _statecrime()
    region = {"South Atlantic": "South", "East South Central": "South"}
    region |= {"West South Central": "South", "New England": "Northeast"}
    region |= {"Middle Atlantic": "Northeast", "Pacific": "West", "Mountain": "West"}
    region |= {"East North Central": "Midwest", "West North Central": "Midwest"}
    division = {state: d for d, states in CENSUS_DIVISIONS.items() for state in states}
    frame["region"] = frame.state.str.strip().map(division).map(region)
    stats, _ = brief_for(
        frame[["violent", "region"]], tmp_path, target="violent", groups=["region"]
    )
    (group,) = stats.groups
    south = next(b for b in group.boxes if b.level == "South")
    # pandas: the South's quartiles put DC (1,348.9, statsmodels statecrime) past the cut of
    # the shared box axis (3 × IQR, Tukey's far-out fence), so the engine counts it ...
    dc = frame.violent.max()
    assert dc == 1348.9 and south.beyond_axis_high == 1 and south.axis_high < dc
    # ... but the drawn axis keeps room past the cut, and DC fits in it: drawn, not marked.
    lower, upper = _limits(list(group.boxes), log=False)
    assert upper > dc
    fliers, below, above, exact = _past_edges(south, lower, upper)
    assert dc in fliers and (below, above) == (0, 0) and exact
    chart = distribution_chart(group, stats.overall, "Violent crime", 0, 0.95, "region")
    assert "far-out" not in chart.caption and "past the" not in chart.caption


def _box(outliers, beyond_high, outlier_count=None) -> BoxStats:
    """A constructed box on an axis cut at 0 and 100, with the given values past the whisker."""
    return BoxStats(
        level="A", n=100, q1=40, median=50, q3=60, whisker_low=20, whisker_high=80,
        notch_low=45, notch_high=55, mean=50, outlier_count=outlier_count or len(outliers),
        outliers=tuple(outliers), axis_low=0, axis_high=100, beyond_axis_low=0,
        beyond_axis_high=beyond_high,
    )  # fmt: skip


def test_values_past_the_drawn_edge_are_counted_and_unlisted_ones_keep_the_cut():
    # Constructed: drawn axis to 116 (0.16 of the span past the cut at 100).
    lower, upper = _limits([_box([110, 130], 2)], log=False)
    assert upper == pytest.approx(116)
    fliers, _, above, exact = _past_edges(_box([130, 110, 95], 2), lower, upper)
    assert sorted(fliers) == [95, 110] and above == 1 and exact
    # Only one of the two values past the cut is listed: the figure cannot place the other,
    # so the engine's count stands and the caption names the cut instead of the drawn edge.
    fliers, _, above, exact = _past_edges(_box([130], 2, outlier_count=30), lower, upper)
    assert fliers == [] and above == 2 and not exact
    assert _cut([_box([130], 2, outlier_count=30)], exact, 0) == "above 100"


def test_rows_left_out_name_the_analysis_by_its_labels(tmp_path):
    # Constructed: 40 rows, 4 without a site and 3 without a dose.
    rng = np.random.default_rng(8)
    frame = pd.DataFrame(
        {"y": rng.normal(10, 1, 40), "site": ["a", "b"] * 20, "dose": rng.uniform(0, 5, 40)}
    )
    frame.loc[:3, "site"] = None
    frame.loc[10:12, "dose"] = None
    labels = {"site": "Clinic site", "dose": "Daily dose"}
    _, doc = brief_for(
        frame, tmp_path, target="y", groups=["site"], predictors=["dose"], labels=labels
    )
    rows = next(t for t in doc.appendix if t.key == "table-rows")
    titles = [row[0] for row in rows.rows]
    assert "Left out of comparison by Clinic site: no value in 'site'" in titles
    assert "Left out of relationship with Daily dose: no finite value in 'dose'" in titles
    assert "4 rows left out of comparison by Clinic site: no value in 'site'." in doc.cautions
