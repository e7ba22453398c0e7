"""Chart-choice rules on constructed cases where each must fire and where it must not.

Each rule cites its source in briefgen/figures/rules.py; the cases here are
constructed (no data set), with numpy as the reference for quantiles.
"""

from __future__ import annotations

import numpy as np
import pytest

from briefgen.figures import rules
from briefgen.stats.periods import runs


def test_axis_kind_categorical_continuous_time():
    # Cleveland (1985): categories at even positions, numbers and dates on true scales.
    assert rules.axis_kind(numeric=False) == rules.CATEGORICAL_AXIS
    assert rules.axis_kind(numeric=True) == rules.CONTINUOUS_AXIS
    assert rules.axis_kind(numeric=True, temporal=True) == rules.TIME_AXIS


def test_time_line_breaks_at_gaps_and_not_elsewhere():
    # Months 0, 1, 2, 4, 5: month 3 is missing, so two segments; no gap gives one.
    assert rules.segments_at_gaps([0, 1, 2, 4, 5]) == ((0, 3), (3, 5))
    assert rules.segments_at_gaps([0, 1, 2, 3]) == ((0, 4),)
    # Quarterly cadence in month numbers: a step of 3 is no gap, 6 is.
    assert rules.segments_at_gaps([0, 3, 6, 12], step=3) == ((0, 3), (3, 4))
    assert rules.segments_at_gaps([]) == ()


def test_segments_agree_with_the_trend_runs():
    import datetime as dt

    starts = [dt.date(2024, m, 1) for m in (1, 2, 3, 5, 6, 9)]
    numbers = [s.year * 12 + s.month for s in starts]
    # The trend chart draws one line per run; the rule and stats.periods.runs agree.
    assert rules.segments_at_gaps(numbers) == runs(starts, "month")


@pytest.mark.parametrize(
    ("values", "differ"),
    [
        ([1.0, 9.9], False),  # just under tenfold
        ([1.0, 10.5], True),  # just over
        ([-200.0, 3.0], True),  # sizes, whatever the sign
        ([0.0, 5.0, 40.0], False),  # zeros ignored: 5 to 40 is eightfold
        ([7.0], False),
        ([float("nan"), 1.0, 1e6], True),
    ],
)
def test_magnitudes_differ_by_more_than_tenfold(values, differ):
    assert rules.magnitudes_differ(values) is differ


def test_bars_start_at_zero():
    # Tufte (1983): a bar axis cut above zero exaggerates differences (lie factor).
    assert rules.bar_limits(40.0, 90.0) == (0.0, 90.0)
    assert rules.bar_limits(-5.0, 12.0) == (-5.0, 12.0)
    assert rules.bar_limits(-9.0, -2.0) == (-9.0, 0.0)


def test_level_order_natural_for_numbers_else_by_value():
    means = {"2": 5.0, "10": 9.0, "4": 7.0}
    # Numbered levels keep numeric order (not label order 10, 2, 4, nor by value).
    assert rules.level_order(["2", "10", "4"], means) == (("2", "4", "10"), rules.NATURAL_ORDER)
    named = {"north": 1.0, "east": 3.0, "west": 2.0}
    assert rules.level_order(list(named), named) == (
        ("east", "west", "north"),
        rules.VALUE_ORDER,
    )
    # Numbers in the data (a numeric column used as a group) keep their order too.
    assert rules.level_order(["2", "10"], {"2": 1.0, "10": 0.0}, numeric=True)[1] == (
        rules.NATURAL_ORDER
    )


def test_level_order_puts_other_last_and_levels_without_value_after():
    levels = ["3", "Other (4 levels)", "1", "2"]
    order, rule = rules.level_order(levels, {}, other_label="Other (4 levels)")
    assert order == ("1", "2", "3", "Other (4 levels)") and rule == rules.NATURAL_ORDER
    order, _ = rules.level_order(["a", "b", "c"], {"a": None, "b": 1.0, "c": 2.0})
    assert order == ("c", "b", "a")


def test_is_natural_order():
    assert rules.is_natural_order(["07-10", "10-13", "13-16"])
    assert not rules.is_natural_order(["07-10", "late"])
    assert not rules.is_natural_order([])


def test_fold_levels_keeps_at_most_the_shown_levels():
    ranked = [f"L{i}" for i in range(15)]
    kept, folded = rules.fold_levels(ranked, 12)
    # 11 named levels and one "Other" fill the 12 places.
    assert kept == tuple(ranked[:11]) and folded == tuple(ranked[11:])
    assert rules.fold_levels(ranked[:12], 12) == (tuple(ranked[:12]), ())


def test_points_or_density_threshold():
    # At the sample size a scatter still shows every row; one more and it would sample.
    assert rules.points_or_density(5000) == "points"
    assert rules.points_or_density(5001) == rules.BINNED_DENSITY


@pytest.mark.parametrize(
    ("rows", "columns", "kind"),
    [
        (6, 3, "dots"),  # the demo's district × vehicle
        (3, 6, "dots"),  # either way round
        (7, 5, rules.HEAT_MAP),  # five series side by side crowd a row
        (6, 5, rules.HEAT_MAP),  # the fair data's 6 × 5: 30 crowded intervals
        (12, 3, rules.HEAT_MAP),  # 36 cells crowd a dot plot
        (6, 4, "dots"),  # 24 cells still read
    ],
)
def test_two_way_kind(rows, columns, kind):
    assert rules.two_way_kind(rows, columns) == kind


def test_overlay_or_multiples():
    assert rules.overlay_or_multiples(3) == "overlay"
    assert rules.overlay_or_multiples(4) == rules.SMALL_MULTIPLES


def _axis(values: np.ndarray) -> rules.ValueAxis:
    # Reference quantiles: numpy.quantile, method "linear" (Hyndman & Fan type 7).
    return rules.value_axis(
        float(values.min()),
        float(values.max()),
        float(np.quantile(values, rules.CLIP_QUANTILE)),
        float(np.quantile(values, 1 - rules.CLIP_QUANTILE)),
    )


def test_value_axis_linear_for_a_symmetric_target():
    values = np.random.default_rng(1).normal(50, 10, 5000)
    assert _axis(values).kind == "linear" and _axis(values).rule is None


def test_value_axis_clipped_for_a_zero_heavy_count():
    rng = np.random.default_rng(2)
    # Constructed after the fair data's shape: most values 0, a few far out (up to 60).
    values = np.where(rng.random(2000) < 0.75, 0.0, rng.integers(1, 12, 2000)).astype(float)
    values[:15] = np.linspace(20, 60, 15)
    axis = _axis(values)
    assert axis.kind == "clipped" and axis.rule == rules.CLIPPED_AXIS
    assert axis.top == pytest.approx(np.quantile(values, 0.99))
    assert axis.quantile == 0.99


def test_value_axis_log_for_a_positive_skewed_target():
    values = np.random.default_rng(3).lognormal(0, 1.5, 3000)
    axis = _axis(values)
    assert axis.kind == "log" and axis.rule == rules.LOG_AXIS


def test_value_axis_stays_linear_for_a_positive_target_with_a_short_tail():
    # Positive and spanning a hundredfold, but the tail above the 99th percentile is short.
    values = np.linspace(1.0, 100.0, 1000)
    assert _axis(values).kind == "linear"
