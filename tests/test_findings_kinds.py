"""Page 1 words each kind of target as its kind asks (constructed, seeded data).

A 0/1 outcome reads in percent and percentage points, with no outliers and no
"% more"; a measure without a true zero gets no percentage of itself; a count that
is mostly zero never names one level both highest and lowest. Wording rules from
DESIGN.md ("The kind of target decides the summaries"); the statistics behind them
are checked against statsmodels and scipy in test_stats_proportions.py.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.proportion import confint_proportions_2indep, proportions_ztest

from briefgen.config import parse_spec
from briefgen.numbers import fmt_level
from briefgen.pipeline import build_brief

N = 1200


def _build(tmp_path, data: pd.DataFrame, target: str, extra: str = "") -> tuple[dict, str]:
    data.to_csv(tmp_path / "d.csv", index=False)
    spec = parse_spec(
        f"title: t\ndata: {{path: d.csv}}\ntarget: {target}\ngroups: [g]\n"
        f"output: {{formats: [html, json]}}\n{extra}",
        tmp_path / "c.yaml",
    )
    build_brief(spec, tmp_path / "out", built_on="2026-12-02")
    payload = json.loads((tmp_path / "out" / "stats.json").read_text())
    html = (tmp_path / "out" / "brief.html").read_text()
    # Page 1: the key findings and the cautions, up to the first analysis section.
    page_one = html.split('id="key-heading"', 1)[1].split('<section class="analysis"', 1)[0]
    return payload, page_one


def _sentences(finding: dict) -> str:
    return " ".join(finding[k] for k in ("headline", "text", "certainty"))


def test_binary_page_one_speaks_in_percent_and_points(tmp_path):
    rng = np.random.default_rng(1998)
    g = rng.choice(["north", "south", "east"], N)
    y = (rng.random(N) < np.where(g == "north", 0.35, 0.12)).astype(int)
    payload, page_one = _build(tmp_path, pd.DataFrame({"y": y, "g": g}), "y")
    assert payload["stats"]["target_kind"]["kind"] == "binary"
    findings = {f["key"]: f for f in payload["findings"]}
    overall, group = findings["overall"], findings["group-g"]
    assert "%" in overall["headline"] and overall["test"] == "wilson_score"
    assert overall["estimate"] == pytest.approx(y.mean())
    assert "%" in group["headline"] and "percentage points" in group["text"]
    assert group["claim"] == "difference" and group["test"] == "chi_square"
    assert group["levels"][0] == "north" and group["levels"][0] != group["levels"][1]
    # South and east share one true share (0.12): only "north highest" is supported, so no
    # lowest level is named and no interval is given for a pair.
    assert "lowest" not in group["headline"] and "not clearly apart" in group["text"]
    assert group["ci_low"] is None
    for text in (page_one, *map(_sentences, payload["findings"])):
        assert "outlier" not in text.lower()
        assert "% more" not in text and "% less" not in text
    assert payload["stats"]["overall_box"] is None
    assert all(g["boxes"] == [] for g in payload["stats"]["groups"])


def _percent_of_target(text: str, confidence: float = 0.95) -> list[str]:
    """Every percentage left once the interval level is set aside."""
    # The family sentence states the false-claim level (1 − confidence), not a share of the target.
    text = text.replace(fmt_level(confidence), "").replace(
        f"at most {fmt_level(1 - confidence)}", ""
    )
    text = re.sub(r"[0-9.]+% interval", "", text)  # interval levels widened for a picked pair
    return re.findall(r"[0-9.,]+\s?%", text)


@pytest.mark.parametrize("extra", ["scale: interval\n", ""])
def test_interval_scale_writes_no_percent_of_the_target(tmp_path, extra):
    rng = np.random.default_rng(1742)
    g = rng.choice(["coast", "valley", "hills"], N)
    # Degrees Celsius: with scale: interval all above 0; by the default rule some below 0.
    centre = np.where(g == "coast", 14.0, 6.0) if extra else np.where(g == "coast", 3.0, 0.8)
    temperature = rng.normal(centre, 1.0 if extra else 3.0)
    payload, page_one = _build(tmp_path, pd.DataFrame({"y": temperature, "g": g}), "y", extra)
    assert payload["stats"]["target_kind"]["scale"] == "interval"
    group = next(f for f in payload["findings"] if f["key"] == "group-g")
    assert group["claim"] == "difference"
    for text in (page_one, *map(_sentences, payload["findings"])):
        assert _percent_of_target(text) == []


def test_ratio_scale_still_writes_the_relative_gap(tmp_path):
    # The same kind of data on a ratio scale keeps "% more": the switch is the scale alone.
    rng = np.random.default_rng(1742)
    g = rng.choice(["coast", "valley", "hills"], N)
    y = rng.normal(np.where(g == "coast", 14.0, 6.0), 1.0)
    payload, _ = _build(tmp_path, pd.DataFrame({"y": y, "g": g}), "y")
    group = next(f for f in payload["findings"] if f["key"] == "group-g")
    assert "% more" in group["text"]


@pytest.mark.parametrize("extra", ["", "target_kind: continuous\n"])
def test_zero_heavy_count_never_names_one_level_highest_and_lowest(tmp_path, extra):
    rng = np.random.default_rng(1927)
    # Numeric codes whose means fall by a factor of five while every median is 0.
    g = rng.choice([1, 2, 3, 4], N)
    y = rng.poisson(np.array([0.0, 0.5, 0.3, 0.2, 0.1])[g])
    payload, page_one = _build(tmp_path, pd.DataFrame({"y": y, "g": g}), "y", extra)
    medians = pd.Series(y).groupby(g).median()
    assert (medians == 0).all()
    group = next(f for f in payload["findings"] if f["key"] == "group-g")
    high, low = group["levels"][0], group["levels"][-1]
    assert high != low
    if extra:
        # Forced continuous: the skewed target leans on ranks, and levels are ordered by
        # mean rank (what the rank test is about), never by medians that all tie at 0.
        assert group["test"] == "kruskal_wallis"
        assert "mean" in group["headline"]
        return
    assert group["test"] in ("welch_t", "welch_anova")
    means = pd.Series(y).groupby(g).mean()
    # pandas group means on the same rows are the reference for the gap the sentence names.
    assert group["estimate"] == pytest.approx(means[int(high)] - means[int(low)])
    assert "typically" not in group["headline"]
    assert "are 0" in group["text"]


def test_binary_two_levels_rest_on_the_z_test_and_newcombe_interval(tmp_path):
    rng = np.random.default_rng(1927)
    g = rng.choice(["trial", "control"], N)
    y = (rng.random(N) < np.where(g == "trial", 0.30, 0.18)).astype(int)
    payload, _ = _build(tmp_path, pd.DataFrame({"y": y, "g": g}), "y")
    group = next(f for f in payload["findings"] if f["key"] == "group-g")
    assert group["test"] == "two_proportion_z" and group["levels"] == ["trial", "control"]
    a, b = (y[g == level] for level in group["levels"])
    # statsmodels' Newcombe interval and z test on the same counts are the reference.
    low, high = confint_proportions_2indep(
        a.sum(), len(a), b.sum(), len(b), method="newcomb", compare="diff"
    )
    assert group["estimate"] == pytest.approx(a.mean() - b.mean())
    assert (group["ci_low"], group["ci_high"]) == pytest.approx((low, high))
    assert group["p_value"] == pytest.approx(
        proportions_ztest([a.sum(), b.sum()], [len(a), len(b)])[1]
    )


def test_binary_slopes_and_trends_speak_in_percentage_points(tmp_path):
    # A 0/1 outcome whose share rises by 2 points per unit of x: statsmodels OLS on the
    # 0/1 values (a linear probability model) is the reference for the slope.
    import statsmodels.formula.api as smf

    rng = np.random.default_rng(77)
    x = rng.uniform(0, 10, N)
    y = (rng.random(N) < 0.2 + 0.02 * x).astype(int)
    frame = pd.DataFrame({"y": y, "x": x, "g": rng.choice(["a", "b"], N)})
    payload, _ = _build(tmp_path, frame, "y", "predictors: [x]\n")
    finding = next(f for f in payload["findings"] if f["key"] == "fit-x")
    assert finding["estimate"] == pytest.approx(smf.ols("y ~ x", frame).fit().params["x"])
    assert "percentage points" in finding["text"] and "points per unit" in finding["headline"]


def test_binary_two_way_departures_are_in_percentage_points(tmp_path):
    rng = np.random.default_rng(78)
    g = rng.choice(["a", "b"], N)
    h = rng.choice(["p", "q"], N)
    y = (rng.random(N) < 0.3).astype(int)
    frame = pd.DataFrame({"y": y, "g": g, "h": h})
    from constructed import brief_for

    _, doc = brief_for(frame, tmp_path, target="y", groups=["g", "h"])
    finding = next(f for f in doc.findings if f.kind == "cross")
    assert "points" in finding.text
    assert not re.search(r"is [+−]0\.\d{3} \(", finding.text)  # never a bare share difference


def test_randhie_count_says_its_real_share_of_zeros_and_the_test_it_uses(tmp_path):
    # RAND Health Insurance Experiment (statsmodels.datasets.randhie, shipped offline):
    # doctor visits, 31% zeros, so a count; physlm is a measured fraction, not a code.
    from statsmodels.datasets import randhie

    data = randhie.load_pandas().data[["mdvis", "idp", "physlm"]].rename(columns={"idp": "g"})
    zero_share = (data["mdvis"] == 0).mean()  # pandas reference: 6,308 of 20,190
    payload, _ = _build(tmp_path, data, "mdvis", "groups: [g, physlm]\n")
    html = (tmp_path / "out" / "brief.html").read_text()
    assert payload["stats"]["target_kind"]["kind"] == "count"
    # The count's detail states the share pandas finds, not "most values are 0".
    assert f"{zero_share:.1%} of values are 0" in html
    assert "Most values are 0" not in html
    # The pairwise table names the test the verdict rests on (Welch, as stats.json says).
    group = next(f for f in payload["findings"] if f["key"] == "group-g")
    assert group["test"] == "welch_t"
    assert "leans on the Welch test" in html and "leans on the rank-based test" not in html
    # A measured fraction used as a group is called out; the 0/1 plan indicator is not.
    assert "Physlm holds numbers with fractions (11 distinct values)" in html
    assert "G holds numbers with fractions" not in html
    # Page 1's physlm headline names 0.12982 lowest; pandas counts 15 rows for it.
    physlm = next(f for f in payload["findings"] if f["key"] == "group-physlm")
    assert "0.12982" in physlm["headline"]
    n_low = int((data["physlm"].round(5) == 0.12982).sum())
    assert n_low == 15
    assert f"0.12982 (n = {n_low}) is a small group" in physlm["certainty"]
