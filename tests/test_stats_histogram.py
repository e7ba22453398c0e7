"""Histogram edges and counts against numpy, on ordinary data and at large offsets.

Reference: numpy.histogram_bin_edges(a, bins="fd") and numpy.histogram (numpy's
implementation of Freedman & Diaconis 1981 bins; half-open bins, the last closed).
Whole numbers get edges at k − 0.5 so no bar holds more whole numbers than its
neighbours; their counts are checked against numpy.histogram with the same edges.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

from briefgen.config import parse_spec
from briefgen.figures.histogram import histogram_chart
from briefgen.stats.core.frame import build_frame
from briefgen.stats.histogram import Histogram, histogram_bins
from briefgen.stats.target_kind import target_kind

CASES = {
    "normal": lambda rng: rng.normal(50, 10, 2000),
    "lognormal": lambda rng: rng.lognormal(0, 0.5, 600),
    "integers with ties on edges": lambda rng: rng.integers(0, 12, 800).astype(float),
    "offset 1e9": lambda rng: 1e9 + rng.normal(0, 0.1, 1000),
    "offset 1e12": lambda rng: 1e12 + rng.normal(0, 0.1, 1000),
}


@pytest.mark.parametrize("name", list(CASES))
def test_edges_and_counts_match_numpy(engine_table, name):
    values = CASES[name](np.random.default_rng(7))
    result = histogram_bins(engine_table(pd.DataFrame({"y": values})))
    # Reference: numpy's "fd" bin edges and numpy.histogram counts.
    expected_edges = np.histogram_bin_edges(values, bins="fd")
    if len(expected_edges) - 1 > 60:
        pytest.skip("numpy's rule asks for more bins than the cap; see the capped case")
    expected_counts, _ = np.histogram(values, bins=expected_edges)
    assert result.rule == "freedman_diaconis"
    np.testing.assert_array_equal(np.array(result.edges), expected_edges)
    assert list(result.counts) == expected_counts.tolist()
    assert sum(result.counts) == len(values) == result.n


def test_constant_and_zero_iqr(engine_table):
    constant = np.full(30, 5.0)
    result = histogram_bins(engine_table(pd.DataFrame({"y": constant})))
    # Reference: numpy widens a zero range by ±0.5 and uses one bin when the IQR is 0.
    np.testing.assert_array_equal(result.edges, np.histogram_bin_edges(constant, bins="fd"))
    assert result.counts == (30,) and result.rule == "single"
    spiky = np.array([1.0] * 40 + [2.0, 9.0])
    result = histogram_bins(engine_table(pd.DataFrame({"y": spiky})))
    np.testing.assert_array_equal(result.edges, np.histogram_bin_edges(spiky, bins="fd"))
    assert list(result.counts) == np.histogram(spiky, bins="fd")[0].tolist()


def test_capped_bins_cover_every_value(engine_table):
    # A long tail makes the rule ask for hundreds of bins (constructed case).
    values = np.concatenate([np.random.default_rng(3).normal(0, 1, 5000), [1e4]])
    result = histogram_bins(engine_table(pd.DataFrame({"y": values})), max_bins=60)
    assert result.rule == "capped" and len(result.counts) == 60
    assert result.requested_bins == len(np.histogram_bin_edges(values, bins="fd")) - 1
    # Reference: numpy.histogram with the same 60 equal bins.
    assert list(result.counts) == np.histogram(values, bins=np.array(result.edges))[0].tolist()
    # Equal bins from linspace differ in the last place: still drawn as plain rows per bar.
    chart = histogram_chart(result, "Value", 2)
    assert "Bar height: number of rows" in chart.caption and "per whole number" not in chart.svg


def test_missing_values_are_ignored(engine_table):
    values = np.array([1.0, 2.0, np.nan, 3.0, 4.0, np.nan, 10.0])
    result = histogram_bins(engine_table(pd.DataFrame({"y": values})))
    present = values[~np.isnan(values)]
    assert result.n == 5
    assert list(result.counts) == np.histogram(present, bins="fd")[0].tolist()


def _planned(engine_table, values: np.ndarray):
    """The brief's own histogram of ``values`` as the target: kind decided, then planned."""
    spec = parse_spec("title: t\ndata: {path: d.csv}\ntarget: y\n")
    frame = build_frame(engine_table(pd.DataFrame({"y": values})), spec, cache=False)
    frame = replace(frame, kind=target_kind(frame))
    (histogram,) = Histogram.plan(spec, frame)
    return histogram(frame)


def _each_whole_number_in_one_bin(edges: np.ndarray, low: int, high: int) -> None:
    """Every edge is k − 0.5, every bin spans whole numbers only, and each whole number
    from ``low`` to ``high`` lies strictly inside exactly one bin."""
    assert np.all(edges % 1 == 0.5)
    widths = np.diff(edges)
    assert np.all(widths % 1 == 0) and np.all(widths >= 1)
    inside = [(edges[:-1] < k) & (k < edges[1:]) for k in range(low, high + 1)]
    assert all(row.sum() == 1 for row in inside)


def test_randhie_doctor_visits_get_whole_number_bins_with_zeros_apart(engine_table):
    # Source: statsmodels.datasets.randhie (RAND Health Insurance Experiment, shipped
    # offline with statsmodels); mdvis = outpatient visits, whole numbers 0 to 77.
    from statsmodels.datasets import randhie

    y = randhie.load_pandas().data["mdvis"].to_numpy(dtype=float)
    bins = _planned(engine_table, y)
    edges = np.array(bins.edges)
    assert bins.rule == "whole_numbers_grouped"
    # 78 whole numbers exceed the 60-bar cap: 0 alone, then 1-2, 3-4, ... in bars 2 wide.
    assert bins.edges[:3] == (-0.5, 0.5, 2.5) and bins.width == 2.0
    assert len(bins.counts) <= 60
    _each_whole_number_in_one_bin(edges, 0, 77)
    # Reference: numpy.histogram with the same half-integer edges.
    assert list(bins.counts) == np.histogram(y, bins=edges)[0].tolist()
    # The zeros are their own bar: numpy's count of zeros (6,308 of 20,190).
    assert bins.counts[0] == int((y == 0).sum()) == 6308
    chart = histogram_chart(bins, "Doctor visits", 0)
    assert "0 in a bar of its own (31% of rows)" in chart.caption
    assert "Rows per whole number" in chart.svg  # unequal bins: the density scale
    assert "the tallest bar (6,308 rows, 6,308 per whole number) holds the 0s" in chart.alt


def test_wide_range_whole_numbers_get_a_whole_width(engine_table):
    # Constructed case: whole numbers from -1,000 to 4,000, no zero spike, so not a count.
    rng = np.random.default_rng(11)
    y = np.concatenate([rng.integers(-1000, 4001, 5000), [-1000, 4000]]).astype(float)
    bins = _planned(engine_table, y)
    edges = np.array(bins.edges)
    assert bins.rule in ("whole_numbers_grouped", "whole_numbers_fd")
    assert bins.width == round(bins.width) > 1 and len(bins.counts) <= 60
    _each_whole_number_in_one_bin(edges, -1000, 4000)
    # Reference: numpy.histogram with the same half-integer edges.
    assert list(bins.counts) == np.histogram(y, bins=edges)[0].tolist()
    # Small range, narrow Freedman–Diaconis width (0.5): one bar per whole number, centred
    # on it (numpy edges k − 0.5). Few zeros, so the target is not a count.
    small = 3.0 + rng.poisson(12, 5000)
    bins = _planned(engine_table, small)
    assert bins.rule == "whole_numbers" and bins.width == 1.0
    expected, edges = np.histogram(small, bins=np.arange(small.min() - 0.5, small.max() + 1.0))
    assert bins.edges == tuple(edges) and bins.counts == tuple(expected)


def test_whole_numbers_in_whole_units_keep_about_the_freedman_diaconis_bins(engine_table):
    # Source: palmerpenguins (Gorman, Williams & Fraser 2014), body_mass_g: whole grams.
    from palmerpenguins import load_penguins

    y = load_penguins()["body_mass_g"].dropna().to_numpy(dtype=float)
    bins = _planned(engine_table, y)
    # Freedman & Diaconis (1981): width 2·IQR·n^(−1/3), IQR from numpy.percentile (type 7,
    # as numpy's "fd" rule takes it); rounded to whole grams, edges at k − 0.5.
    q1, q3 = np.percentile(y, [25, 75])
    assert bins.rule == "whole_numbers_fd"
    assert bins.width == round(2 * (q3 - q1) * len(y) ** (-1 / 3))
    fd_edges = np.histogram_bin_edges(y, bins="fd")
    assert abs(len(bins.counts) - (len(fd_edges) - 1)) <= 1
    _each_whole_number_in_one_bin(np.array(bins.edges), int(y.min()), int(y.max()))
    assert list(bins.counts) == np.histogram(y, bins=np.array(bins.edges))[0].tolist()


def test_continuous_targets_keep_freedman_diaconis_bins(engine_table):
    # Source: palmerpenguins bill_length_mm (tenths of a mm, not whole numbers).
    from palmerpenguins import load_penguins

    y = load_penguins()["bill_length_mm"].dropna().to_numpy(dtype=float)
    bins = _planned(engine_table, y)
    # Reference: numpy's "fd" edges and counts, as before whole-number bins existed.
    assert bins.rule == "freedman_diaconis"
    np.testing.assert_array_equal(np.array(bins.edges), np.histogram_bin_edges(y, bins="fd"))
    assert list(bins.counts) == np.histogram(y, bins="fd")[0].tolist()
