"""Target against a predictor as a binned density: rows counted in 2-D bins by the engine.

Drawn instead of the sampled scatter when there are more rows than a scatter shows
(``rules.points_or_density``): every row counts, and the file holds one shaded
rectangle per occupied bin, however many rows there are. Shades are cividis, a
perceptually uniform sequential map (Nuñez et al. 2018), on a log scale when the
counts differ more than tenfold (``rules.magnitudes_differ``); empty bins stay white.
The fitted line and its band, from the full-data fit, are drawn over the bins; for a
0/1 target both stay inside 0%–100% (``share_bounds``).
"""

from __future__ import annotations

import matplotlib as mpl
import matplotlib.patheffects as path_effects
import numpy as np
from matplotlib.colors import ListedColormap, LogNorm, Normalize

from briefgen.figures.rules import (
    BINNED_DENSITY,
    CLIPPED_AXIS,
    CONTINUOUS_AXIS,
    LOG_AXIS,
    magnitudes_differ,
)
from briefgen.figures.scales import mark_above, plain_log_ticks
from briefgen.figures.share_bounds import fit_cut_sentence, line_and_band, share_axis, slope_text
from briefgen.figures.theme import ACCENT, INK, Chart, new_figure, themed, to_svg
from briefgen.numbers import fmt, fmt_count, fmt_level
from briefgen.present.wording import in_sentence
from briefgen.stats.density import DensityBins
from briefgen.stats.regression import RegressionFit

# cividis reversed (darker = more rows, as more ink reads as more), without its palest fifth,
# so a bin of one row still shows on white paper.
COLOUR_MAP = ListedColormap(mpl.colormaps["cividis_r"](np.linspace(0.2, 1.0, 256)))


def line_alt(
    drawing: str, y_label: str, x_label: str, fit, slope_decimals: int, binary: bool = False
) -> str:
    """Alt text of a chart with a fitted line: its direction and the slope in words.

    The slope is said as a size with "more" or "less", never "-0.3 more"; for a 0/1
    target in percentage points, as the headline says it.
    """
    rising = fit.slope > 0
    return (
        f"{drawing} of {in_sentence(y_label)} against {in_sentence(x_label)} with a "
        f"{'rising' if rising else 'falling'} fitted line; each unit goes with "
        f"{slope_text(abs(fit.slope), slope_decimals, binary)} {'more' if rising else 'less'} on average."
    )


def _draw_line(
    axes, fit: RegressionFit, confidence: float, log: bool, binary: bool = False
) -> list[float]:
    """The least-squares line and its band; on a log axis only where the line is above zero.

    For a 0/1 target the line is drawn only inside [0, 1] and the band is cut there;
    returns the edges the uncut band passed (``share_bounds.band_cut_edges``).
    """
    grid, line, bands, cut_edges = line_and_band(fit, confidence, binary)
    keep = line > 0 if log else np.ones_like(line, dtype=bool)
    halo = [path_effects.withStroke(linewidth=4, foreground="white")]
    for edge in (bands[:, 0], bands[:, 1]):
        axes.plot(grid[keep], edge[keep], color=ACCENT, linewidth=0.8, linestyle=(0, (2, 2)))
    axes.plot(grid[keep], line[keep], color=ACCENT, linewidth=2, path_effects=halo)
    return cut_edges


def _plain(value: float) -> str:
    """A clip value as written: whole numbers without decimals, others to two."""
    return fmt(value, 0 if float(value).is_integer() else 2)


def density_chart(
    fit: RegressionFit,
    bins: DensityBins,
    x_label: str,
    y_label: str,
    slope_decimals: int,
    confidence: float,
    height: float = 3.1,
    binary: bool = False,
) -> Chart | None:
    """Shaded 2-D bins of every row with both values, the fitted line and its band over them."""
    if fit.slope is None or fit.residual_sd is None:
        return None
    counts = np.array(bins.counts, dtype=float)
    occupied = counts[counts > 0]
    log_counts = magnitudes_differ([float(occupied.min()), float(occupied.max())])
    norm = LogNorm(1, occupied.max()) if log_counts else Normalize(0, occupied.max())
    log_y = bins.y_scale == "log"
    with themed():
        figure = new_figure(height)
        axes = figure.subplots()
        mesh = axes.pcolormesh(
            np.array(bins.x_edges),
            np.array(bins.y_edges),
            np.ma.masked_equal(counts.T, 0),
            cmap=COLOUR_MAP,
            norm=norm,
            linewidth=0,
            rasterized=True,
        )
        if log_y:
            axes.set_yscale("log")
            plain_log_ticks(axes.yaxis)
        cut_edges = _draw_line(axes, fit, confidence, log_y, binary)
        axes.set_xlim(bins.x_edges[0], bins.x_edges[-1])
        axes.set_ylim(bins.y_edges[0], bins.y_edges[-1])
        if binary:
            share_axis(axes)
        if bins.y_scale == "clipped" and bins.beyond:
            mark_above(axes, f"{fmt_count(bins.beyond)} rows", INK)
        axes.grid(False)
        axes.set_xlabel(x_label)
        axes.set_ylabel(y_label)
        bar = figure.colorbar(mesh, ax=axes, pad=0.02, aspect=25)
        bar.set_label("Rows per bin" + (" (log scale)" if log_counts else ""))
        bar.outline.set_visible(False)
        if log_counts:
            plain_log_ticks(bar.ax.yaxis)
        svg = to_svg(figure)
    rules = [CONTINUOUS_AXIS, BINNED_DENSITY]
    axis_note = ""
    if bins.y_scale == "log":
        rules.append(LOG_AXIS)
        axis_note = (
            " The vertical axis is logarithmic: the values span more than tenfold and a long tail "
            "would squash the rest; the straight line therefore shows as a curve."
        )
    elif bins.y_scale == "clipped":
        rules.append(CLIPPED_AXIS)
        axis_note = (
            f" The vertical axis stops at the 99th percentile ({_plain(bins.top)}) "
            f"so the line stays readable; {fmt_count(bins.beyond)} rows above it are in the fit "
            "but in no bin."
        )
    caption = (
        f"{y_label} against {in_sentence(x_label)}: all {fmt_count(bins.n)} rows with both values, "
        f"counted in {len(bins.x_edges) - 1} × {len(bins.y_edges) - 1} bins by the database engine "
        f"(shade: rows per bin, cividis, darker = more; white: none). Line: least-squares fit on all rows; dashed: "
        f"{fmt_level(confidence)} confidence band of the line. Slope {slope_text(fit.slope, slope_decimals, binary)} "
        f"per unit, R² {fmt(fit.r_squared, 2)}.{axis_note}"
    )
    if binary:
        caption += fit_cut_sentence(fit, cut_edges, in_sentence(x_label))
    alt = line_alt(
        f"Binned density over {fmt_count(bins.n)} rows",
        y_label,
        x_label,
        fit,
        slope_decimals,
        binary,
    )
    return Chart(
        key=f"fit-{fit.predictor}",
        title=f"{y_label} against {x_label}",
        svg=svg,
        alt=alt,
        caption=caption,
        rules=tuple(rules),
    )
