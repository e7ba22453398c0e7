"""Exact fixed-point sums (briefgen.stats.core.exact): overflow bounds, precision at the edges.

References: Python's integers and ``fractions`` module (exact arithmetic) for every
expected value; numpy only to draw constructed data (seeded).
"""

from __future__ import annotations

import math
from fractions import Fraction

import ibis
import numpy as np
import pandas as pd
import pytest

from briefgen.config import EngineSpec
from briefgen.source import connect
from briefgen.stats.core.exact import (
    HIGHEST_EXPONENT,
    TOTAL_BITS,
    FixedPoint,
    bits_for,
    exact_sum,
    value_of,
)
from briefgen.stats.core.summary import summarise_levels

LARGEST_DECIMAL_38 = 10**38 - 1


def _exact_mean_sd(values) -> tuple[Fraction, float]:
    """Mean (exact) and sd (one rounding) in rational arithmetic; reference: fractions."""
    exact = [Fraction(float(v)) for v in values]
    mean = sum(exact) / len(exact)
    centred = sum((v - mean) ** 2 for v in exact)
    return mean, math.sqrt(centred / (len(exact) - 1))


def _round_half_away(value: Fraction) -> int:
    magnitude = math.floor(abs(value) + Fraction(1, 2))
    return magnitude if value >= 0 else -magnitude


@pytest.mark.parametrize("rows", [1, 2, 36, 6_000, 10**6, 10**8, 2**40 - 1, 10**15])
@pytest.mark.parametrize("degree", [1, 2, 3])
def test_sums_cannot_overflow_38_digits_by_construction(rows, degree):
    # Every value quantises to |q| ≤ 2^bits; the largest possible sum of degree-th powers
    # (or of products of two values at degree 2) over ``rows`` rows is rows · 2^(bits·degree).
    bits = bits_for(rows, degree)
    assert rows * 2 ** (bits * degree) <= 2**TOTAL_BITS <= LARGEST_DECIMAL_38
    # And hardly coarser than needed: two more bits would overflow the 2^126 budget (the
    # row count is rounded up to a power of two), unless int64's 62 bits are the limit.
    assert bits == 62 or rows * 2 ** ((bits + 2) * degree) > 2**TOTAL_BITS


def test_precision_at_a_hundred_million_rows():
    # 49 bits for squares at 1e8 rows: each deviation within 2^-50 of the bound, a few
    # float64 spacings (2^-52 relative) of the largest deviation.
    assert bits_for(10**8) == 49
    assert bits_for(10**6) == 53


@pytest.mark.parametrize("bound", [0.0, 1e-300, 3e-9, 0.75, 1.0, 7.999, 8.0, 1e12, 2e150])
@pytest.mark.parametrize("rows", [3, 10**6])
def test_scale_is_the_finest_that_fits(bound, rows):
    scale = FixedPoint.fit(bound, rows)
    bits = bits_for(rows)
    assert abs(bound) * scale.factor <= 2**bits
    if bound and scale.exponent < HIGHEST_EXPONENT:
        assert abs(bound) * scale.factor * 2 > 2**bits  # one more bit would not fit


def test_scale_needs_a_finite_bound():
    with pytest.raises(ValueError, match="finite"):
        FixedPoint.fit(math.inf, 10)


def test_engine_sum_is_the_exact_sum_of_rounded_values(engine_table):
    rng = np.random.default_rng(3)
    values = rng.normal(0.0, 5.0, 2_000)
    values[::97] = np.nan
    table = engine_table(pd.DataFrame({"v": values}))
    bound = float(np.nanmax(np.abs(values)))
    scale = FixedPoint.fit(bound, len(values))
    q = scale.quantise(table.v)
    row = table.aggregate(s1=exact_sum(q), s2=exact_sum(q * q)).to_pyarrow().to_pylist()[0]
    # reference: Python integers, v · 2^k rounded half away from zero (SQL ROUND in DuckDB
    # and Spark), summed exactly. Ties occur: values in [0.5, 1) scale to half-integers here.
    integers = [_round_half_away(Fraction(float(v)) * 2**scale.exponent) for v in values if v == v]
    assert int(row["s1"]) == sum(integers)
    assert int(row["s2"]) == sum(q * q for q in integers)
    assert value_of(row["s1"], scale) == Fraction(sum(integers), 2**scale.exponent)


def test_sum_over_no_rows_is_zero(engine_table):
    table = engine_table(pd.DataFrame({"v": [np.nan, np.nan]}))
    scale = FixedPoint.fit(1.0, 0)
    row = table.aggregate(s=exact_sum(scale.quantise(table.v))).to_pyarrow().to_pylist()[0]
    assert value_of(row["s"], scale) == 0


def test_thread_count_changes_no_bit(tmp_path):
    # 600,000 rows in six Parquet row groups: four threads really split the scan (DuckDB
    # documentation, "Tuning Workloads", Parallelism: work is divided by row groups).
    rng = np.random.default_rng(5)
    path = tmp_path / "values.parquet"
    pd.DataFrame({"v": rng.gamma(2.0, 3.0, 600_000)}).to_parquet(path, row_group_size=100_000)
    totals = set()
    for threads in (1, 2, 4, 4, 4):
        con = connect(EngineSpec(threads=threads))
        table = con.read_parquet(path)
        scale = FixedPoint.fit(float(table.v.max().to_pyarrow().as_py()), 600_000)
        q = scale.quantise(table.v)
        totals.add(tuple(table.aggregate(a=exact_sum(q), b=exact_sum(q * q)).to_pyarrow()[0]))
        con.disconnect()
    assert len(totals) == 1


def test_huge_outlier_beside_a_tiny_spread(engine_table):
    # Constructed: 10,000 values with spread 1e-3 around 5, and one value 1e9 away. The
    # outlier sets the scale; the tiny values still keep their digits in mean and sd.
    rng = np.random.default_rng(11)
    values = np.append(5.0 + rng.normal(0.0, 1e-3, 10_000), 5.0 + 1e9)
    table = engine_table(pd.DataFrame({"level": "a", "y": values}))
    (summary,), _ = summarise_levels(table, 0.95)
    mean, sd = _exact_mean_sd(values)
    assert summary.mean == pytest.approx(float(mean), rel=1e-15)
    assert summary.sd == pytest.approx(sd, rel=1e-14)
    # Without the outlier the spread of 1e-3 alone is kept to 1e-13 as well.
    (small,), _ = summarise_levels(
        engine_table(pd.DataFrame({"level": "a", "y": values[:-1]})), 0.95
    )
    small_mean, small_sd = _exact_mean_sd(values[:-1])
    assert small.mean == pytest.approx(float(small_mean), rel=1e-15)
    assert small.sd == pytest.approx(small_sd, rel=1e-13)


def test_negative_values_at_a_large_offset(engine_table):
    rng = np.random.default_rng(12)
    values = -1e12 + np.round(rng.normal(0.0, 0.1, 5_000) * 2**10) / 2**10
    table = engine_table(pd.DataFrame({"level": "a", "y": values}))
    (summary,), _ = summarise_levels(table, 0.95)
    mean, sd = _exact_mean_sd(values)
    # reference: fractions; the mean rounds once to the float64 grid near 1e12 (ulp 1.2e-4).
    assert summary.mean == float(mean) or abs(summary.mean - float(mean)) <= 2**-13
    assert summary.sd == pytest.approx(sd, rel=1e-14)


def test_constant_data_has_no_spread(engine_table):
    table = engine_table(pd.DataFrame({"level": "a", "y": np.full(1_000, -3.25e7)}))
    (summary,), _ = summarise_levels(table, 0.95)
    assert summary.mean == -3.25e7 and summary.sd == 0.0 and summary.mean_shift == 0.0


@pytest.mark.slow
def test_a_hundred_million_extreme_values_fit():
    # 1e8 rows, every value just below the bound's power of two: |q| is as large as the
    # scale allows, and Σq² still fits 38 digits (by construction; here in the engine).
    con = connect(EngineSpec())
    signs = ibis.memtable({"v": [8.0 - 2.0**-40, -(8.0 - 2.0**-40)] * 5_000})
    table = signs.cross_join(ibis.memtable({"w": list(range(10_000))}))
    rows = 100_000_000
    scale = FixedPoint.fit(8.0, rows)
    q = scale.quantise(table.v)
    row = con.to_pyarrow(
        table.aggregate(n=table.count(), s1=exact_sum(q), s2=exact_sum(q * q))
    ).to_pylist()[0]
    largest = round(Fraction(8.0 - 2.0**-40) * 2**scale.exponent)
    assert int(row["n"]) == rows and int(row["s1"]) == 0
    assert int(row["s2"]) == rows * largest**2 <= LARGEST_DECIMAL_38
    con.disconnect()
