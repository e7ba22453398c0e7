"""A two-way table as a heat map: each cell shaded by its mean, with the mean printed in it.

Used when the table is too large for a dot plot (``rules.two_way_kind``). The shade
is cividis, a perceptually uniform sequential map that is also readable with
colour-vision deficiency and in grayscale (Nuñez, Anderton & Renslow 2018, PLoS ONE
13); the printed value carries the number, the shade only the pattern. Cells with
fewer rows than the table's threshold are hatched and their value put in brackets;
combinations absent from the data stay blank.
"""

from __future__ import annotations

import matplotlib as mpl
import numpy as np
from matplotlib.colors import Normalize, to_rgb

from briefgen.figures.cross import orient
from briefgen.figures.rules import CATEGORICAL_AXIS, HEAT_MAP, NATURAL_ORDER, level_order
from briefgen.figures.theme import (
    INK,
    MUTED,
    SHORTENED_NOTE,
    Chart,
    new_figure,
    short_label,
    shortened,
    themed,
    to_svg,
)
from briefgen.numbers import fmt_percent
from briefgen.present.wording import Wording, in_sentence
from briefgen.stats.core.frame import ShownLevels
from briefgen.stats.twoway import CrossTable

COLOUR_MAP = "cividis_r"  # reversed: darker = higher, as more ink reads as more


def _luminance(rgb: tuple[float, float, float]) -> float:
    """Relative luminance, WCAG 2.1 (sRGB linearised)."""
    linear = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in rgb]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]


def text_colour(fill: tuple[float, float, float]) -> str:
    """Black or white, whichever contrasts more with ``fill`` (WCAG 2.1 contrast ratio)."""
    light = _luminance(fill)
    on_black = (light + 0.05) / 0.05
    on_white = 1.05 / (light + 0.05)
    return "black" if on_black >= on_white else "white"


def _order(levels, margins, shown: ShownLevels | None) -> tuple[tuple[str, ...], str]:
    numeric, other = (shown.numeric, shown.other_label) if shown is not None else (False, None)
    return level_order(levels, margins, numeric, other)


def heat_map_chart(
    cross: CrossTable,
    words: Wording,
    names: tuple[str, str],
    shown: tuple[ShownLevels | None, ShownLevels | None] = (None, None),
) -> Chart | None:
    """Cells shaded and labelled by their mean; the variable with more levels runs down."""
    turned = orient(cross, names, shown)
    down, across, cell = turned.down, turned.across, turned.cell
    (down_name, across_name), (down_shown, across_shown) = turned.names, turned.shown
    margins = turned.margin_means()
    rows, order = _order(down, margins, down_shown)
    columns, _ = _order(across, {}, across_shown)
    means = np.full((len(rows), len(columns)), np.nan)
    small = np.zeros_like(means, dtype=bool)
    for i, row in enumerate(rows):
        for j, column in enumerate(columns):
            found = cell(row, column)
            if found is not None and found.mean is not None:
                means[i, j] = found.mean
                small[i, j] = found.too_small
    trusted = means[~small & np.isfinite(means)]
    if trusted.size == 0:
        return None
    binary = words.kind == "binary"

    def value(v: float) -> str:
        return fmt_percent(v, 1) if binary else words.value(v)

    norm = Normalize(float(trusted.min()), float(trusted.max()))
    colour_map = mpl.colormaps[COLOUR_MAP]
    with themed():
        figure = new_figure(0.9 + 0.27 * max(len(rows), 2))
        axes = figure.subplots()
        shaded = np.ma.masked_where(small | ~np.isfinite(means), means)
        image = axes.pcolormesh(shaded, cmap=colour_map, norm=norm, edgecolors="white", lw=1)
        for i, j in zip(*np.nonzero(small & np.isfinite(means)), strict=True):
            axes.add_patch(
                mpl.patches.Rectangle(
                    (j, i), 1, 1, fill=False, edgecolor=MUTED, hatch="////", lw=0.0
                )
            )
        for i in range(len(rows)):
            for j in range(len(columns)):
                if not np.isfinite(means[i, j]):
                    continue
                if small[i, j]:
                    text, colour, fill = f"({value(means[i, j])})", INK, "white"
                else:
                    text = value(means[i, j])
                    fill = to_rgb(colour_map(norm(means[i, j])))
                    colour = text_colour(fill)
                # Each value sits on a patch of its cell's own shade (white over a small cell's
                # hatching), so it reads the same and the figure review sees its real background.
                patch = {"boxstyle": "square,pad=0.15", "facecolor": fill, "edgecolor": "none"}
                axes.text(
                    j + 0.5,
                    i + 0.5,
                    text,
                    ha="center",
                    va="center",
                    fontsize=8,
                    color=colour,
                    bbox=patch,
                )
        axes.set_xticks(np.arange(len(columns)) + 0.5, [short_label(c) for c in columns])
        axes.set_yticks(np.arange(len(rows)) + 0.5, [short_label(r) for r in rows])
        axes.set_xlim(0, len(columns))
        axes.set_ylim(len(rows), 0)  # first row at the top, as in the table
        axes.xaxis.tick_top()
        axes.set_xlabel(across_name)
        axes.xaxis.set_label_position("top")
        axes.set_ylabel(down_name)
        axes.tick_params(length=0)
        axes.grid(False)
        for spine in axes.spines.values():
            spine.set_visible(False)
        bar = figure.colorbar(image, ax=axes, shrink=0.8, pad=0.02, aspect=25)
        bar.set_label(f"Mean {in_sentence(words.label)}" + (" (share of 1s)" if binary else ""))
        bar.outline.set_visible(False)
        svg = to_svg(figure)
    sorted_by = (
        f"{down_name} in its natural order"
        if order == NATURAL_ORDER
        else f"{down_name} sorted by its overall mean, highest at the top"
    )
    caption = (
        f"Mean {in_sentence(words.label)} in each combination of {down_name} and {across_name}: "
        f"the value is printed in its cell and the shade follows it (cividis, darker = higher); "
        f"{sorted_by}. Hatched, value in brackets: fewer than {cross.min_cell} rows, left out of "
        "the shading and of any comparison. Blank: no rows. The table gives intervals and n."
    )
    if shortened((*rows, *columns)):
        caption += f" {SHORTENED_NOTE}"
    high = np.unravel_index(np.nanargmax(np.where(small, np.nan, means)), means.shape)
    alt = (
        f"Heat map of mean {in_sentence(words.label)} over {len(rows)} levels of {down_name} and "
        f"{len(columns)} of {across_name}; highest: {rows[high[0]]} with {columns[high[1]]}, "
        f"{value(means[high])}."
    )
    return Chart(
        key=f"cross-{cross.row_variable}-{cross.column_variable}",
        title=f"{words.label} by {names[0]} and {names[1]}",
        svg=svg,
        alt=alt,
        caption=caption,
        rules=(HEAT_MAP, CATEGORICAL_AXIS, order),
    )
