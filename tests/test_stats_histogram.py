"""Histogram edges and counts against numpy, on ordinary data and at large offsets.

Reference: numpy.histogram_bin_edges(a, bins="fd") and numpy.histogram (numpy's
implementation of Freedman & Diaconis 1981 bins; half-open bins, the last closed).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from briefgen.stats.histogram import histogram_bins

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


def test_missing_values_are_ignored(engine_table):
    values = np.array([1.0, 2.0, np.nan, 3.0, 4.0, np.nan, 10.0])
    result = histogram_bins(engine_table(pd.DataFrame({"y": values})))
    present = values[~np.isnan(values)]
    assert result.n == 5
    assert list(result.counts) == np.histogram(present, bins="fd")[0].tolist()
