"""Every kind of page-1 claim, on constructed cases where it must and must not appear.

The data are constructed by seeded generators with known effects (or none); the
statistics the claims rest on are checked against statsmodels beside them.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from constructed import brief_for, findings_by_key

from briefgen.present.family import family_sentence


def _levels_frame(means: dict[str, float], n: int, seed: int, sd: float = 1.0) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    rows = [(level, rng.normal(mean, sd)) for level, mean in means.items() for _ in range(n)]
    return pd.DataFrame(rows, columns=["site", "score"])


def test_one_level_apart_is_named_highest_and_no_lowest_is_claimed(tmp_path):
    # Level A sits one sd above three levels that share a mean: only "A highest" is true.
    frame = _levels_frame({"A": 11.0, "B": 10.0, "C": 10.0, "D": 10.0}, 200, seed=7)
    _, doc = brief_for(frame, tmp_path, target="score", groups=["site"])
    finding = findings_by_key(doc)["group-site"]
    assert finding.claim == "difference"
    assert finding.headline.startswith("By site: A highest")
    assert "lowest" not in finding.headline
    assert finding.levels[0] == "A"


def test_two_clearly_different_levels_are_named_one_above_the_other(tmp_path):
    frame = _levels_frame({"north": 12.0, "south": 10.0}, 100, seed=3)
    _, doc = brief_for(frame, tmp_path, target="score", groups=["site"])
    finding = findings_by_key(doc)["group-site"]
    assert finding.claim == "difference"
    # Of two levels one is above the other; "highest" and "lowest" would overstate.
    north, south = (frame[frame.site == s].score.mean() for s in ("north", "south"))
    assert finding.headline == f"By site: north above south ({north:.2f} against {south:.2f})"
    assert "the higher mean" in finding.text and "highest" not in finding.text
    # The interval of the picked pair is Welch's at the Bonferroni level (one pair: 95%),
    # compared with statsmodels' OLS on a two-level factor's unequal-variance analogue.
    assert finding.estimate == pytest.approx(north - south, rel=1e-12)


def test_pure_noise_groups_claim_nothing(tmp_path):
    frame = _levels_frame({"A": 10.0, "B": 10.0, "C": 10.0}, 80, seed=11)
    _, doc = brief_for(frame, tmp_path, target="score", groups=["site"])
    finding = findings_by_key(doc)["group-site"]
    assert finding.claim == "none"
    assert finding.headline == "By site: no clear difference"


def test_tied_zero_medians_never_name_one_level_both_highest_and_lowest(tmp_path):
    # Zero-heavy counts: Poisson means 0.15, 0.35 and 0.6 all have median 0.
    rng = np.random.default_rng(5)
    rows = [
        (code, int(v))
        for code, lam in (("1", 0.6), ("2", 0.35), ("3", 0.15))
        for v in rng.poisson(lam, 400)
    ]
    frame = pd.DataFrame(rows, columns=["code", "visits"])
    assert frame.groupby("code").visits.median().eq(0).all()
    _, doc = brief_for(frame, tmp_path, target="visits", groups=["code"])
    finding = findings_by_key(doc)["group-code"]
    assert finding.claim == "difference"
    assert finding.levels[0] == "1"  # the level whose values tend highest (mean rank)
    named = [level for level in ("1", "2", "3") if f" {level} " in f" {finding.headline} "]
    assert len(named) == len(set(named))
    assert not ("highest" in finding.headline and finding.levels[0] == finding.levels[-1])


def test_line_and_ranks_disagreeing_claim_no_direction(tmp_path):
    # The bulk rises with x; five far-out points at large x pull the least-squares line down.
    rng = np.random.default_rng(2)
    x = rng.uniform(0, 10, 300)
    y = 0.5 * x + rng.normal(0, 1, 300)
    x = np.concatenate([x, np.full(5, 40.0)])
    y = np.concatenate([y, np.full(5, -400.0)])
    frame = pd.DataFrame({"load": x, "output": y})
    stats, doc = brief_for(frame, tmp_path, target="output", predictors=["load"])
    ols = smf.ols("output ~ load", frame).fit()  # statsmodels reference for the line
    assert stats.fits[0].slope == pytest.approx(ols.params["load"], rel=1e-9)
    assert stats.fits[0].slope < 0 < stats.correlations[0].spearman_rho
    finding = findings_by_key(doc)["fit-load"]
    assert finding.claim == "none"
    assert finding.headline.startswith("No consistent direction")


def _simpson_frame(within_slope: float, seed: int) -> pd.DataFrame:
    # Three crews: the crew with more hours has a lower baseline, so the pooled line falls.
    rng = np.random.default_rng(seed)
    rows = []
    for crew, (x_mean, base) in {"red": (2, 30), "green": (5, 20), "blue": (8, 10)}.items():
        x = rng.normal(x_mean, 0.8, 150)
        rows += [(crew, xi, base + within_slope * xi + rng.normal(0, 1)) for xi in x]
    return pd.DataFrame(rows, columns=["crew", "hours", "yield"])


def test_a_group_that_reverses_the_slope_is_named_as_the_likely_confounder(tmp_path):
    frame = _simpson_frame(within_slope=1.0, seed=4)
    stats, doc = brief_for(frame, tmp_path, target="yield", groups=["crew"], predictors=["hours"])
    pooled = smf.ols("Q('yield') ~ hours", frame).fit()
    within = smf.ols("Q('yield') ~ hours + C(crew)", frame).fit()  # statsmodels reference
    assert pooled.params["hours"] < 0 < within.params["hours"]
    slopes = stats.slopes_by_group[0]
    assert slopes.common_slope == pytest.approx(within.params["hours"], rel=1e-9)
    assert slopes.common_slope_se == pytest.approx(within.bse["hours"], rel=1e-9)
    assert slopes.common_p_value == pytest.approx(within.pvalues["hours"], rel=1e-6, abs=1e-300)
    finding = findings_by_key(doc)["fit-hours"]
    assert finding.claim == "rise"
    assert finding.headline.startswith("Within each crew, yield rises with hours")
    assert "crew" in finding.variables and "likely confounder" in finding.text
    assert finding.estimate == pytest.approx(within.params["hours"], rel=1e-9)
    # The scatter shows the confounder: points and one line per crew.
    chart = next(s.chart for s in doc.sections if s.key == "fit-hours")
    assert chart.title.endswith("by crew")
    assert chart.svg.count('<g id="line2d_') >= 4  # three crews and the overall line


def test_a_group_that_removes_the_slope_is_said(tmp_path):
    frame = _simpson_frame(within_slope=0.0, seed=8)
    _, doc = brief_for(frame, tmp_path, target="yield", groups=["crew"], predictors=["hours"])
    finding = findings_by_key(doc)["fit-hours"]
    assert finding.claim == "explained"
    assert finding.headline == "Link with hours is explained by crew"
    # The pooled line passed its test: page 1 files it as explained, not as possible chance.
    assert finding in doc.explained_findings and finding not in doc.open_findings
    assert "1 of them is explained by another variable" in doc.family_note


def test_a_line_clear_alone_is_not_called_no_link(tmp_path):
    # Noise plus two rows far out at large x: the least-squares line is clear, the ranks
    # are not. "No clear relationship" would contradict the slope interval beside it.
    from scipy import stats as sps

    rng = np.random.default_rng(12)
    x = np.concatenate([rng.uniform(0, 10, 300), np.full(2, 40.0)])
    y = np.concatenate([rng.normal(0, 1, 300), np.full(2, 6.0)])
    frame = pd.DataFrame({"load": x, "output": y})
    stats, doc = brief_for(frame, tmp_path, target="output", predictors=["load"])
    line = sps.linregress(x, y)  # scipy reference for the line's p-value
    ranks = sps.spearmanr(x, y)  # and for the ranks'
    assert line.pvalue < 0.05 < ranks.pvalue
    assert stats.fits[0].slope_p_value == pytest.approx(line.pvalue, rel=1e-6)
    assert stats.correlations[0].spearman_p_value == pytest.approx(ranks.pvalue, rel=1e-6)
    finding = findings_by_key(doc)["fit-load"]
    assert finding.claim == "none"
    assert finding.headline == "No consistent link with load"
    assert finding.certainty.startswith("The straight line (p")
    assert "alone would be clear, the rank correlation (p" in finding.certainty
    assert "No clear straight-line or rank relationship" not in finding.certainty


def test_pure_noise_predictor_says_no_clear_link(tmp_path):
    rng = np.random.default_rng(13)
    frame = pd.DataFrame({"load": rng.uniform(0, 10, 300), "output": rng.normal(0, 1, 300)})
    _, doc = brief_for(frame, tmp_path, target="output", predictors=["load"])
    finding = findings_by_key(doc)["fit-load"]
    assert finding.headline == "No clear link with load"
    assert finding.certainty.startswith("No clear straight-line or rank relationship")


def test_a_plain_rise_is_claimed_with_a_readable_step(tmp_path):
    # 0.004 per metre reads as 4 per 1,000 metres.
    rng = np.random.default_rng(9)
    metres = rng.uniform(0, 5000, 400)
    frame = pd.DataFrame({"metres": metres, "minutes": 0.004 * metres + rng.normal(0, 2, 400)})
    _, doc = brief_for(frame, tmp_path, target="minutes", predictors=["metres"])
    finding = findings_by_key(doc)["fit-metres"]
    assert finding.claim == "rise"
    assert "per 1,000)" in finding.headline


def test_slopes_differing_by_group_are_never_said_after_no_clear_link(tmp_path):
    # Opposite slopes in two shops cancel overall: the separate-lines F test is strong,
    # but with no direction to qualify, the brief must not append it.
    rng = np.random.default_rng(12)
    rows = []
    for shop, slope in (("east", 1.0), ("west", -1.0)):
        x = rng.uniform(0, 10, 200)
        rows += [(shop, xi, 50 + slope * (xi - 5) + rng.normal(0, 1)) for xi in x]
    frame = pd.DataFrame(rows, columns=["shop", "price", "sales"])
    stats, doc = brief_for(frame, tmp_path, target="sales", groups=["shop"], predictors=["price"])
    assert stats.slopes_by_group[0].p_value < 1e-10
    finding = findings_by_key(doc)["fit-price"]
    assert finding.claim == "none"
    assert "not the same everywhere" not in finding.text
    assert doc.family.slope_differences == ()


def test_page_one_says_how_many_questions_were_tested(tmp_path):
    frame = _simpson_frame(within_slope=1.0, seed=4)
    _, doc = brief_for(frame, tmp_path, target="yield", groups=["crew"], predictors=["hours"])
    assert doc.family.size == 2  # one group comparison, one direction
    assert "tests 2 questions" in family_sentence(doc.family)
    assert "Holm" in doc.family_note


@pytest.mark.parametrize(("confidence", "claim"), [(0.95, "difference"), (0.99, "none")])
def test_verdicts_follow_the_configured_confidence(tmp_path, confidence, claim):
    # Two levels standardised to mean 0 and sd 1, then 0.474 apart: Welch's t ≈ 2.37 on
    # about 98 df, p ≈ 0.02, clear at 95% and not at 99% (scipy reference below).
    rng = np.random.default_rng(21)
    base = [(z - z.mean()) / z.std(ddof=1) for z in (rng.normal(size=50), rng.normal(size=50))]
    frame = pd.DataFrame(
        {"team": ["a"] * 50 + ["b"] * 50, "score": np.concatenate([base[0], base[1] + 0.474])}
    )
    from scipy import stats as scipy_stats

    p = scipy_stats.ttest_ind(base[1] + 0.474, base[0], equal_var=False).pvalue
    assert 0.01 < p < 0.05
    _, doc = brief_for(frame, tmp_path, target="score", groups=["team"], confidence=confidence)
    finding = findings_by_key(doc)["group-team"]
    assert finding.claim == claim
    assert finding.p_value == pytest.approx(p, rel=1e-9)


def test_differences_another_group_explains_are_not_claimed(tmp_path):
    # Breed sets the weight; farms differ only in their mix of breeds (like islands and
    # species). statsmodels' type II ANOVA is the reference for "farm given breed".
    from statsmodels.stats.anova import anova_lm

    rng = np.random.default_rng(31)
    rows = []
    for farm, mix in {"hill": (0.8, 0.2), "vale": (0.5, 0.5), "moor": (0.2, 0.8)}.items():
        for breed in rng.choice(["heavy", "light"], 200, p=mix):
            rows.append((farm, breed, {"heavy": 60.0, "light": 40.0}[breed] + rng.normal(0, 4)))
    frame = pd.DataFrame(rows, columns=["farm", "breed", "weight"])
    stats, doc = brief_for(frame, tmp_path, target="weight", groups=["farm", "breed"])
    given = stats.crosses[0].interaction.row_given_column
    reference = anova_lm(smf.ols("weight ~ C(farm) + C(breed)", frame).fit(), typ=2)
    assert given.p_value == pytest.approx(reference.loc["C(farm)", "PR(>F)"], rel=1e-6)
    found = findings_by_key(doc)
    assert found["group-farm"].claim == "explained"
    assert found["group-farm"].headline == "By farm: differences explained by breed"
    assert found["group-breed"].claim == "difference"
    # Farm's own test passed: listed as explained, never among what could be chance.
    assert found["group-farm"] in doc.explained_findings
    assert found["group-farm"] not in doc.open_findings


def test_differences_mostly_from_another_group_say_so_on_page_one(tmp_path):
    # Farms differ a little of their own (+1.5 kg on the hill) and a lot through their
    # breed mix: the claim stands, and its certainty says most of it goes with breed.
    rng = np.random.default_rng(32)
    rows = []
    for farm, mix in {"hill": (0.8, 0.2), "vale": (0.5, 0.5), "moor": (0.2, 0.8)}.items():
        own = 1.5 if farm == "hill" else 0.0
        for breed in rng.choice(["heavy", "light"], 400, p=mix):
            base = {"heavy": 60.0, "light": 40.0}[breed]
            rows.append((farm, breed, base + own + rng.normal(0, 4)))
    frame = pd.DataFrame(rows, columns=["farm", "breed", "weight"])
    stats, doc = brief_for(frame, tmp_path, target="weight", groups=["farm", "breed"])
    given = stats.crosses[0].interaction.row_given_column
    assert given.p_value < 0.05 and given.kept < 0.5
    finding = findings_by_key(doc)["group-farm"]
    assert finding.claim == "difference"
    assert "Most of this goes with breed" in finding.certainty


def test_a_trend_through_seasons_is_flagged(tmp_path):
    # Four years of daily values with a yearly swing of ±8 around a slow rise: the
    # straight line through quarterly means cannot tell the rise from the seasons.
    rng = np.random.default_rng(40)
    days = pd.date_range("2020-01-01", "2023-12-31", freq="D")
    t = np.arange(len(days))
    frame = pd.DataFrame(
        {
            "day": days,
            "temp": 8 * np.sin(2 * np.pi * t / 365.25) + 0.001 * t + rng.normal(0, 2, len(t)),
        }
    )
    _, doc = brief_for(frame, tmp_path, target="temp", time="day")
    assert any("runs through seasons" in note for note in doc.cautions)


def test_page_one_counts_what_it_cannot_list(tmp_path):
    # Nine predictors with a strong slope and eleven of pure noise: page 1 states eight
    # claims one by one and lists ten open questions; the rest are counted, never dropped.
    from briefgen.config import load_spec
    from briefgen.document import MAX_KEY_FINDINGS, MAX_LISTED
    from briefgen.render import render_html

    rng = np.random.default_rng(14)
    n = 400
    columns = {f"s{i}": rng.uniform(0, 1, n) for i in range(9)}
    columns |= {f"z{i:02d}": rng.uniform(0, 1, n) for i in range(11)}
    columns["output"] = sum(columns[f"s{i}"] for i in range(9)) * 3 + rng.normal(0, 0.5, n)
    frame = pd.DataFrame(columns)
    _, doc = brief_for(frame, tmp_path, target="output", predictors=list(columns)[:-1])
    settled = [f for f in doc.findings if f.claim in ("summary", "rise", "fall")]
    open_ = [f for f in doc.findings if f.claim in ("none", "not_tested")]
    assert len(settled) > MAX_KEY_FINDINGS and len(open_) > MAX_LISTED
    assert doc.settled_findings == tuple(settled[:MAX_KEY_FINDINGS])
    assert doc.settled_rest == tuple(settled[MAX_KEY_FINDINGS:])
    assert doc.settled_more == len(settled) - MAX_KEY_FINDINGS and doc.settled_unnamed == 0
    assert doc.open_findings == tuple(open_[:MAX_LISTED])
    assert doc.open_more == len(open_) - MAX_LISTED
    html = render_html(doc, load_spec(tmp_path / "brief.yaml"))
    assert f"{doc.settled_more} more clear results" in html
    assert all(f.headline in html for f in settled)  # every clear result is named on page 1
    assert f" · {doc.open_more} more. Each could be chance" in html


def test_a_claim_naming_a_small_level_says_so(tmp_path):
    # Level C holds only 12 rows, far above two large levels: the claim stands, and page 1
    # says C is small (below 30 rows: common practice, no published source).
    frame = pd.concat(
        [
            _levels_frame({"A": 10.0, "B": 10.0}, 200, seed=15),
            _levels_frame({"C": 14.0}, 12, seed=16),
        ]
    )
    _, doc = brief_for(frame, tmp_path, target="score", groups=["site"])
    finding = findings_by_key(doc)["group-site"]
    assert finding.claim == "difference" and finding.levels[0] == "C"
    assert "C (n = 12) is a small group" in finding.certainty


def test_a_claim_on_large_levels_has_no_small_group_note(tmp_path):
    frame = _levels_frame({"A": 11.0, "B": 10.0, "C": 10.0}, 200, seed=17)
    _, doc = brief_for(frame, tmp_path, target="score", groups=["site"])
    finding = findings_by_key(doc)["group-site"]
    assert finding.claim == "difference" and "small group" not in finding.certainty


def _yearly(values: np.ndarray) -> pd.DataFrame:
    years = pd.date_range("1950-01-01", periods=len(values), freq="YS")
    return pd.DataFrame({"year": years, "level": 20 + 0.05 * np.arange(len(values)) + values})


def _serial_notes(doc) -> tuple[list[str], bool]:
    notes = [note for note in doc.cautions if note.startswith("Successive ")]
    return notes, "are alike, which the tests ignore" in doc.family_note


def test_a_series_with_alike_successive_periods_is_flagged(tmp_path):
    # statsmodels.datasets.macrodata (US quarterly series 1959–2009, shipped offline): the
    # real interest rate's yearly means around the trend correlate 0.70 with the next
    # year's (statsmodels acf), above Box & Jenkins' 2/√n = 0.28 for n = 50 years.
    from statsmodels.datasets import macrodata

    data = macrodata.load_pandas().data
    quarters = pd.PeriodIndex.from_fields(
        year=data.year.astype(int), quarter=data.quarter.astype(int), freq="Q"
    )
    frame = pd.DataFrame({"date": quarters.start_time, "realint": data.realint, "infl": data.infl})
    _, doc = brief_for(frame, tmp_path, target="realint", predictors=["infl"], time="date")
    notes, on_page_one = _serial_notes(doc)
    assert len(notes) == 1 and on_page_one
    assert "Successive years of realint are alike" in notes[0]
    assert "correlates 0.70 with the next" in notes[0] and "exceed 0.28" in notes[0]


def test_independent_noise_over_time_is_not_flagged(tmp_path):
    # Constructed: 60 yearly values of independent normal noise around a gentle rise.
    frame = _yearly(np.random.default_rng(61).normal(0, 1, 60))
    _, doc = brief_for(frame, tmp_path, target="level", time="year")
    assert _serial_notes(doc) == ([], False)


def test_an_ar1_series_is_flagged(tmp_path):
    # Constructed: 60 yearly values of an AR(1) series with phi = 0.8 (lag-1 autocorrelation
    # 0.8 in the population, Box, Jenkins & Reinsel §3.2.4).
    rng = np.random.default_rng(62)
    x = np.empty(60)
    x[0] = rng.normal(0, 1 / np.sqrt(1 - 0.8**2))
    for t in range(1, 60):
        x[t] = 0.8 * x[t - 1] + rng.normal()
    _, doc = brief_for(_yearly(x), tmp_path, target="level", time="year")
    notes, on_page_one = _serial_notes(doc)
    assert len(notes) == 1 and on_page_one
    assert "Successive years of level are alike" in notes[0]
