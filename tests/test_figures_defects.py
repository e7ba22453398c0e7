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
from matplotlib.colors import to_rgb

from briefgen.figures import distribution, heatmap, rules
from briefgen.figures.cross import cross_chart, dot_layout
from briefgen.figures.density import density_chart
from briefgen.figures.histogram import histogram_chart
from briefgen.figures.relationship import relationship_chart
from briefgen.figures.theme import new_figure, themed
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
