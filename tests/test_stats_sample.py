"""The scatter sample: bounded, repeatable, and fair when rows repeat."""

from __future__ import annotations

import numpy as np
import pandas as pd

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
