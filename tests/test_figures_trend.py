"""The trend figure: the line joining period means breaks at periods without data."""

from __future__ import annotations

import datetime as dt

import matplotlib.dates as mdates
import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from test_stats_trend_calendar import frame_trend, yearly_frame

from briefgen.figures.trend import draw_trend, trend_chart


def joining_lines(axes) -> list:
    """Solid lines without markers: the strokes joining period means (the fit is dashed)."""
    return [
        line
        for line in axes.get_lines()
        if line.get_linestyle() == "-" and line.get_marker() in ("None", "", None)
    ]


def test_line_breaks_at_a_missing_year(tmp_path):
    trend = frame_trend(yearly_frame(drop=(2000, 2001)), tmp_path, "year")
    axes = Figure().subplots()
    draw_trend(axes, trend)
    lines = joining_lines(axes)
    assert len(lines) == 2  # 1991–1999 and 2002–2010, nothing drawn across 2000–2001
    years = [sorted(mdates.num2date(x).year for x in line.get_xdata(orig=False)) for line in lines]
    assert sorted(years) == [list(range(1991, 2000)), list(range(2002, 2011))]
    for line in lines:  # consecutive points of a segment are one year apart (reference: numpy)
        steps = np.diff(mdates.date2num(line.get_xdata()))
        assert np.all((steps >= 365) & (steps <= 366))
    dashed = [line for line in axes.get_lines() if line.get_linestyle() == "--"]
    assert len(dashed) == 1  # the straight-line trend still spans the whole time


def test_no_gap_draws_one_line_and_caption_says_the_break(tmp_path):
    whole = frame_trend(yearly_frame(), tmp_path, "year")
    axes = Figure().subplots()
    draw_trend(axes, whole)
    assert len(joining_lines(axes)) == 1
    gapped = frame_trend(yearly_frame(drop=(2005,)), tmp_path, "year")
    chart = trend_chart(gapped, "Output", 1, 0.95)
    assert "breaks at 1 year without data" in chart.caption
    assert "from 1991 to 2010" in chart.alt


def test_left_out_periods_are_named_in_legend_and_caption(tmp_path):
    rng = np.random.default_rng(1)
    t = pd.date_range("2024-01-10", "2024-06-20", freq="7h").as_unit("us")
    frame = pd.DataFrame({"t": t, "y": rng.normal(5, 1, len(t))})
    trend = frame_trend(frame, tmp_path, "t", period="month")
    assert trend.left_out_of_fit == (dt.date(2024, 1, 1), dt.date(2024, 6, 1))
    axes = Figure().subplots()
    draw_trend(axes, trend)
    labels = [line.get_label() for line in axes.get_lines()]
    assert "partly covered, not in the trend" in labels
    assert "hollow ones are left out of it" in trend_chart(trend, "Output", 1, 0.95).caption


def test_values_every_fifth_year_are_joined(tmp_path):
    frame = yearly_frame()
    frame = frame[frame.year % 5 == 1]  # 1991, 1996, 2001, 2006
    trend = frame_trend(frame, tmp_path, "year")
    axes = Figure().subplots()
    draw_trend(axes, trend)
    (line,) = joining_lines(axes)  # one stroke through all four, no break between them
    assert len(line.get_xdata()) == 4
    assert "one every 5 years" in trend_chart(trend, "Output", 1, 0.95).caption
