"""Two-way tables checked against pandas, numpy, scipy and exact rational arithmetic."""

from __future__ import annotations

import math
import tempfile
import uuid
from fractions import Fraction
from pathlib import Path

import ibis
import ibis.expr.types as ir
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats as scipy_stats

from briefgen.stats.twoway import MIN_CELL, cross_table


def engine_table(frame: pd.DataFrame, folder: Path) -> ir.Table:
    """An engine table from a DataFrame (parquet, because create_table fails on ibis 12)."""
    path = Path(folder) / f"data-{uuid.uuid4().hex}.parquet"
    frame.to_parquet(path)  # pyarrow writes NaN in a float column as null
    return ibis.duckdb.connect().read_parquet(path)


def reference_cell(values: pd.Series, confidence: float) -> dict:
    """Summary of one cell computed outside the project."""
    values = values.dropna().to_numpy(dtype=float)
    n = len(values)
    result = {"n": n, "mean": None, "median": None, "sd": None, "ci": (None, None)}
    if n == 0:
        return result
    result["mean"] = float(np.mean(values))  # reference: numpy mean
    result["median"] = float(np.percentile(values, 50))  # reference: numpy linear = type 7
    if n >= 2:
        sd = float(np.std(values, ddof=1))  # reference: numpy sample sd
        # reference: scipy.stats.t.interval with the standard error of the mean
        low, high = scipy_stats.t.interval(
            confidence, n - 1, loc=result["mean"], scale=sd / math.sqrt(n)
        )
        result |= {"sd": sd, "ci": (float(low), float(high))}
    return result


def assert_matches(cell, expected: dict, rel: float = 1e-12) -> None:
    assert cell.n == expected["n"]
    for name in ("mean", "median", "sd"):
        if expected[name] is None:
            assert getattr(cell, name) is None
        else:
            assert getattr(cell, name) == pytest.approx(expected[name], rel=rel, abs=1e-12)
    if expected["ci"][0] is None:
        assert cell.ci_low is None and cell.ci_high is None
    else:
        assert cell.ci_low == pytest.approx(expected["ci"][0], rel=rel, abs=1e-12)
        assert cell.ci_high == pytest.approx(expected["ci"][1], rel=rel, abs=1e-12)


@pytest.fixture
def shop(tmp_path: Path) -> tuple[pd.DataFrame, ir.Table]:
    """3 × 3 levels with missing targets, missing keys, one all-missing cell, one empty pair."""
    rng = np.random.default_rng(7)
    n = 600
    frame = pd.DataFrame(
        {
            "y": rng.gamma(2.0, 3.0, n),
            "g0": rng.choice(["North", "South", "West"], n),
            "g1": rng.choice(["Online", "Store", "Phone"], n),
        }
    )
    frame.loc[rng.random(n) < 0.05, "y"] = np.nan
    frame.loc[(frame.g0 == "West") & (frame.g1 == "Phone"), "y"] = np.nan  # all missing
    frame = frame[~((frame.g0 == "South") & (frame.g1 == "Phone"))].copy()  # empty pair
    frame.loc[frame.index[:7], "g0"] = None
    frame.loc[frame.index[5:12], "g1"] = None
    frame = frame.reset_index(drop=True)
    return frame, engine_table(frame, tmp_path)


@pytest.mark.parametrize("confidence", [0.95, 0.90])
def test_cells_match_pandas_numpy_scipy(shop, confidence):
    frame, table = shop
    result = cross_table(table, "g0", "g1", "region", "channel", confidence=confidence)
    both = frame.dropna(subset=["g0", "g1"])
    # reference: pandas groupby over both keys; only pairs present in the data
    groups = dict(list(both.groupby(["g0", "g1"])["y"]))
    assert {(c.row, c.column) for c in result.cells} == set(groups)
    for (row, column), values in groups.items():
        assert_matches(result.cell(row, column), reference_cell(values, confidence))
        assert result.cell(row, column).rows == len(values)  # reference: pandas group size


def test_margins_and_total_match_pandas(shop):
    frame, table = shop
    result = cross_table(table, "g0", "g1", "region", "channel")
    both = frame.dropna(subset=["g0", "g1"])
    for row, values in both.groupby("g0")["y"]:  # reference: pandas groupby on one key
        assert_matches(result.cell(row, None), reference_cell(values, 0.95))
    for column, values in both.groupby("g1")["y"]:
        assert_matches(result.cell(None, column), reference_cell(values, 0.95))
    assert_matches(result.total, reference_cell(both["y"], 0.95))
    assert result.rows == tuple(sorted(both.g0.unique()))
    assert result.columns == tuple(sorted(both.g1.unique()))
    # reference: pandas isna on either key
    assert result.rows_without_level == int((frame.g0.isna() | frame.g1.isna()).sum())


def test_empty_pair_absent_and_all_missing_cell(shop):
    _, table = shop
    result = cross_table(table, "g0", "g1", "region", "channel")
    assert result.cell("South", "Phone") is None  # no rows at all: absent
    empty = result.cell("West", "Phone")  # rows, but every target value missing
    assert empty is not None and empty.rows > 0
    assert (empty.n, empty.mean, empty.median, empty.sd) == (0, None, None, None)
    assert empty.ci_low is None and empty.too_small


def test_too_small_threshold(tmp_path):
    # Threshold 10: common practice, no published source.
    assert MIN_CELL == 10
    rows = [("a", "x")] * 9 + [("a", "y")] * 10 + [("b", "x")] * 25 + [("b", "y")] * 1
    frame = pd.DataFrame(rows, columns=["g0", "g1"])
    frame["y"] = np.arange(len(frame), dtype=float)
    result = cross_table(engine_table(frame, tmp_path), "g0", "g1", "r", "c")
    counts = frame.groupby(["g0", "g1"]).size()  # reference: pandas group sizes
    for (row, column), count in counts.items():
        assert result.cell(row, column).too_small == (count < 10)
    single = result.cell("b", "y")  # one value: no sd, no interval
    assert single.n == 1 and single.sd is None and single.ci_low is None
    assert single.mean == frame.y.iloc[-1]
    stricter = cross_table(engine_table(frame, tmp_path), "g0", "g1", "r", "c", min_cell=30)
    assert all(c.too_small for c in stricter.cells) and stricter.min_cell == 30


def exact_mean_and_sd(values: np.ndarray) -> tuple[Fraction, float]:
    """Mean and sample sd in rational arithmetic (reference: Python fractions, exact)."""
    exact = [Fraction(float(v)) for v in values]
    mean = sum(exact, Fraction(0)) / len(exact)
    variance = sum(((v - mean) ** 2 for v in exact), Fraction(0)) / (len(exact) - 1)
    return mean, math.sqrt(variance)


def test_large_offset_exact(tmp_path):
    rng = np.random.default_rng(11)
    n = 800
    frame = pd.DataFrame(
        {
            "y": 1e9 + rng.normal(0.0, 0.1, n),
            "g0": rng.choice(["p", "q"], n),
            "g1": rng.choice(["u", "v"], n),
        }
    )
    result = cross_table(engine_table(frame, tmp_path), "g0", "g1", "r", "c")
    for (row, column), values in frame.groupby(["g0", "g1"])["y"]:
        mean, sd = exact_mean_and_sd(values.to_numpy())
        cell = result.cell(row, column)
        assert abs(cell.sd - sd) / sd < 1e-9
        # Within a few units in the last place of 1e9 (one ulp is about 1.2e-7).
        assert abs(Fraction(cell.mean) - mean) < 4 * np.spacing(1e9)
    mean, sd = exact_mean_and_sd(frame.y.to_numpy())
    assert abs(result.total.sd - sd) / sd < 1e-9


# Labels drawn from characters that would break a naive key: colons, digits, accents.
labels = st.text(alphabet=["1", ":", "a", "é", "\u0301", " "], min_size=0, max_size=4)


@settings(max_examples=12, deadline=None)
@given(
    st.lists(
        st.tuples(labels, labels, st.floats(-1e6, 1e6, allow_nan=False)), min_size=1, max_size=40
    )
)
def test_any_labels_decode_to_their_cells(records):
    frame = pd.DataFrame(records, columns=["g0", "g1", "y"])
    with tempfile.TemporaryDirectory() as folder:
        result = cross_table(engine_table(frame, Path(folder)), "g0", "g1", "r", "c")
    groups = dict(list(frame.groupby(["g0", "g1"])["y"]))  # reference: pandas groupby
    assert {(c.row, c.column) for c in result.cells} == set(groups)
    for (row, column), values in groups.items():
        cell = result.cell(row, column)
        assert cell.n == len(values)
        assert cell.mean == pytest.approx(float(np.mean(values)), rel=1e-9, abs=1e-6)
