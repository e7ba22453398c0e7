"""Spans written in the unit that fits them, computed from the calendar dates."""

from __future__ import annotations

import datetime as dt

import pytest
from dateutil.relativedelta import relativedelta

from briefgen.numbers import fmt_span

D = dt.date


@pytest.mark.parametrize(
    ("first", "last", "expected"),
    [
        (D(1999, 1, 1), D(2011, 1, 1), "12 years"),
        (D(1991, 1, 1), D(2010, 1, 1), "19 years"),
        (D(2023, 1, 1), D(2024, 8, 1), "19 months"),
        (D(2024, 1, 1), D(2024, 3, 11), "10 weeks"),
        (D(2024, 1, 1), D(2024, 2, 15), "45 days"),
        (D(2024, 1, 1), D(2024, 1, 2), "1 day"),
        (D(2024, 1, 1), D(2024, 1, 1), "under a day"),
        (D(2020, 3, 15), D(2024, 9, 30), "4.6 years"),
        (D(2022, 1, 31), D(2022, 8, 30), "7 months"),
        (dt.datetime(2024, 5, 6, 8), dt.datetime(2024, 5, 20, 22), "14 days"),
    ],
)
def test_span_wording(first, last, expected):
    # The unit rule (days to 60, weeks to half a year, months to two years) is common
    # practice, no published source; the counts are checked against dateutil below.
    assert fmt_span(first, last) == expected


@pytest.mark.parametrize(
    ("first", "last"),
    [
        (D(2001, 1, 1), D(2013, 1, 1)),
        (D(2019, 5, 31), D(2020, 11, 30)),
        (D(2010, 2, 28), D(2016, 8, 28)),
    ],
)
def test_months_and_years_match_dateutil(first, last):
    delta = relativedelta(last, first)  # reference: dateutil's calendar difference
    months = delta.years * 12 + delta.months + (delta.days >= 15)
    text = fmt_span(first, last)
    if months < 24:
        assert text == f"{months} months"
    else:
        assert text == f"{round(months / 12, 1):g} years"


def test_weeks_and_days_match_date_arithmetic():
    for days in (59, 60, 61, 100, 182):
        text = fmt_span(D(2024, 1, 1), D(2024, 1, 1) + dt.timedelta(days=days))
        expected = f"{days} days" if days <= 60 else f"{round(days / 7)} weeks"
        assert text == expected
    assert fmt_span(D(2024, 1, 1), D(2024, 7, 2)) == "6 months"  # 183 days


def test_backwards_span_refused():
    with pytest.raises(ValueError, match="before it starts"):
        fmt_span(D(2024, 2, 1), D(2024, 1, 1))
