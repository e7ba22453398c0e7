"""Interval bounds never print equal from rounding ("0.1% to 0.1%")."""

from __future__ import annotations

import math

from hypothesis import given
from hypothesis import strategies as st

from briefgen.numbers import MAX_EXTRA_DECIMALS, fmt, fmt_interval


def test_bounds_that_round_alike_get_more_decimals():
    assert fmt_interval(0.00051, 0.00149, 3) == "0.0005 to 0.0015"
    assert fmt_interval(0.061, 0.138, 0, suffix="%") == "0.06% to 0.14%"
    assert fmt_interval(12.3401, 12.3449, 1) == "12.340 to 12.345"


def test_bounds_that_already_differ_keep_their_decimals():
    assert fmt_interval(1.04, 2.96, 1) == "1.0 to 3.0"
    assert fmt_interval(-1.5, 2.25, 2, sign=True) == "−1.50 to +2.25"


def test_equal_bounds_and_missing_bounds_are_left_as_they_are():
    assert fmt_interval(0.5, 0.5, 1) == "0.5 to 0.5"
    assert fmt_interval(None, 1.0, 1) == "– to 1.0"


def test_the_search_stops_at_its_limit():
    # Bounds 1e-9 apart cannot be told apart with 4 more decimals: show them as they are.
    text = fmt_interval(1.0, 1.0 + 1e-9, 2)
    assert (
        text == f"{fmt(1.0, 2 + MAX_EXTRA_DECIMALS)} to {fmt(1.0 + 1e-9, 2 + MAX_EXTRA_DECIMALS)}"
    )


@given(
    low=st.floats(min_value=-1e6, max_value=1e6, allow_nan=False),
    width=st.floats(min_value=0.0, max_value=1e3, allow_nan=False),
    decimals=st.integers(min_value=0, max_value=4),
)
def test_bounds_further_apart_than_the_finest_step_never_read_equal(low, width, decimals):
    high = low + width
    low_text, _, high_text = fmt_interval(low, high, decimals).partition(" to ")
    finest = 10.0 ** -(decimals + MAX_EXTRA_DECIMALS)
    if high - low > 1.01 * finest:
        assert low_text != high_text
    # Never fewer decimals than asked, never more than the limit.
    shown = len(low_text.partition(".")[2])
    assert decimals <= shown <= decimals + MAX_EXTRA_DECIMALS
    # Decimals are added only when the asked-for ones print equal bounds.
    if fmt(low, decimals) != fmt(high, decimals):
        assert (low_text, high_text) == (fmt(low, decimals), fmt(high, decimals))
    assert math.isclose(float(low_text.replace(",", "").replace("−", "-")), low, abs_tol=0.5)
