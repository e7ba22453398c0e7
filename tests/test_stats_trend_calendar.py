"""Yearly and quarterly trends, years as numbers, and partial edge periods left out of the fit.

Constructed, seeded data; references are pandas periods, numpy polyfit and statsmodels OLS
on the same period means.
"""

from __future__ import annotations

import datetime as dt
import uuid
from pathlib import Path

import ibis
import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from briefgen.config import parse_spec
from briefgen.stats.core.frame import build_frame
from briefgen.stats.periods import period_label, runs
from briefgen.stats.trend import time_trend
from briefgen.trend_text import partial_text, span_text

FIRST_YEAR, YEARS, ROWS_PER_YEAR = 1991, 20, 30


def yearly_frame(seed: int = 4, drop: tuple[int, ...] = ()) -> pd.DataFrame:
    """Rows per year with a rise of 1.5 a year, a shared shock per year and row noise."""
    rng = np.random.default_rng(seed)
    years = np.repeat(np.arange(FIRST_YEAR, FIRST_YEAR + YEARS), ROWS_PER_YEAR)
    shock = np.repeat(rng.normal(0, 2, YEARS), ROWS_PER_YEAR)
    y = 100 + 1.5 * (years - FIRST_YEAR) + shock + rng.normal(0, 5, len(years))
    frame = pd.DataFrame({"year": years.astype("int64"), "y": y})
    return frame[~frame.year.isin(drop)].reset_index(drop=True)


def frame_trend(frame: pd.DataFrame, folder: Path, column: str, period: str = "auto"):
    """The trend as a brief computes it: the spec's time column through build_frame."""
    path = folder / f"data-{uuid.uuid4().hex}.parquet"
    frame.to_parquet(path)
    table = ibis.duckdb.connect().read_parquet(path)
    spec = parse_spec(
        f"title: t\ndata: {{path: {path}}}\ntarget: y\ntime:\n  column: {column}\n  period: {period}\n"
    )
    analysis = build_frame(table, spec, cache=False)
    return time_trend(analysis.table, period=spec.time.period)


def midpoint_days(starts: pd.PeriodIndex, first: pd.Timestamp) -> np.ndarray:
    """Period midpoints in days since the first time, from pandas Period starts."""
    begin = starts.start_time
    middle = begin + ((starts + 1).start_time - begin) / 2
    return (middle - first).total_seconds().to_numpy() / 86_400


def test_numeric_year_column_is_yearly(tmp_path):
    frame = yearly_frame()
    trend = frame_trend(frame, tmp_path, "year")
    assert (trend.period, trend.resolution, trend.partial_periods) == ("year", "year", "none")
    assert [p.start for p in trend.periods] == [dt.date(y, 1, 1) for y in range(1991, 2011)]
    assert not any(p.partial for p in trend.periods)  # 1 January stands for its whole year
    # reference: pandas groupby means per year; statsmodels OLS on them at the year midpoints
    means = frame.groupby("year")["y"].mean()
    index = pd.PeriodIndex([pd.Period(str(y), "Y") for y in means.index])
    x = midpoint_days(index, pd.Timestamp("1991-01-01"))
    ols = sm.OLS(means.to_numpy(), sm.add_constant(x)).fit()
    assert trend.fit.n == YEARS
    assert trend.fit.slope == pytest.approx(ols.params[1], rel=1e-9)
    low, high = ols.conf_int(alpha=0.05)[1]
    assert (trend.fit.slope_ci_low, trend.fit.slope_ci_high) == pytest.approx((low, high), rel=1e-9)
    span = (pd.Timestamp("2010-01-01") - pd.Timestamp("1991-01-01")).days
    assert trend.span_days == span
    assert trend.change == pytest.approx(ols.params[1] * span, rel=1e-9)
    # About 1.5 a year over 19 years, as constructed.
    assert trend.change == pytest.approx(1.5 * 19, rel=0.15)
    assert span_text(trend) == "From 1991 to 2010 (19 years; 20 yearly means in the fit)"
    assert partial_text(trend) == ""


def test_year_as_dates_and_as_text_give_the_same_trend(tmp_path):
    frame = yearly_frame(seed=9)
    numeric = frame_trend(frame, tmp_path, "year")
    as_dates = frame.assign(year=pd.to_datetime(frame.year.astype(str) + "-01-01"))
    dated = frame_trend(as_dates, tmp_path, "year")
    as_text = frame.assign(year=frame.year.astype(str))
    text = frame_trend(as_text, tmp_path, "year")
    for other in (dated, text):
        assert other.period == "year" and other.resolution == "year"
        assert [(p.start, p.n) for p in other.periods] == [(p.start, p.n) for p in numeric.periods]
        # Same rows, so the same numbers up to the engine's order of summation.
        assert [p.mean for p in other.periods] == pytest.approx(
            [p.mean for p in numeric.periods], rel=1e-12
        )
        assert other.change == pytest.approx(numeric.change, rel=1e-9)


def test_years_out_of_range_or_fractional_are_missing(tmp_path):
    frame = yearly_frame(seed=2)
    frame["year"] = frame.year.astype(float)
    frame.loc[0, "year"] = 1991.5  # not a whole year
    frame.loc[1, "year"] = 12  # not a year in 1000..9999
    frame.loc[2, "year"] = np.nan
    trend = frame_trend(frame, tmp_path, "year")
    assert trend.rows_without_time == 3
    assert trend.rows_used == len(frame) - 3 and trend.period == "year"


def test_yearly_gap_is_listed_and_breaks_the_runs(tmp_path):
    trend = frame_trend(yearly_frame(drop=(2000,)), tmp_path, "year")
    assert trend.gaps == (dt.date(2000, 1, 1),)
    starts = [p.start for p in trend.periods]
    assert runs(starts, "year") == ((0, 9), (9, 19))


def spread_frame(start: str, end: str, n: int, seed: int, slope_per_day: float) -> pd.DataFrame:
    """Random intraday timestamps from ``start`` to ``end`` with a linear rise and noise."""
    rng = np.random.default_rng(seed)
    first, last = pd.Timestamp(start), pd.Timestamp(end)
    days = np.sort(rng.uniform(0, (last - first).total_seconds() / 86_400, n))
    t = (first + pd.to_timedelta(days, unit="D")).floor("s").as_unit("us")
    return pd.DataFrame({"t": t, "y": 20 + slope_per_day * days + rng.normal(0, 2, n)})


def reference_means(frame: pd.DataFrame, freq: str) -> tuple[pd.Series, np.ndarray]:
    """Period means (pandas groupby) and their midpoints in days since the first time."""
    means = frame.groupby(frame.t.dt.to_period(freq))["y"].mean()
    return means, midpoint_days(means.index, frame.t.min())


def test_quarterly_auto_and_partial_quarters_left_out(tmp_path):
    frame = spread_frame("2019-02-10 09:00", "2023-11-20 17:00", 3000, seed=5, slope_per_day=0.01)
    trend = frame_trend(frame, tmp_path, "t")
    assert (trend.period, trend.resolution) == ("quarter", "intraday")
    assert trend.partial_periods == "left_out"
    assert trend.left_out_of_fit == (dt.date(2019, 1, 1), dt.date(2023, 10, 1))
    assert [p.in_fit for p in trend.periods] == [False] + [True] * 18 + [False]
    means, x = reference_means(frame, "Q")
    assert list(means.index.start_time.date) == [p.start for p in trend.periods]
    inner = slice(1, -1)
    # reference: numpy polyfit through the fully covered quarters only
    slope, intercept = np.polyfit(x[inner], means.to_numpy()[inner], 1)
    assert trend.fit.slope == pytest.approx(slope, rel=1e-9)
    assert trend.fit.intercept == pytest.approx(intercept, rel=1e-9)
    ols = sm.OLS(means.to_numpy()[inner], sm.add_constant(x[inner])).fit()
    low, high = ols.conf_int(alpha=0.05)[1]  # reference: statsmodels OLS, 18 − 2 df
    assert (trend.change_ci_low, trend.change_ci_high) == pytest.approx(
        (low * trend.span_days, high * trend.span_days), rel=1e-9
    )
    assert (
        span_text(trend)
        == "From 10 Feb 2019 to 20 Nov 2023 (4.8 years; 18 quarterly means in the fit)"
    )
    assert "first and last quarters (2019 Q1, 2023 Q4)" in partial_text(trend)
    assert "left out of the fit" in partial_text(trend)


def test_thin_partial_edges_do_not_drive_the_slope(tmp_path):
    # Flat monthly data, but the first month holds only its last two days and the last
    # month only its first two, both far above the rest: a fit through every month tilts.
    rng = np.random.default_rng(12)
    body = spread_frame("2022-02-01", "2023-12-31 23:00", 2000, seed=3, slope_per_day=0.0)
    edges = pd.DataFrame(
        {
            "t": pd.to_datetime(["2022-01-30 10:00", "2022-01-31 10:00", "2024-01-01 10:00"]),
            "y": [20.0, 20.0, 45.0] + rng.normal(0, 0.1, 3),
        }
    )
    frame = pd.concat([edges.iloc[:2], body, edges.iloc[2:]], ignore_index=True)
    frame["t"] = frame.t.astype("datetime64[us]")
    trend = frame_trend(frame, tmp_path, "t", period="month")
    assert trend.left_out_of_fit == (dt.date(2022, 1, 1), dt.date(2024, 1, 1))
    means, x = reference_means(frame, "M")
    # reference: numpy polyfit through the 23 full months, and through all 25 months
    full_slope = np.polyfit(x[1:-1], means.to_numpy()[1:-1], 1)[0]
    all_slope = np.polyfit(x, means.to_numpy(), 1)[0]
    assert trend.fit.slope == pytest.approx(full_slope, rel=1e-9)
    assert abs(all_slope) > 5 * abs(full_slope)  # the edges would have driven the line
    assert trend.change_ci_low < 0 < trend.change_ci_high  # flat in the full months


def test_partial_edges_kept_when_fewer_than_three_would_remain(tmp_path):
    frame = spread_frame("2024-01-20", "2024-03-10", 300, seed=8, slope_per_day=0.05)
    trend = frame_trend(frame, tmp_path, "t", period="month")
    assert [p.partial for p in trend.periods] == [True, False, True]
    assert trend.partial_periods == "kept" and trend.left_out_of_fit == ()
    means, x = reference_means(frame, "M")
    slope = np.polyfit(x, means.to_numpy(), 1)[0]  # reference: numpy polyfit on all 3 months
    assert trend.fit.n == 3 and trend.fit.slope == pytest.approx(slope, rel=1e-9)
    assert "kept in the fit" in partial_text(trend)
    assert "fewer than 3 months would remain" in partial_text(trend)


def test_quarterly_values_on_quarter_starts_cover_their_quarter(tmp_path):
    rng = np.random.default_rng(21)
    starts = pd.period_range("2015Q1", "2021Q4", freq="Q").start_time
    frame = pd.DataFrame(
        {"t": np.repeat(starts, 5).as_unit("us"), "y": rng.normal(10, 1, 5 * len(starts))}
    )
    trend = frame_trend(frame, tmp_path, "t")
    assert (trend.period, trend.resolution, trend.partial_periods) == ("quarter", "quarter", "none")
    assert len(trend.periods) == 28 and trend.gaps == ()
    assert span_text(trend) == "From 2015 Q1 to 2021 Q4 (6.8 years; 28 quarterly means in the fit)"


def test_monthly_values_stay_monthly_over_a_short_span(tmp_path):
    # Ten monthly values span 273 days, which alone would pick weeks (mostly empty).
    starts = pd.date_range("2024-01-01", periods=10, freq="MS").as_unit("us")
    frame = pd.DataFrame({"t": starts, "y": np.arange(10.0)})
    trend = frame_trend(frame, tmp_path, "t")
    assert (trend.period, trend.resolution) == ("month", "month")
    assert trend.gaps == () and not any(p.partial for p in trend.periods)


def test_period_labels():
    # Quarters start in January, April, July and October (reference: pandas Period "Q").
    day = dt.date(2024, 8, 1)
    assert period_label(day, "quarter") == str(pd.Period(day, "Q")).replace("Q", " Q")
    assert period_label(day, "year") == "2024" and period_label(day, "month") == "2024-08"
    assert period_label(day, "day") == "2024-08-01"


def test_values_every_fifth_year_have_a_cadence_not_gaps(tmp_path):
    rng = np.random.default_rng(30)
    years = [y for y in range(1800, 1900, 5) if y != 1850]
    frame = pd.DataFrame({"year": years, "y": rng.normal(40, 5, len(years))})
    trend = frame_trend(frame, tmp_path, "year")
    assert (trend.period, trend.cadence) == ("year", 5)
    # reference: pandas period_range at a 5-year step, minus the years present
    every = pd.period_range("1800", "1895", freq="5Y").start_time.date
    assert trend.gaps == tuple(d for d in every if d.year not in years) == (dt.date(1850, 1, 1),)
    assert runs([p.start for p in trend.periods], "year") == ((0, 10), (10, 19))
