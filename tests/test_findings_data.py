"""Findings travel as data in stats.json, and page 1 is ordered from their claims.

The demo's generator builds in effects by vehicle and district and none by time slot
(briefgen/demo/generate.py, constructed data); the claims must say so.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pandas as pd
import pytest

from briefgen.cli import demo_config_path
from briefgen.config import load_spec
from briefgen.pipeline import build_brief
from briefgen.render import FINDING_FIELDS


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("findings")
    build_brief(load_spec(demo_config_path()), out, built_on="2026-12-02")
    return json.loads((out / "stats.json").read_text()), (out / "brief.html").read_text()


def test_every_finding_has_the_documented_fields(demo):
    payload, _ = demo
    assert payload["findings"], "the demo brief has findings"
    for finding in payload["findings"]:
        assert tuple(finding) == FINDING_FIELDS


def test_claims_follow_the_built_in_effects(demo):
    payload, _ = demo
    by_key = {f["key"]: f for f in payload["findings"]}
    assert by_key["overall"]["claim"] == "summary"
    assert by_key["group-vehicle"]["claim"] == "difference"
    assert by_key["group-vehicle"]["levels"] == ["van", "bicycle"]
    assert by_key["group-vehicle"]["variables"] == ["vehicle"]
    assert by_key["group-time_slot"]["claim"] == "none"
    assert by_key["fit-distance_km"]["claim"] == "rise"
    assert by_key["fit-distance_km"]["estimate"] > 0


def test_test_and_p_are_the_ones_the_verdict_rests_on(demo):
    payload, _ = demo
    group = next(g for g in payload["stats"]["groups"] if g["variable"] == "vehicle")
    finding = next(f for f in payload["findings"] if f["key"] == "group-vehicle")
    assert finding["test"] == group["comparison"]["rank_test"]["test"]
    assert finding["p_value"] == group["comparison"]["rank_test"]["p_value"]


def test_page_one_puts_settled_claims_first(demo):
    payload, html = demo
    page_one = html.split('id="key-heading"', 1)[1].split("</section>", 1)[0]
    positions = [page_one.find(f["headline"].replace("'", "&#39;")) for f in payload["findings"]]
    settled = [
        p
        for p, f in zip(positions, payload["findings"], strict=True)
        if f["claim"] in ("summary", "difference", "rise", "fall")
    ]
    unsettled = [
        p
        for p, f in zip(positions, payload["findings"], strict=True)
        if f["claim"] in ("none", "not_tested")
    ]
    assert all(p >= 0 for p in settled + unsettled)
    assert max(settled) < min(unsettled)


def test_page_one_carries_the_chart_of_its_surest_claim(demo, tmp_path):
    # The rule (document.lead_figure): the settled claim with the smallest adjusted p whose
    # chart fits under the findings; here the distance slope (p adjusted 0).
    payload, html = demo
    claims = [f for f in payload["findings"] if f["claim"] in ("difference", "rise", "fall")]
    surest = min(claims, key=lambda f: f["p_adjusted"])
    page_one = html.split('id="key-heading"', 1)[1].split("</section>", 1)[0]
    assert '<figure class="lead">' in page_one
    assert f'href="#{surest["key"]}"' in page_one.split('<figure class="lead">', 1)[1]


@pytest.mark.parametrize("levels", [5, 10])
def test_a_group_claim_with_many_levels_still_leads_page_one(tmp_path, levels):
    # Constructed case: one group whose levels differ by 1 sd steps, nothing else; its chart is
    # too tall for page 1 at 0.34 in a row, so page 1 carries the same chart with rows closed up.
    from constructed import brief_for

    from briefgen.document import lead_figure
    from briefgen.figures.theme import COMPACT_ROW_MIN_IN, LEAD_HEIGHT_IN

    rng = np.random.default_rng(7)
    names = [f"site {chr(65 + i)}" for i in range(levels)]
    frame = pd.DataFrame({"site": np.repeat(names, 40)})
    frame["minutes"] = rng.normal(0, 1, len(frame)) + frame["site"].map(names.index)
    _, doc = brief_for(frame, tmp_path, target="minutes", groups=["site"], predictors=[])
    lead = lead_figure(list(doc.sections))
    assert lead is not None and lead.key == "group-site"
    height = float(re.search(r'<svg[^>]*\sheight="([0-9.]+)pt"', lead.chart.svg).group(1)) / 72
    assert height <= LEAD_HEIGHT_IN + 1e-9
    # Every level is still drawn, on rows no closer than the stated minimum.
    assert all(f">{name}<" in lead.chart.svg for name in names)
    assert (LEAD_HEIGHT_IN - 0.9) / levels >= COMPACT_ROW_MIN_IN
