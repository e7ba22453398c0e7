"""The scatter sample: bounded, repeatable, and fair when rows repeat."""

from __future__ import annotations

import ibis
import numpy as np
import pandas as pd

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


def _numbering_every_row(table, predictors, groups, size):
    """The sample's definition written directly: every row numbered among its copies."""
    values = ["y", *predictors]
    usable = table.filter(table.y.notnull())
    numbered = usable.mutate(
        _copy=ibis.row_number().over(
            group_by=[usable[c] for c in values], order_by=[usable[g] for g in groups]
        ),
        _key=sample_module._polynomial(
            [p for name in values for p in sample_module._exact_parts(usable[name])],
            sample_module.SEED,
        ),
    )
    ranked = numbered.mutate(_order=sample_module._scrambled(numbered["_key"], numbered["_copy"]))
    chosen = ranked.order_by(["_order", *values, *groups]).limit(size).select(*values, *groups)
    return chosen.to_pyarrow().to_pydict()


def test_only_shared_keys_are_numbered_yet_the_rows_are_those_of_numbering_all(engine_table):
    # Constructed: 40,000 rows, a third of them copies of one another in the values with
    # different groups, a few with a missing predictor, the rest distinct. Numbering only
    # the rows whose key is shared must draw exactly the rows, in the order, that
    # numbering every row does.
    rng = np.random.default_rng(7)
    n = 40_000
    x = np.where(rng.random(n) < 0.33, rng.integers(0, 20, n), rng.normal(0, 1, n) * 1e3)
    y = np.where(x == np.round(x), x % 7, rng.normal(50, 5, n))
    x[rng.random(n) < 0.01] = np.nan
    frame = pd.DataFrame({"y": y, "x0": x, "g0": rng.choice(["north", "south", "east"], n)})
    table = engine_table(frame)
    drawn = draw_sample(table, ["x0"], size=3000, groups=["g0"])
    expected = _numbering_every_row(table, ["x0"], ["g0"], 3000)
    assert drawn.y == tuple(expected["y"])
    assert drawn.x["x0"] == tuple(None if v is None else float(v) for v in expected["x0"])
    assert drawn.groups["g0"] == tuple(expected["g0"])
