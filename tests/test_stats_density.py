"""2-D bin counts from the engine against numpy.histogram2d, to the count.

Reference: numpy.histogram2d with the same edges (half-open bins, the last closed on
both axes; values outside the edges counted in no bin). Penguins from the
palmerpenguins package; the other cases are constructed.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from briefgen.stats.density import density_bins


def _check(result, x, y):
    # Reference: numpy.histogram2d on the rows with both values, with the result's edges.
    keep = ~(np.isnan(x) | np.isnan(y))
    expected, _, _ = np.histogram2d(
        x[keep], y[keep], bins=[np.array(result.x_edges), np.array(result.y_edges)]
    )
    np.testing.assert_array_equal(np.array(result.counts), expected.astype(int))
    assert result.n == int(keep.sum())
    assert int(expected.sum()) + result.beyond == result.n


CASES = {
    "normal": lambda rng: (rng.normal(0, 1, 3000), rng.normal(5, 2, 3000)),
    "ties on edges": lambda rng: (
        rng.integers(0, 41, 2000).astype(float),
        rng.integers(0, 21, 2000).astype(float),
    ),
    # Every edge is itself a value: the arithmetic guess must be corrected exactly at each.
    "values on every edge": lambda rng: (
        np.concatenate([np.linspace(0.1, 7.3, 41), rng.uniform(0.1, 7.3, 2000)]),
        np.concatenate([np.linspace(-3.3, 9.1, 21), rng.uniform(-3.3, 9.1, 2020)]),
    ),
    "offset 1e12": lambda rng: (1e12 + rng.normal(0, 0.1, 1500), 1e9 + rng.normal(0, 0.1, 1500)),
    "zero-heavy counts, clipped": lambda rng: (
        rng.uniform(0, 10, 4000),
        np.where(rng.random(4000) < 0.7, 0.0, rng.pareto(1.2, 4000) * 3).round(),
    ),
    "lognormal, log axis": lambda rng: (rng.uniform(0, 1, 3000), rng.lognormal(0, 1.6, 3000)),
}


@pytest.mark.parametrize("name", list(CASES))
def test_counts_match_numpy_histogram2d(engine_table, name):
    x, y = CASES[name](np.random.default_rng(11))
    result = density_bins(engine_table(pd.DataFrame({"y": y, "x0": x})), "x0", "x")
    _check(result, x, y)
    expected_scale = {"zero-heavy counts, clipped": "clipped", "lognormal, log axis": "log"}
    assert result.y_scale == expected_scale.get(name, "linear")
    if result.y_scale == "clipped":
        # The clip sits at the 99th percentile, type 7 (numpy's default "linear" method).
        assert result.top == pytest.approx(np.quantile(y, 0.99))
        assert result.beyond == int((y > result.top).sum()) > 0
    if result.y_scale == "log":
        steps = np.diff(np.log10(result.y_edges))
        np.testing.assert_allclose(steps, steps[0])


def test_missing_values_and_threshold(engine_table):
    rng = np.random.default_rng(5)
    x, y = rng.normal(0, 1, 500), rng.normal(0, 1, 500)
    x[::7], y[::11] = np.nan, np.nan
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))
    _check(density_bins(table, "x0", "x"), x, y)
    both = int((~(np.isnan(x) | np.isnan(y))).sum())
    # Bins only above the threshold: at or below it the scatter shows every row.
    assert density_bins(table, "x0", "x", more_than=both) is None
    assert density_bins(table, "x0", "x", more_than=both - 1) is not None


def test_penguins_body_mass_against_flipper(engine_table):
    palmerpenguins = pytest.importorskip("palmerpenguins")
    data = palmerpenguins.load_penguins()
    x = data["flipper_length_mm"].to_numpy(dtype=float)
    y = data["body_mass_g"].to_numpy(dtype=float)
    result = density_bins(engine_table(pd.DataFrame({"y": y, "x0": x})), "x0", "flipper")
    # 342 penguins have both measurements (Horst, Hill & Gorman 2020, palmerpenguins).
    assert result.n == 342
    _check(result, x, y)


def test_whole_number_predictor_gets_one_bin_per_value(engine_table):
    rng = np.random.default_rng(2)
    x = rng.integers(1, 14, 3000).astype(float)
    y = rng.normal(20, 5, 3000)
    result = density_bins(engine_table(pd.DataFrame({"y": y, "x0": x})), "x0", "parcels")
    # Constructed case: 13 whole values give 13 bins centred on them, edges k ± 0.5.
    np.testing.assert_array_equal(result.x_edges, np.arange(0.5, 14.0, 1.0))
    _check(result, x, y)


def test_few_distinct_values_get_one_bin_each(engine_table):
    # The fair data's ages (statsmodels.datasets.fair): six values, not whole numbers.
    fair = pytest.importorskip("statsmodels.datasets.fair").load_pandas().data
    x = fair["age"].to_numpy(dtype=float)
    y = fair["affairs"].to_numpy(dtype=float)
    result = density_bins(engine_table(pd.DataFrame({"y": y, "x0": x})), "x0", "age")
    values = np.unique(x)
    assert len(result.x_edges) == len(values) + 1
    # Every value lies alone in its bin, strictly inside it.
    inside = np.searchsorted(result.x_edges, values, side="right") - 1
    assert inside.tolist() == list(range(len(values)))
    _check(result, x, y)
    # 6,366 women in the survey (Fair 1978, as shipped by statsmodels).
    assert result.n == 6366 and result.y_scale == "clipped"


@pytest.mark.parametrize("seed", range(6))
def test_values_on_the_engines_own_edges(engine_table, seed):
    from briefgen.stats.density import X_BINS, Y_BINS, _edges

    rng = np.random.default_rng(seed)
    low, high = sorted(rng.uniform(-1e6, 1e6, 2) * rng.choice([1e-6, 1, 1e6]))
    # The bins' own edges as values, plus values a unit in the last place either side.
    xe, ye = _edges(low, high, X_BINS), _edges(low, high, Y_BINS)
    x = np.concatenate([xe, np.nextafter(xe, -np.inf)[1:], np.nextafter(xe, np.inf)[:-1]])
    y = np.resize(np.concatenate([ye, np.nextafter(ye, np.inf)[:-1]]), len(x))
    x, y = (
        np.concatenate([x, rng.uniform(low, high, 500)]),
        np.concatenate([y, rng.uniform(low, high, 500)]),
    )
    y[:3] = low, high, (low + high) / 2
    result = density_bins(engine_table(pd.DataFrame({"y": y, "x0": x})), "x0", "x")
    _check(result, x, y)


def _whole_number_bins(edges, low: int, high: int) -> None:
    """Edges at k − 0.5, equal whole widths, each whole number low … high inside one bin."""
    edges = np.array(edges)
    assert np.all(edges % 1 == 0.5)
    widths = np.diff(edges)
    assert np.all(widths == widths[0]) and widths[0] % 1 == 0
    inside = [((edges[:-1] < k) & (k < edges[1:])).sum() for k in range(low, high + 1)]
    assert inside == [1] * (high - low + 1)


def test_randhie_whole_number_target_gets_whole_number_rows(engine_table):
    # Source: statsmodels.datasets.randhie (RAND Health Insurance Experiment): mdvis,
    # doctor visits, whole numbers 0 to 77; disea, chronic diseases, not whole numbers.
    from statsmodels.datasets import randhie

    data = randhie.load_pandas().data
    x = data["disea"].to_numpy(dtype=float)
    y = data["mdvis"].to_numpy(dtype=float)
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))
    result = density_bins(table, "x0", "disea", y_whole=True)
    assert result.y_scale == "clipped"
    # The clip at the 99th percentile, type 7 (numpy's default method): 21 visits.
    assert result.top == pytest.approx(np.quantile(y, 0.99)) == 21
    # 0 … 21 is 22 whole numbers, over the 20-row cap: rows 2 wide, the last ending at 21.5.
    assert result.y_edges[0] == -0.5 and result.y_edges[-1] == 21.5
    _whole_number_bins(result.y_edges, 0, 21)
    assert result.beyond == int((y > 21).sum())
    _check(result, x, y)
    # Without the flag (a target of fractions) the old equal rows 1.05 wide are kept.
    assert density_bins(table, "x0", "disea").y_edges[1] == pytest.approx(1.05)


def test_wide_whole_number_predictor_gets_whole_widths(engine_table):
    # Constructed case: whole numbers 0 … 500, far more distinct values than 40 bins.
    rng = np.random.default_rng(4)
    x = np.concatenate([rng.integers(0, 501, 6000), [0, 500]]).astype(float)
    y = rng.normal(0, 1, len(x))
    result = density_bins(engine_table(pd.DataFrame({"y": y, "x0": x})), "x0", "x")
    assert len(result.x_edges) - 1 <= 40
    _whole_number_bins(result.x_edges, 0, 500)
    _check(result, x, y)


def test_plan_marks_a_whole_number_target(engine_table):
    from dataclasses import replace

    from briefgen.config import parse_spec
    from briefgen.stats.core.frame import build_frame
    from briefgen.stats.density import DensityAnalysis
    from briefgen.stats.target_kind import target_kind

    rng = np.random.default_rng(8)
    spec = parse_spec("title: t\ndata: {path: d.csv}\ntarget: y\npredictors: [p]\n")
    for y, whole in ((rng.poisson(3, 600).astype(float), True), (rng.normal(0, 1, 600), False)):
        frame = build_frame(
            engine_table(pd.DataFrame({"y": y, "p": rng.normal(0, 1, 600)})), spec, cache=False
        )
        (planned,) = DensityAnalysis.plan(spec, replace(frame, kind=target_kind(frame)))
        assert planned.y_whole is whole


def test_clipped_whole_number_axis_stops_at_the_clip(engine_table):
    # Constructed case (the zero-heavy counts above, whole numbers): whatever the span,
    # the last row of cells ends half a unit above the 99th percentile's whole number.
    x, y = CASES["zero-heavy counts, clipped"](np.random.default_rng(11))
    result = density_bins(engine_table(pd.DataFrame({"y": y, "x0": x})), "x0", "x", y_whole=True)
    assert result.y_scale == "clipped"
    top = np.floor(np.quantile(y, 0.99))  # type 7, numpy's default method
    assert result.y_edges[-1] == top + 0.5 and result.y_edges[0] <= -0.5
    _whole_number_bins(result.y_edges, 0, int(top))
    assert result.beyond == int((y > result.top).sum())
    _check(result, x, y)
