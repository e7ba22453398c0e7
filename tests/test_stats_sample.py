"""The scatter sample: bounded, repeatable, and fair when rows repeat."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from briefgen.config import EngineSpec
from briefgen.source import connect
from briefgen.stats import sample as sample_module
from briefgen.stats.sample import draw_sample


def test_sample_is_bounded_repeatable_and_fair_with_duplicate_rows(engine_table):
    # Invented data on a coarse grid, so most rows have exact duplicates.
    rng = np.random.default_rng(1)
    x = rng.integers(0, 10, 100_000).astype(float)
    y = 2 * x + rng.integers(0, 10, 100_000)
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))
    sample = draw_sample(table, ["x0"], size=5000)
    assert sample.size == 5000 and sample.rows_available == 100_000
    assert draw_sample(table, ["x0"], size=5000) == sample
    drawn = np.array(sample.x["x0"])
    # A simple random sample's mean lies within 4 standard errors of the population mean
    # (normal approximation; reference values from numpy on the full data).
    standard_error = x.std(ddof=1) / np.sqrt(5000)
    assert abs(drawn.mean() - x.mean()) < 4 * standard_error
    assert len(set(zip(sample.y, drawn, strict=True))) == len(set(zip(y, x, strict=True)))


def test_sample_takes_all_rows_when_few(engine_table):
    table = engine_table(pd.DataFrame({"y": [1.0, 2.0, None], "x0": [1.0, None, 3.0]}))
    sample = draw_sample(table, ["x0"], size=5000)
    assert sample.size == 2 and sample.points("x0") == 1


def _reference_sample(frame: pd.DataFrame, values: list[str], groups: list[str], size: int):
    """The sample's definition in plain Python integers, row by row (no engine).

    Each value is read as its sign code, whole part modulo the prime and five 31-bit
    chunks of its fraction; the parts are mixed into a key; each row of a repeated value
    tuple is numbered 0, 1, … in the order of its groups (missing last); key and number
    are scrambled into the row's place, and the first ``size`` places are drawn.
    """
    prime, multiplier = sample_module.PRIME, sample_module.MULTIPLIER

    def parts(v):
        if v is None:
            return [2] + [0] * 6
        size_ = abs(v)
        whole = math.floor(size_)
        out = [1 if v < 0 else 0, whole % prime]
        rest = size_ - whole
        for _ in range(5):
            scaled = rest * 2.0**31
            chunk = math.floor(scaled)
            out.append(chunk)
            rest = scaled - chunk
        return out

    rows = [
        tuple(
            None if pd.isna(r[c]) else (float(r[c]) if c in values else r[c])
            for c in values + groups
        )
        for r in frame.to_dict("records")
        if not pd.isna(r["y"])
    ]

    def last(v):
        return (v is None, v)

    rows.sort(key=lambda r: [last(v) for v in r[len(values) :]])
    copies: dict = {}
    placed = []
    for row in rows:
        tuple_ = tuple(None if v is None else v + 0.0 for v in row[: len(values)])
        copy = copies.get(tuple_, 0)
        copies[tuple_] = copy + 1
        flat = [p for v in tuple_ for p in parts(v)]
        key = (flat[0] + sample_module.SEED % prime) % prime
        for part in flat[1:]:
            key = (key * multiplier + part) % prime
        place = (key * multiplier + copy) % prime
        for _ in range(3):
            place = (place * place + multiplier) % prime
        placed.append(([place, *[last(v) for v in tuple_], copy], row))
    placed.sort(key=lambda item: item[0])
    return [row for _, row in placed[:size]]


@pytest.mark.parametrize("block", [sample_module.COPY_BLOCK, 3])
def test_sample_is_the_defined_rows_with_their_groups(engine_table, monkeypatch, block):
    # Copy numbers listed in blocks of 3 as well: block edges fall inside every repeated
    # tuple. Constructed: a coarse grid (most rows repeat their values, some thousands of times),
    # negative values and -0.0, missing predictors and missing group levels, so the copy
    # numbers, the null codes and the level order all decide which rows are drawn.
    rng = np.random.default_rng(5)
    n = 20_000
    x0 = rng.integers(-3, 4, n).astype(float)
    x0[::7] = np.nan
    y = np.round(rng.normal(0, 1, n), 1) * 2 - 0.0
    y[::11] = -0.0
    frame = pd.DataFrame(
        {
            "y": y,
            "x0": x0,
            "g0": rng.choice(["north", "south", None], n),
            "g1": rng.choice(["day", "night"], n),
        }
    )
    table = engine_table(frame)
    monkeypatch.setattr(sample_module, "COPY_BLOCK", block)
    drawn = draw_sample(table, ["x0"], size=700, groups=["g0", "g1"])
    expected = _reference_sample(frame, ["y", "x0"], ["g0", "g1"], 700)
    got = list(zip(drawn.y, drawn.x["x0"], drawn.groups["g0"], drawn.groups["g1"], strict=True))
    assert got == [tuple(None if v is None else v for v in row) for row in expected]
    # The case tests what it is for: value tuples drawn more than once (copies).
    assert len(got) == 700 and len(set(zip(drawn.y, drawn.x["x0"], strict=True))) < 600


def test_many_predictors_draw_the_defined_rows(engine_table):
    # Twelve predictors: 91 parts mixed into each key. Written as Horner's rule the SQL
    # nested once per part and the compiler ran out of recursion from eight predictors.
    rng = np.random.default_rng(9)
    n = 300
    frame = pd.DataFrame(
        {"y": rng.normal(0, 1, n)} | {f"x{i}": rng.normal(0, 1, n) for i in range(12)}
    )
    frame.loc[::13, "x3"] = np.nan
    values = ["y", *[f"x{i}" for i in range(12)]]
    drawn = draw_sample(engine_table(frame), values[1:], size=60)
    expected = _reference_sample(frame, values, [], 60)
    got = list(zip(drawn.y, *[drawn.x[v] for v in values[1:]], strict=True))
    assert got == expected


def test_a_few_tuples_with_millions_of_copies_fit_a_small_memory_limit():
    # A 0/1 target and no predictor: two value tuples of 2.5 million copies each. Their
    # copy numbers listed whole (20 MB a list) stopped DuckDB at this limit; in blocks
    # they fit. DuckDB only: the limit is its setting.
    engine = connect(EngineSpec(memory_limit="48MB"))
    engine.raw_sql(
        "CREATE TABLE outcomes AS SELECT (i % 2)::DOUBLE AS y, "
        "CASE WHEN i % 3 = 0 THEN 'a' ELSE 'b' END AS g0 FROM range(5000000) r(i)"
    )
    drawn = draw_sample(engine.table("outcomes"), [], groups=["g0"])
    assert drawn.size == 5000 and drawn.rows_available == 5_000_000
    # A simple random sample's share of ones lies within 4 standard errors of 1/2, and
    # of level "a" within 4 of 1/3 (normal approximation to the binomial).
    for share, p in ((np.mean(drawn.y), 1 / 2), (drawn.groups["g0"].count("a") / 5000, 1 / 3)):
        assert abs(share - p) < 4 * np.sqrt(p * (1 - p) / 5000)
