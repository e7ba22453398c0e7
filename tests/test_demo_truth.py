"""The demo brief finds what the seeded generator put in, and nothing it did not.

The demo data are invented (briefgen/demo/generate.py); these checks tie the
brief's findings to the generator's recorded truth, not to an outside reference.
"""

from __future__ import annotations

import pytest

from briefgen.cli import demo_config_path
from briefgen.config import load_spec
from briefgen.demo.generate import MISSING_DISTANCE, MISSING_MINUTES, ROWS, TRUTH, generate
from briefgen.source import open_source
from briefgen.stats import compute


@pytest.fixture(scope="module")
def stats():
    spec = load_spec(demo_config_path())
    return compute(open_source(spec), spec)


def _leaned_p(comparison):
    if comparison.leans_on == "rank":
        return comparison.rank_test.p_value
    return comparison.p_value


def test_committed_csv_matches_the_generator(tmp_path):
    import pandas as pd

    committed = pd.read_csv(demo_config_path().with_name("deliveries.csv"))
    fresh = generate()
    fresh.to_csv(tmp_path / "fresh.csv", index=False, date_format="%Y-%m-%d %H:%M:%S")
    pd.testing.assert_frame_equal(committed, pd.read_csv(tmp_path / "fresh.csv"))


def test_groups_with_real_effects_are_found(stats):
    for variable in TRUTH["groups_with_effect"]:
        assert _leaned_p(stats.comparison(variable)) < 0.001


def test_grouping_without_effect_is_not_called_a_difference(stats):
    for variable in TRUTH["groups_without_effect"]:
        assert _leaned_p(stats.comparison(variable)) > 0.05


def test_slow_cell_is_the_highest_combination(stats):
    (cross,) = stats.crosses
    trusted = [c for c in cross.cells if c.row and c.column and not c.too_small]
    top = max(trusted, key=lambda c: c.mean)
    assert {top.row, top.column} == set(TRUTH["slow_cell"])


def test_minutes_rise_with_distance(stats):
    fit = next(f for f in stats.fits if f.predictor == "distance_km")
    assert fit.slope_ci_low > 0
    # Vehicle and district factors average near 1 and lognormal noise adds e^(σ²/2) ≈ 1.02,
    # so the fitted slope lands near, not on, the generator's 3 minutes per km.
    assert 0.8 * TRUTH["slope_minutes_per_km"] < fit.slope < 1.3 * TRUTH["slope_minutes_per_km"]


def test_no_trend_was_built_in(stats):
    assert stats.trend.change_ci_low < 0 < stats.trend.change_ci_high


def test_accounting_adds_up(stats):
    acc = stats.accounting
    assert acc.rows_read == ROWS
    assert acc.target_missing == MISSING_MINUTES
    assert acc.used["target"] == ROWS - MISSING_MINUTES
    assert acc.missing_by_column["distance_km"] == MISSING_DISTANCE
    distance_dropped = next(d.rows for d in acc.dropped if "distance_km" in d.reason)
    assert acc.used["fit:distance_km"] + distance_dropped == acc.used["target"]
