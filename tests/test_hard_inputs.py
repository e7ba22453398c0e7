"""End to end on hard data: large offsets, tiny spreads, one-row, constant and empty groups.

The brief must build, say what it left out, and keep the digits that differ. The
reference for the numbers is exact rational arithmetic (Python's fractions module)
on the same float64 values.
"""

from __future__ import annotations

import json
import math
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

from briefgen.cli import main

OFFSET = 1e12


def _exact_mean_sd(values: list[float]) -> tuple[float, float]:
    exact = [Fraction(v) for v in values]
    mean = sum(exact) / len(exact)
    variance = sum((v - mean) ** 2 for v in exact) / (len(exact) - 1)
    return float(mean), math.sqrt(float(variance))


@pytest.fixture
def hard_case(tmp_path):
    rng = np.random.default_rng(7)
    frames = [
        pd.DataFrame(
            {"site": "wide", "y": OFFSET + rng.normal(0, 0.1, 400), "x": rng.normal(5, 1, 400)}
        ),
        pd.DataFrame(
            {
                "site": "narrow",
                "y": OFFSET + 0.05 + rng.normal(0, 0.1, 300),
                "x": rng.normal(5, 1, 300),
            }
        ),
        pd.DataFrame({"site": "single", "y": [OFFSET + 0.3], "x": [4.0]}),
        pd.DataFrame({"site": "constant", "y": [OFFSET] * 5, "x": [1.0, 2, 3, 4, 5]}),
        pd.DataFrame({"site": "empty", "y": [np.nan] * 4, "x": [1.0] * 4}),
        pd.DataFrame({"site": [None] * 3, "y": OFFSET + np.array([0.1, 0.2, 0.3]), "x": [1.0] * 3}),
        pd.DataFrame({"site": "inf", "y": [np.inf, -np.inf], "x": [1.0, 2.0]}),
    ]
    frame = pd.concat(frames, ignore_index=True)
    frame.to_parquet(tmp_path / "hard.parquet", index=False)
    (tmp_path / "brief.yaml").write_text(
        "title: Hard inputs\n"
        "data:\n  path: hard.parquet\n"
        "target: y\ngroups: [site]\npredictors: [x]\n"
        "output:\n  dir: out\n  formats: [html, json]\n"
    )
    return tmp_path, frame


def test_brief_builds_and_keeps_the_digits(hard_case, capsys):
    folder, frame = hard_case
    assert main(["build", str(folder / "brief.yaml")]) == 0
    payload = json.loads((folder / "out" / "stats.json").read_text())
    stats = payload["stats"]
    groups = {s["level"]: s for s in stats["groups"][0]["summaries"]}

    for site in ("wide", "narrow"):
        values = frame.loc[frame.site == site, "y"].tolist()
        mean, sd = _exact_mean_sd(values)
        # Reference: exact rational arithmetic on the stored float64 values.
        assert groups[site]["mean"] == pytest.approx(mean, rel=0, abs=4e-4)  # a few ulps at 1e12
        assert groups[site]["sd"] == pytest.approx(sd, rel=1e-9)

    assert (
        groups["single"]["n"] == 1
        and groups["single"]["sd"] is None
        and groups["single"]["ci_low"] is None
    )
    assert groups["constant"]["sd"] == 0.0
    assert (
        groups["empty"]["n"] == 0
        and groups["empty"]["missing"] == 4
        and groups["empty"]["mean"] is None
    )
    assert groups["inf"]["n"] == 0 and groups["inf"]["missing"] == 2

    accounting = stats["accounting"]
    assert accounting["rows_read"] == len(frame)
    assert accounting["target_missing"] == 4
    assert accounting["target_not_finite"] == 2
    assert stats["groups"][0]["rows_without_level"] == 3

    # The comparison leaves out levels it cannot test, and says so.
    comparison = stats["groups"][0]["comparison"]
    assert "single" in comparison["excluded_levels"]

    html = (folder / "out" / "brief.html").read_text()
    # Spread 0.1 at 1e12: the table shows three decimals, enough to tell the sites apart.
    assert f"{groups['wide']['mean']:,.3f}" in html
    assert f"{groups['narrow']['mean']:,.3f}" in html
    assert "not a finite number" in html
    assert "Small groups in site" in html
