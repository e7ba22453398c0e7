"""The chart defects measured on main, checked on constructed cases.

Far-out counts inside the box panel; two-way dots in natural order with no empty rows
and a legend of drawn series only; labels in the user's case; heat-map text contrast
by the WCAG 2.1 contrast ratio; 2-D bins whose drawing does not grow with rows.
"""

from __future__ import annotations

import re
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import PathCollection
from matplotlib.colors import to_rgb

from briefgen.figures import distribution, heatmap, rules
from briefgen.figures.cross import cross_chart, dot_layout
from briefgen.figures.density import density_chart
from briefgen.figures.histogram import histogram_chart
from briefgen.figures.relationship import relationship_chart
from briefgen.figures.theme import new_figure, themed
from briefgen.numbers import fmt
from briefgen.present.wording import Wording
from briefgen.stats.core.summary import BoxStats
from briefgen.stats.core.usage import RowUsage
from briefgen.stats.density import density_bins
from briefgen.stats.histogram import HistogramBins
from briefgen.stats.regression import fit_lines
from briefgen.stats.relationships import slopes_by_group
from briefgen.stats.sample import draw_sample
from briefgen.stats.twoway import cross_table


def _box(level: str, high: int) -> BoxStats:
    return BoxStats(level, 100, 10, 15, 20, 2, 35, 14, 16, 16, 3, (40.0,), 0, 50, 0, high)


def test_far_out_counts_sit_inside_the_box_panel():
    boxes = [_box("van", 18), _box("bike", 0), _box("cargo", 6)]
    with themed():
        figure = new_figure(2.0)
        left, right = figure.subplots(1, 2, sharey=True, width_ratios=(1.35, 1))
        distribution._draw_boxes(left, boxes, [3, 2, 1], "Minutes")
        renderer = FigureCanvasAgg(figure).get_renderer()
        figure.draw(renderer)
        box_panel = left.get_window_extent(renderer)
        means_panel = right.get_window_extent(renderer)
        counts = [t for t in left.texts if t.get_text() in ("18", "6")]
        assert len(counts) == 2
        for text in counts:
            extent = text.get_window_extent(renderer)
            # The count lies wholly inside the box panel, clear of the means panel.
            assert box_panel.x0 <= extent.x0 and extent.x1 <= box_panel.x1
            assert extent.x1 < means_panel.x0
        # And right of every drawn box value: the room past the axis is kept free for it.
        data_right = left.transData.transform((50, 0))[0]
        assert all(t.get_window_extent(renderer).x0 > data_right for t in counts)


@pytest.fixture
def numeric_cross(engine_table):
    rng = np.random.default_rng(4)
    rows = []
    # Cylinders 8, 4, 6, 10 (numbers); level 10 has only 3 rows per cell: every cell small.
    for cylinders, size in (("8", 40), ("4", 40), ("6", 40), ("10", 3)):
        for origin, shift in (("Europe", 0.0), ("Japan", 2.0), ("USA", -1.0)):
            mean = 30 - 2 * int(cylinders) + shift
            rows += [(cylinders, origin, v) for v in rng.normal(mean, 2, size)]
    # A fourth origin present only in two small cells: never drawn.
    rows += [("4", "Elsewhere", 20.0)] * 3
    frame = pd.DataFrame(rows, columns=["g0", "g1", "y"])
    return cross_table(engine_table(frame), "g0", "g1", "cylinders", "origin")


def test_two_way_dots_keep_natural_order_and_draw_no_empty_row(numeric_cross):
    layout = dot_layout(numeric_cross, ("Cylinders", "Origin"))
    # Numeric levels in numeric order, not by their means (which fall as cylinders rise).
    assert layout.rows == ("4", "6", "8") and layout.order == rules.NATURAL_ORDER
    assert layout.series == ("Europe", "Japan", "USA")
    assert set(layout.dropped) == {"Cylinders 10", "Origin Elsewhere"}


def test_two_way_legend_lists_only_drawn_series(numeric_cross):
    chart = cross_chart(numeric_cross, "Miles per gallon", 1, ("Cylinders", "Origin"))
    texts = re.findall(r"<text[^>]*>([^<]*)</text>", chart.svg) or re.findall(
        r">\s*([^<>]+?)\s*</", chart.svg
    )
    joined = " ".join(texts)
    assert "Japan" in joined and "Elsewhere" not in joined
    assert "Not drawn, no combination large enough: Cylinders 10, Origin Elsewhere" in chart.caption
    assert "natural order" in chart.caption
    assert rules.NATURAL_ORDER in chart.rules


def test_labels_keep_the_users_case():
    bins = HistogramBins(
        "histogram", 10, (0.0, 1.0, 2.0), (4, 6), "freedman_diaconis", 1.0, 2, RowUsage("h", 10)
    )
    chart = histogram_chart(bins, "Temperature (°C)", 1)
    assert "Temperature (°C)" in chart.svg  # the axis label as written
    assert "°c" not in chart.svg and "°c" not in chart.caption and "°c" not in chart.alt
    assert "temperature (°C)" in chart.caption  # first letter only, inside a sentence


def _contrast(a: str, b: tuple[float, float, float]) -> float:
    # WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05), from relative luminance.
    first, second = heatmap._luminance(to_rgb(a)), heatmap._luminance(b)
    high, low = max(first, second), min(first, second)
    return (high + 0.05) / (low + 0.05)


def test_heat_map_values_reach_text_contrast_on_every_shade():
    import matplotlib as mpl

    shades = mpl.colormaps[heatmap.COLOUR_MAP](np.linspace(0, 1, 64))[:, :3]
    for shade in shades:
        colour = heatmap.text_colour(tuple(shade))
        # WCAG 2.1, 1.4.3: text at least 4.5:1 against its background.
        assert _contrast(colour, tuple(shade)) >= 4.5


def test_heat_map_marks_small_cells(numeric_cross):
    words = Wording("Miles per gallon", 1, 0.95)
    chart = heatmap.heat_map_chart(numeric_cross, words, ("Cylinders", "Origin"))
    assert rules.HEAT_MAP in chart.rules and rules.NATURAL_ORDER in chart.rules
    assert "Hatched, value in brackets: fewer than 10 rows" in chart.caption
    assert "(20.0)" in chart.svg  # the small Elsewhere cell, bracketed


def _density_svg(engine_table, rows: int) -> tuple[str, int]:
    rng = np.random.default_rng(8)
    x = rng.uniform(0, 30, rows)
    y = 5 + 3 * x + rng.lognormal(0, 0.6, rows) * 4
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))
    bins = density_bins(table, "x0", "distance")
    (fit,) = fit_lines(table, ["x0"], 0.95)
    chart = density_chart(fit, bins, "Distance (km)", "Minutes", 2, 0.95)
    return chart.svg, bins.n


def test_binned_density_does_not_grow_with_rows(engine_table):
    small, n_small = _density_svg(engine_table, 10_000)
    large, n_large = _density_svg(engine_table, 200_000)
    assert (n_small, n_large) == (10_000, 200_000)
    # Twenty times the rows, the same bins: the drawing's size changes by a few percent at most.
    assert abs(len(large) - len(small)) < 0.1 * len(small)


def _scatter_inputs(engine_table, y, x, g=None):
    data = {"y": y, "x0": x}
    if g is not None:
        data["g0"] = g
    table = engine_table(pd.DataFrame(data))
    (fit,) = fit_lines(table, ["x0"], 0.95)
    sample = draw_sample(table, ["x0"], groups=["g0"] if g is not None else [])
    sample = replace(sample, x={"x0": sample.x["x0"]})
    return table, replace(fit, predictor="x0"), sample


def test_scatter_on_a_zero_heavy_count_clips_and_says_so(engine_table):
    rng = np.random.default_rng(6)
    x = rng.uniform(0, 20, 3000)
    # Constructed after the fair data's shape: mostly zeros, a tail up to 60.
    y = np.where(rng.random(3000) < 0.7, 0.0, rng.poisson(1 + 0.1 * x)).astype(float)
    y[:12] = np.linspace(25, 60, 12)
    _, fit, sample = _scatter_inputs(engine_table, y, x)
    chart = relationship_chart(fit, sample, "Years", "Count", 2, 0.95)
    assert rules.CLIPPED_AXIS in chart.rules
    beyond = int((y > np.quantile(y, 0.99)).sum())  # numpy type 7 quantile, as the rule uses
    assert f"{beyond} of the 3,000 points lie above" in chart.caption
    assert f"▲ {beyond} points above" in chart.svg


def test_four_confounded_levels_get_small_multiples(engine_table):
    rng = np.random.default_rng(9)
    levels = np.repeat(["a", "b", "c", "d"], 200)
    shift = np.repeat([0.0, 5.0, 10.0, 15.0], 200)
    x = rng.normal(0, 1, 800) + shift
    # Within each level y rises with x; across levels it falls (constructed Simpson case).
    y = 2 * (x - shift) - 3 * shift + rng.normal(0, 1, 800)
    table, fit, sample = _scatter_inputs(engine_table, y, x, levels)
    slopes = slopes_by_group(table, "g0", "x0", "g0", "x0", 0.95)
    chart = relationship_chart(fit, sample, "X", "Y", 2, 0.95, by_group=slopes, group_label="Kind")
    assert rules.SMALL_MULTIPLES in chart.rules
    assert "one panel per level of Kind" in chart.caption


def test_alt_text_says_a_falling_slope_as_a_size_and_less():
    # Constructed: alt text read aloud must not say "-0.3 more" (a double negative in words).
    from types import SimpleNamespace

    from briefgen.figures.density import line_alt

    falling = line_alt("Scatter plot", "Affairs", "Age", SimpleNamespace(slope=-0.0289), 3)
    assert "falling" in falling and "0.029 less" in falling and "-" not in falling
    rising = line_alt("Scatter plot", "Invest", "Value", SimpleNamespace(slope=0.141), 3)
    assert "rising" in rising and "0.141 more" in rising


# A 0/1 target: every drawn line and band inside [0, 1] (briefgen.figures.share_bounds).


def _drawn_figures(monkeypatch) -> list:
    """Keep each Figure the relationship charts turn into SVG, to inspect its artists."""
    from briefgen.figures import density, multiples, relationship, theme

    figures = []

    def keep(figure):
        figures.append(figure)
        return theme.to_svg(figure)

    for module in (relationship, multiples, density):
        monkeypatch.setattr(module, "to_svg", keep)
    return figures


def _drawn_ys(figure) -> np.ndarray:
    """Every y value drawn as a line, a filled band or a point, over all panels."""
    ys = []
    for axes in figure.axes:
        for line in axes.lines:
            ys.extend(np.asarray(line.get_ydata(), dtype=float))
        for collection in axes.collections:
            if isinstance(collection, PathCollection):
                # Scatter points: their paths are the marker's shape; the data are the offsets.
                ys.extend(np.asarray(collection.get_offsets(), dtype=float).reshape(-1, 2)[:, 1])
            else:
                for path in collection.get_paths():
                    ys.extend(path.vertices[:, 1])
    ys = np.array(ys, dtype=float)
    return ys[np.isfinite(ys)]


def _spector(engine_table):
    """statsmodels.datasets.spector (Spector and Mazzeo 1980), shipped offline: 32 students."""
    from statsmodels.datasets import spector

    data = spector.load_pandas().data
    return _scatter_inputs(engine_table, data["GRADE"].to_numpy(), data["GPA"].to_numpy())


def test_binary_line_and_band_stay_inside_shares_on_spector(engine_table, monkeypatch):
    import statsmodels.api as sm
    from statsmodels.datasets import spector

    data = spector.load_pandas().data
    ols = sm.OLS(data["GRADE"], sm.add_constant(data["GPA"])).fit()
    # Reference: statsmodels OLS, GRADE on GPA: -1.2586 + 0.5140 GPA, below 0 under
    # GPA 2.45 (1.2586 / 0.5140) and the data start at 2.06, so the uncut line leaves [0, 1].
    crossing = -ols.params["const"] / ols.params["GPA"]
    assert data["GPA"].min() < crossing < data["GPA"].max()
    _, fit, sample = _spector(engine_table)
    assert fit.slope == pytest.approx(ols.params["GPA"], rel=1e-9)
    figures = _drawn_figures(monkeypatch)
    chart = relationship_chart(
        fit, sample, "Grade point average", "Grade improved", 3, 0.95, binary=True
    )
    (axes,) = figures[0].axes
    ys = _drawn_ys(figures[0])
    assert ys.size > 100 and ys.min() >= 0.0 and ys.max() <= 1.0
    # The line ends on 0 at the crossing, not one grid step short of it.
    (line,) = axes.lines
    drawn = np.isfinite(line.get_ydata())
    assert np.asarray(line.get_xdata())[drawn].min() == pytest.approx(crossing, rel=1e-9)
    assert [t.get_text() for t in axes.get_yticklabels()] == ["0%", "25%", "50%", "75%", "100%"]
    assert (
        "A straight line through a yes/no outcome can run past 0% or 100%, as this one does "
        "below 0% for grade point average under 2.45; it is drawn only inside 0%–100%, "
        "and its band is cut at 0% and 100%." in chart.caption
    )
    # The headline's unit: 0.514 per unit is 51.4 percentage points per unit.
    assert "Slope 51.4 percentage points per unit" in chart.caption
    assert "51.4 percentage points more" in chart.alt


def _bernoulli(engine_table, low: float, high: float, n: int, seed: int):
    # Constructed: a 0/1 outcome whose chance of 1 runs from ``low`` to ``high`` over x in 0-10.
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 10, n)
    y = (rng.random(n) < low + (high - low) * x / 10).astype(float)
    return _scatter_inputs(engine_table, y, x)


def test_binary_line_inside_shares_gets_no_cut_sentence(engine_table, monkeypatch):
    _, fit, sample = _bernoulli(engine_table, 0.3, 0.7, 600, 11)
    bands = np.array([fit.band(x, 0.95) for x in np.linspace(fit.x_min, fit.x_max, 50)])
    assert bands.min() > 0 and bands.max() < 1  # the precondition of the case
    figures = _drawn_figures(monkeypatch)
    chart = relationship_chart(fit, sample, "X", "Outcome", 3, 0.95, binary=True)
    assert "can run past" not in chart.caption
    (line,) = figures[0].axes[0].lines
    # Nothing was cut: the whole line is drawn, from the first x to the last.
    assert np.isfinite(line.get_ydata()).all()
    assert line.get_xdata()[0] == fit.x_min and line.get_xdata()[-1] == fit.x_max


def test_binary_band_alone_past_zero_is_cut_and_said(engine_table, monkeypatch):
    _, fit, sample = _bernoulli(engine_table, 0.1, 0.5, 120, 7)
    grid = np.linspace(fit.x_min, fit.x_max, 50)
    line = fit.intercept + fit.slope * grid
    bands = np.array([fit.band(x, 0.95) for x in grid])
    assert line.min() > 0 and line.max() < 1 and bands.min() < 0  # the precondition
    figures = _drawn_figures(monkeypatch)
    chart = relationship_chart(fit, sample, "X", "Outcome", 3, 0.95, binary=True)
    ys = _drawn_ys(figures[0])
    assert ys.min() >= 0.0 and ys.max() <= 1.0
    assert "this one stays inside, but its band does not and is cut at 0%." in chart.caption


def test_continuous_target_line_is_not_cut(engine_table, monkeypatch):
    # The zero-heavy count case above: values up to 60, a line well above 1, not a share.
    rng = np.random.default_rng(6)
    x = rng.uniform(0, 20, 3000)
    y = np.where(rng.random(3000) < 0.7, 0.0, rng.poisson(1 + 0.1 * x)).astype(float)
    y[:12] = np.linspace(25, 60, 12)
    _, fit, sample = _scatter_inputs(engine_table, y, x)
    figures = _drawn_figures(monkeypatch)
    chart = relationship_chart(fit, sample, "Years", "Count", 2, 0.95)
    (line,) = figures[0].axes[0].lines
    grid = np.linspace(fit.x_min, fit.x_max, 120)
    assert np.allclose(line.get_ydata(), fit.intercept + fit.slope * grid)
    assert f"Slope {fmt(fit.slope, 2)} per unit" in chart.caption
    assert "percentage points" not in chart.caption and "can run past" not in chart.caption
    assert "%" not in "".join(t.get_text() for t in figures[0].axes[0].get_yticklabels())


@pytest.mark.parametrize("levels", [2, 4])
def test_binary_lines_by_group_stay_inside_shares(engine_table, monkeypatch, levels):
    # Constructed Simpson case on a 0/1 outcome: within each level the chance of 1 rises
    # steeply with x, across levels it falls; the lines pass 0 and 1 inside their ranges.
    rng = np.random.default_rng(5)
    names = np.repeat([f"g{i}" for i in range(levels)], 150)
    shift = np.repeat(np.arange(levels) * 4.0, 150)
    x = rng.uniform(0, 4, 150 * levels) + shift
    chance = np.clip(0.95 - 0.2 * shift / 4 + 0.4 * (x - shift - 2), 0, 1)
    y = (rng.random(150 * levels) < chance).astype(float)
    table, fit, sample = _scatter_inputs(engine_table, y, x, names)
    slopes = slopes_by_group(table, "g0", "x0", "g0", "x0", 0.95)
    exits = [
        (lv.intercept + lv.slope * lv.x_min, lv.intercept + lv.slope * lv.x_max)
        for lv in slopes.levels
    ]
    assert any(min(e) < 0 or max(e) > 1 for e in exits)  # the precondition
    figures = _drawn_figures(monkeypatch)
    chart = relationship_chart(
        fit, sample, "X", "Outcome", 2, 0.95, by_group=slopes, group_label="Kind", binary=True
    )
    assert (rules.SMALL_MULTIPLES in chart.rules) == (levels == 4)
    ys = _drawn_ys(figures[0])
    assert ys.min() >= 0.0 and ys.max() <= 1.0
    assert "the lines here that do are drawn only inside 0%–100%." in chart.caption


def test_binary_binned_density_stays_inside_shares(engine_table, monkeypatch):
    # Constructed: 10,000 rows of a 0/1 outcome whose chance of 1 runs from 0 to 1 over x,
    # so the straight line passes both 0 and 1 inside the data's range.
    rng = np.random.default_rng(12)
    x = rng.uniform(0, 10, 10_000)
    y = (rng.random(10_000) < np.clip(-0.3 + 0.16 * x, 0, 1)).astype(float)
    table = engine_table(pd.DataFrame({"y": y, "x0": x}))
    bins = density_bins(table, "x0", "x")
    (fit,) = fit_lines(table, ["x0"], 0.95)
    assert fit.intercept + fit.slope * fit.x_min < 0 < 1 < fit.intercept + fit.slope * fit.x_max
    figures = _drawn_figures(monkeypatch)
    chart = density_chart(fit, bins, "X", "Outcome", 3, 0.95, binary=True)
    axes = figures[0].axes[0]
    ys = np.concatenate([np.asarray(line.get_ydata(), dtype=float) for line in axes.lines])
    ys = ys[np.isfinite(ys)]
    assert ys.min() >= 0.0 and ys.max() <= 1.0
    assert "as this one does below 0% for x under" in chart.caption
    assert "and above 100% for x over" in chart.caption
    assert "percentage points per unit" in chart.caption
