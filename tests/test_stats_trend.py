"""Trend over time checked against pandas periods, numpy, scipy and statsmodels."""

from __future__ import annotations

import datetime as dt
import math
import tempfile
import uuid
from pathlib import Path

import ibis
import ibis.expr.types as ir
import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats as scipy_stats

from briefgen.stats.trend import choose_period, time_trend


def engine_table(frame: pd.DataFrame, folder: Path) -> ir.Table:
    """An engine table from a DataFrame (parquet, because create_table fails on ibis 12)."""
    path = Path(folder) / f"data-{uuid.uuid4().hex}.parquet"
    frame.to_parquet(path)  # pyarrow writes NaN in a float column as null
    return ibis.duckdb.connect().read_parquet(path)


def timed_frame(days: float, n: int, seed: int, start: str = "2023-03-15 08:30") -> pd.DataFrame:
    """Random timestamps (whole seconds) over ``days`` with a gentle upward trend in y."""
    rng = np.random.default_rng(seed)
    offsets = np.sort(rng.uniform(0, days, n))
    t = (pd.Timestamp(start) + pd.to_timedelta(offsets, unit="D")).floor("s").as_unit("us")
    y = 50 + 0.02 * offsets + rng.normal(0, 3, n)
    return pd.DataFrame({"t": t, "y": y})


# pandas labels for each period kind: 'W-SUN' weeks end on Sunday, so they start on
# Monday as ISO 8601 weeks do.
PANDAS_PERIOD = {
    "day": lambda t: t.dt.floor("D"),
    "week": lambda t: t.dt.to_period("W-SUN").dt.start_time,
    "month": lambda t: t.dt.to_period("M").dt.start_time,
    "quarter": lambda t: t.dt.to_period("Q").dt.start_time,
    "year": lambda t: t.dt.to_period("Y").dt.start_time,
}
PANDAS_FREQ = {"day": "D", "week": "W-SUN", "month": "M", "quarter": "Q", "year": "Y"}


def reference_periods(frame: pd.DataFrame, period: str, confidence: float) -> dict:
    usable = frame.dropna(subset=["t", "y"])
    starts = PANDAS_PERIOD[period](usable["t"]).dt.date
    result = {}
    for start, values in usable.groupby(starts)["y"]:  # reference: pandas groupby
        values = values.to_numpy()
        n, mean = len(values), float(np.mean(values))
        expected = {"n": n, "mean": mean, "median": float(np.percentile(values, 50))}
        if n >= 2:
            sd = float(np.std(values, ddof=1))
            # reference: scipy.stats.t.interval around the mean with its standard error
            low, high = scipy_stats.t.interval(confidence, n - 1, loc=mean, scale=sd / math.sqrt(n))
            expected |= {"sd": sd, "ci": (low, high)}
        else:
            expected |= {"sd": None, "ci": (None, None)}
        result[start] = expected
    return result


def assert_periods_match(trend, expected: dict) -> None:
    assert [p.start for p in trend.periods] == sorted(expected)
    for p in trend.periods:
        e = expected[p.start]
        assert p.n == e["n"]
        assert p.mean == pytest.approx(e["mean"], rel=1e-12)
        assert p.median == pytest.approx(e["median"], rel=1e-12)
        if e["sd"] is None:
            assert p.sd is None and p.ci_low is None and p.ci_high is None
        else:
            assert p.sd == pytest.approx(e["sd"], rel=1e-11)
            assert (p.ci_low, p.ci_high) == pytest.approx(e["ci"], rel=1e-11)


@pytest.mark.parametrize(
    ("period", "days"),
    [("day", 40), ("week", 200), ("month", 700), ("quarter", 1500), ("year", 3700)],
)
def test_periods_match_pandas(tmp_path, period, days):
    frame = timed_frame(days, 1500, seed=3)
    frame.loc[frame.index[::50], "y"] = np.nan
    frame.loc[frame.index[::70], "t"] = pd.NaT
    trend = time_trend(engine_table(frame, tmp_path), confidence=0.9, period=period)
    assert trend.period == period
    assert_periods_match(trend, reference_periods(frame, period, 0.9))
    for p in trend.periods:  # reference: Python's ISO calendar, weeks start on Monday
        if period == "week":
            assert p.start.isoweekday() == 1 and p.end - p.start == dt.timedelta(days=7)
        if period in ("month", "quarter", "year"):
            assert p.start.day == 1 and p.end.day == 1
        if period == "quarter":
            assert p.start.month in (1, 4, 7, 10) and (p.end.month - p.start.month) % 12 == 3
        if period == "year":
            assert (p.start.month, p.end.year) == (1, p.start.year + 1)


def test_counts_of_rows_used_and_left_out(tmp_path):
    frame = timed_frame(90, 300, seed=5)
    frame.loc[frame.index[::9], "y"] = np.nan
    frame.loc[frame.index[::13], "t"] = pd.NaT
    trend = time_trend(engine_table(frame, tmp_path))
    # reference: pandas isna counts
    assert trend.rows_without_time == int(frame.t.isna().sum())
    assert trend.rows_without_target == int((frame.t.notna() & frame.y.isna()).sum())
    assert trend.rows_used == int((frame.t.notna() & frame.y.notna()).sum())
    assert sum(p.n for p in trend.periods) == trend.rows_used


def reference_period_points(
    frame: pd.DataFrame, period: str, full_only: bool = True
) -> tuple[np.ndarray, np.ndarray]:
    """Period midpoints (days since the first usable time) and period means, from pandas.

    With ``full_only`` the first and last periods are dropped when the data do not reach
    their first or last calendar day, as long as at least 3 periods remain.
    """
    usable = frame.dropna(subset=["t", "y"])
    labels = usable.t.dt.to_period(PANDAS_FREQ[period])
    means = usable.groupby(labels)["y"].mean()  # reference: pandas groupby mean
    if full_only:
        first, last = usable.t.min().normalize(), usable.t.max().normalize()
        # reference: pandas Period start_time and end_time (the period's last instant)
        partial = (means.index.start_time < first) | (means.index.end_time.normalize() > last)
        if (~partial).sum() >= 3:
            means = means[~partial]
    starts = means.index.start_time
    middles = starts + ((means.index + 1).start_time - starts) / 2
    days = (middles - usable.t.min()).total_seconds().to_numpy() / 86_400
    return days, means.to_numpy()


@pytest.mark.parametrize(("period", "days"), [("day", 45), ("week", 300), ("month", 900)])
def test_overall_change_matches_linregress_and_statsmodels_on_period_means(tmp_path, period, days):
    frame = timed_frame(days, 1500, seed=8)
    frame.loc[frame.index[::25], "y"] = np.nan
    trend = time_trend(engine_table(frame, tmp_path), period=period)
    x, y = reference_period_points(frame, period)
    usable = frame.dropna()
    span = (usable.t.max() - usable.t.min()).total_seconds() / 86_400
    assert trend.span_days == pytest.approx(span, rel=1e-12)
    assert trend.fit.n == len(x) == sum(p.in_fit for p in trend.periods)
    assert len(trend.periods) == len(reference_period_points(frame, period, full_only=False)[0])
    line = scipy_stats.linregress(x, y)  # reference: scipy linregress on the period means
    assert trend.change == pytest.approx(line.slope * span, rel=1e-9)
    assert trend.change_per_30_days == pytest.approx(line.slope * 30, rel=1e-9)
    assert trend.fit.slope_se == pytest.approx(line.stderr, rel=1e-9)
    assert trend.fit.intercept == pytest.approx(line.intercept, rel=1e-9)
    assert trend.fit.intercept_se == pytest.approx(line.intercept_stderr, rel=1e-9)
    assert trend.fit.pearson_r == pytest.approx(line.rvalue, rel=1e-9)
    # reference: statsmodels OLS conf_int of the slope, periods − 2 df
    ols = sm.OLS(y, sm.add_constant(x)).fit()
    assert ols.df_resid == len(x) - 2
    low, high = ols.conf_int(alpha=0.05)[1]
    assert (trend.change_ci_low, trend.change_ci_high) == pytest.approx(
        (low * span, high * span), rel=1e-9
    )
    assert (trend.change_per_30_days_ci_low, trend.change_per_30_days_ci_high) == pytest.approx(
        (low * 30, high * 30), rel=1e-9
    )
    assert trend.fit.residual_sd == pytest.approx(math.sqrt(ols.scale), rel=1e-9)
    assert trend.fit.r_squared == pytest.approx(ols.rsquared, rel=1e-9)


def clustered_days(runs: int, days: int, rows_per_day: int, seed: int) -> pd.DataFrame:
    """No trend; every row of a day shares that day's shock (sd 1) plus its own noise (sd 3)."""
    rng = np.random.default_rng(seed)
    day = np.repeat(np.arange(days), rows_per_day)
    run = np.repeat(np.arange(runs), days * rows_per_day)
    day_shock = np.repeat(rng.normal(0, 1, runs * days), rows_per_day)
    seconds = rng.uniform(0, 86_400, runs * days * rows_per_day).round()
    t = pd.Timestamp("2024-01-01") + pd.to_timedelta(np.tile(day, runs) * 86_400 + seconds, "s")
    y = 20 + day_shock + rng.normal(0, 3, len(t))
    return pd.DataFrame({"run": run, "t": t.as_unit("us"), "y": y})


def row_level_interval(frame: pd.DataFrame) -> tuple[float, float]:
    """The row-level slope interval × span: what a fit treating rows as independent gives."""
    days = (frame.t - frame.t.min()).dt.total_seconds().to_numpy() / 86_400
    ols = sm.OLS(frame.y.to_numpy(), sm.add_constant(days)).fit()  # reference: statsmodels OLS
    low, high = ols.conf_int(alpha=0.05)[1]
    return low * days.max(), high * days.max()


def test_clustered_noise_widens_the_interval(tmp_path):
    frame = clustered_days(runs=1, days=60, rows_per_day=500, seed=31)
    trend = time_trend(engine_table(frame, tmp_path), period="day")
    x, y = reference_period_points(frame, "day")
    # reference: statsmodels OLS on the 60 day means, one point per day
    low, high = sm.OLS(y, sm.add_constant(x)).fit().conf_int(alpha=0.05)[1]
    assert (trend.change_ci_low, trend.change_ci_high) == pytest.approx(
        (low * trend.span_days, high * trend.span_days), rel=1e-9
    )
    row_low, row_high = row_level_interval(frame)
    # Day means carry the shared shock (variance 1 + 9/500) once per day, rows as if it were
    # independent 500 times: the honest interval is about √(1.018·30000/(10·60)) ≈ 7 times wider.
    width = trend.change_ci_high - trend.change_ci_low
    assert width > 4 * (row_high - row_low)


def test_clustered_noise_without_trend_rarely_excludes_zero(tmp_path):
    runs = 100
    frame = clustered_days(runs=runs, days=30, rows_per_day=100, seed=7)
    table = engine_table(frame, tmp_path)
    excluded_by_periods = excluded_by_rows = 0
    for run in range(runs):
        trend = time_trend(table.filter(table.run == run), period="day")
        excluded_by_periods += not trend.change_ci_low < 0 < trend.change_ci_high
        row_low, row_high = row_level_interval(frame[frame.run == run])
        excluded_by_rows += not row_low < 0 < row_high
    # A 95% interval should exclude a true zero in about 5% of runs: Binomial(100, 0.05)
    # exceeds 12 with probability 0.0015 (reference: scipy.stats.binom.sf(12, 100, 0.05)).
    assert excluded_by_periods <= 12
    # Rows as independent (design effect 1 + 99·0.1 ≈ 11, Kish 1965) miss about half the time.
    assert excluded_by_rows >= 30


def test_two_periods_give_a_line_without_an_interval(tmp_path):
    stamps = pd.to_datetime(["2024-05-06 08:00", "2024-05-06 20:00", "2024-05-07 09:00"])
    frame = pd.DataFrame({"t": stamps, "y": [1.0, 3.0, 5.0]})
    trend = time_trend(engine_table(frame, tmp_path), period="day")
    x, y = reference_period_points(frame, "day")
    slope, intercept = np.polyfit(x, y, 1)  # reference: numpy polyfit through the two means
    assert trend.change == pytest.approx(slope * 25 / 24, rel=1e-12)
    assert trend.fit.intercept == pytest.approx(intercept, rel=1e-12)
    assert trend.change_per_30_days == pytest.approx(slope * 30, rel=1e-12)
    assert trend.change_ci_low is None and trend.change_ci_high is None
    assert trend.change_per_30_days_ci_low is None and trend.change_per_30_days_ci_high is None
    assert trend.fit.slope_se is None and trend.fit.residual_sd is None


def test_large_offset_exact(tmp_path):
    frame = timed_frame(120, 1200, seed=13)
    rng = np.random.default_rng(2)
    centred = rng.normal(0, 0.1, len(frame)) + 1e-4 * np.arange(len(frame)) / len(frame)
    frame["y"] = 1e9 + centred
    trend = time_trend(engine_table(frame, tmp_path), period="week")
    # y - 1e9 is exact (Sterbenz's lemma), so the offset-free data are the same numbers.
    shifted = frame.assign(y=frame.y - 1e9)
    expected = reference_periods(shifted, "week", 0.95)
    for p in trend.periods:
        sd = expected[p.start]["sd"]  # reference: numpy sd on the offset-free data
        assert abs(p.sd - sd) / sd < 1e-9
        assert abs((p.mean - 1e9) - expected[p.start]["mean"]) < 4 * np.spacing(1e9)
    x, y = reference_period_points(shifted, "week")
    line = scipy_stats.linregress(x, y)  # reference: linregress on the offset-free period means
    assert trend.fit.slope == pytest.approx(line.slope, rel=1e-9)
    assert trend.fit.slope_se == pytest.approx(line.stderr, rel=1e-9)
    assert trend.fit.intercept - 1e9 == pytest.approx(line.intercept, abs=4 * np.spacing(1e9))


def test_auto_period_rule():
    # The rule stated in choose_period's docstring (common practice, no published source).
    assert [choose_period(d) for d in (0, 31, 60)] == ["day"] * 3
    assert [choose_period(d) for d in (60.5, 200, 420)] == ["week"] * 3
    assert [choose_period(d) for d in (420.5, 900, 1095)] == ["month"] * 3
    assert [choose_period(d) for d in (1100, 2000, 2921)] == ["quarter"] * 3
    assert [choose_period(d) for d in (2923, 7000, 40_000)] == ["year"] * 3
    # Never finer than the data are recorded: yearly values stay yearly over any span.
    assert [choose_period(d, "year") for d in (0, 400, 3000)] == ["year"] * 3
    assert choose_period(300, "month") == "month" and choose_period(3000, "month") == "year"
    assert choose_period(30, "day") == choose_period(30, "intraday") == "day"


@pytest.mark.parametrize(
    ("days", "period"),
    [(20, "day"), (150, "week"), (900, "month"), (2000, "quarter"), (4000, "year")],
)
def test_auto_gives_a_readable_number_of_points(tmp_path, days, period):
    frame = timed_frame(days, 2000, seed=days)
    trend = time_trend(engine_table(frame, tmp_path))
    assert trend.period == period
    assert 8 <= len(trend.periods) <= 61  # common practice, no published source


def test_partial_first_and_last_periods(tmp_path):
    # 2024-01-03 is a Wednesday (reference: Python's calendar); data end 2024-03-31, a Sunday.
    stamps = pd.date_range("2024-01-03", "2024-03-31 18:00", freq="6h")
    frame = pd.DataFrame({"t": stamps, "y": np.arange(len(stamps), dtype=float)})
    monthly = time_trend(engine_table(frame, tmp_path), period="month")
    assert [p.partial for p in monthly.periods] == [True, False, False]
    weekly = time_trend(engine_table(frame, tmp_path), period="week")
    assert weekly.periods[0].partial and weekly.periods[0].start == dt.date(2024, 1, 1)
    assert not any(p.partial for p in weekly.periods[1:])  # last week ends Sunday 31 March
    daily = time_trend(engine_table(frame, tmp_path), period="day")
    assert not any(p.partial for p in daily.periods)
    shorter = time_trend(engine_table(frame[frame.t < "2024-03-30"], tmp_path), period="month")
    assert [p.partial for p in shorter.periods] == [True, False, True]


def test_gaps_listed(tmp_path):
    frame = timed_frame(120, 600, seed=21, start="2024-01-01")
    week = frame.t.dt.to_period("W-SUN")
    frame = frame[week != week.iloc[300]]  # drop one whole ISO week
    trend = time_trend(engine_table(frame, tmp_path), period="week")
    # reference: pandas period_range over the span, minus the weeks present
    every = pd.period_range(week.min(), week.max(), freq="W-SUN").start_time.date
    present = set(frame.t.dt.to_period("W-SUN").dt.start_time.dt.date)
    assert trend.gaps == tuple(d for d in every if d not in present)
    assert len(trend.gaps) == 1


def test_single_period_and_single_row_period(tmp_path):
    stamps = pd.to_datetime(["2024-05-06 08:00", "2024-05-06 12:00", "2024-05-06 20:00"])
    frame = pd.DataFrame({"t": stamps, "y": [1.0, 2.0, 4.0]})
    trend = time_trend(engine_table(frame, tmp_path))
    assert trend.period == "day" and len(trend.periods) == 1
    assert_periods_match(trend, reference_periods(frame, "day", 0.95))
    # One period is one point: no slope, so no change (common practice, no published source).
    assert trend.change is None and trend.change_ci_low is None and trend.change_ci_high is None
    assert trend.change_per_30_days is None and trend.fit.n == 1

    lone = pd.DataFrame(
        {"t": pd.to_datetime(["2024-05-06", "2024-05-07", "2024-05-07"]), "y": [3.0, 1.0, 2.0]}
    )
    trend = time_trend(engine_table(lone, tmp_path), period="day")
    first = trend.periods[0]
    assert (first.n, first.mean, first.sd, first.ci_low, first.ci_high) == (
        1,
        3.0,
        None,
        None,
        None,
    )
    assert_periods_match(trend, reference_periods(lone, "day", 0.95))


def test_one_timestamp_and_no_usable_rows(tmp_path):
    same = pd.DataFrame({"t": pd.to_datetime(["2024-05-06"] * 3), "y": [1.0, 2.0, 3.0]})
    trend = time_trend(engine_table(same, tmp_path))
    assert len(trend.periods) == 1 and trend.span_days == 0
    assert trend.change is None and trend.change_ci_low is None  # no spread in time, no slope
    empty = pd.DataFrame({"t": pd.to_datetime(["2024-05-06", None]), "y": [np.nan, 2.0]})
    trend = time_trend(engine_table(empty, tmp_path))
    assert trend.periods == () and trend.change is None and trend.rows_used == 0
    assert (trend.rows_without_time, trend.rows_without_target) == (1, 1)


def test_unknown_period_rejected(tmp_path):
    with pytest.raises(ValueError, match="period"):
        time_trend(engine_table(timed_frame(10, 20, seed=1), tmp_path), period="fortnight")


@settings(max_examples=10, deadline=None)
@given(
    st.lists(
        st.datetimes(min_value=dt.datetime(1999, 12, 1), max_value=dt.datetime(2001, 3, 1)),
        min_size=1,
        max_size=30,
    ),
    st.sampled_from(["day", "week", "month", "quarter", "year"]),
)
def test_bucketing_matches_pandas_for_any_timestamps(stamps, period):
    frame = pd.DataFrame({"t": pd.to_datetime(stamps).as_unit("us"), "y": 1.0})
    with tempfile.TemporaryDirectory() as folder:
        trend = time_trend(engine_table(frame, Path(folder)), period=period)
    counts = frame.groupby(PANDAS_PERIOD[period](frame.t).dt.date).size()  # reference: pandas
    assert {p.start: p.n for p in trend.periods} == counts.to_dict()


def reference_serial_correlation(frame: pd.DataFrame, period: str, full_only: bool = True) -> float:
    """statsmodels' acf at lag 1 of the OLS residuals of period means on their midpoints.

    Values dated 1 January cover their year, so yearly series pass ``full_only=False``.
    """
    from statsmodels.tsa.stattools import acf

    days, means = reference_period_points(frame, period, full_only)
    residuals = sm.OLS(means, sm.add_constant(days)).fit().resid  # reference: statsmodels OLS
    return float(acf(residuals, nlags=1)[1])  # reference: statsmodels acf, lag 1


def macrodata_frame() -> pd.DataFrame:
    """statsmodels.datasets.macrodata (US quarterly macro series 1959Q1–2009Q3), shipped offline."""
    from statsmodels.datasets import macrodata

    data = macrodata.load_pandas().data
    start = pd.PeriodIndex.from_fields(
        year=data.year.astype(int), quarter=data.quarter.astype(int), freq="Q"
    ).start_time
    return pd.DataFrame({"t": start.as_unit("us"), "y": data.realint.to_numpy()})


def test_serial_correlation_of_macrodata_matches_statsmodels_acf(tmp_path):
    # The real interest rate drifts for years at a time: yearly means around the line
    # correlate 0.70 with the next year's (statsmodels acf), far above 2/√50 = 0.28.
    frame = macrodata_frame()
    trend = time_trend(engine_table(frame, tmp_path))
    assert trend.period == "year" and trend.fit.n == 50  # 2009 is partial, left out
    expected = reference_serial_correlation(frame, "year")
    assert trend.serial_correlation == pytest.approx(expected, rel=1e-9)
    assert trend.serial_correlation > 0.6
    assert trend.serially_dependent


def yearly_frame(values: np.ndarray) -> pd.DataFrame:
    """One value a year, dated 1 January from 1950, on a gentle rise."""
    years = pd.date_range("1950-01-01", periods=len(values), freq="YS").as_unit("us")
    return pd.DataFrame({"t": years, "y": 100 + 0.1 * np.arange(len(values)) + values})


def ar1(phi: float, n: int, seed: int) -> np.ndarray:
    """A stationary AR(1) series x_t = phi·x_(t−1) + e_t with standard normal e (constructed)."""
    rng = np.random.default_rng(seed)
    x = np.empty(n)
    x[0] = rng.normal(0, 1 / math.sqrt(1 - phi**2))
    for t in range(1, n):
        x[t] = phi * x[t - 1] + rng.normal()
    return x


def test_independent_yearly_noise_is_not_flagged(tmp_path):
    frame = yearly_frame(np.random.default_rng(61).normal(0, 1, 60))
    trend = time_trend(engine_table(frame, tmp_path))
    assert trend.period == "year" and trend.fit.n == 60
    expected = reference_serial_correlation(frame, "year", full_only=False)
    assert trend.serial_correlation == pytest.approx(expected, rel=1e-9)
    assert abs(trend.serial_correlation) < 2 / math.sqrt(60)
    assert not trend.serially_dependent


def test_ar1_yearly_series_is_flagged(tmp_path):
    # phi = 0.8: the population lag-1 autocorrelation is 0.8 (Box, Jenkins & Reinsel §3.2.4).
    frame = yearly_frame(ar1(0.8, 60, seed=62))
    trend = time_trend(engine_table(frame, tmp_path))
    expected = reference_serial_correlation(frame, "year", full_only=False)
    assert trend.serial_correlation == pytest.approx(expected, rel=1e-9)
    assert trend.serial_correlation > 2 / math.sqrt(60)
    assert trend.serially_dependent


def test_too_few_periods_give_no_serial_correlation(tmp_path):
    trend = time_trend(engine_table(yearly_frame(ar1(0.8, 4, seed=63)), tmp_path))
    assert trend.fit.n == 4
    assert trend.serial_correlation is None and not trend.serially_dependent
