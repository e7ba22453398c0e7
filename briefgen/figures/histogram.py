"""The target's distribution: bars of counts per Freedman–Diaconis or whole-number bin.

Drawn from the bin edges and counts only; the figure never sees a row. Bars start
at zero, light fill with a dark edge so they survive a grayscale printer. When the
bins differ in width (a count's 0 alone before wider bins) a bar's height is its
rows per unit of the axis, so its area, not its height, is its rows (Freedman,
Pisani & Purves, Statistics, 4th ed., ch. 3: the density scale for unequal class
intervals; cited from memory); otherwise the height is the rows.
"""

from __future__ import annotations

import numpy as np

from briefgen.figures.rules import BARS_FROM_ZERO, CONTINUOUS_AXIS, bar_limits
from briefgen.figures.theme import BOX_FILL, INK, Chart, new_figure, themed, to_svg
from briefgen.numbers import fmt, fmt_count
from briefgen.present.wording import in_sentence
from briefgen.stats.histogram import HistogramBins


def _rule_phrase(bins: HistogramBins, decimals: int) -> str:
    width = fmt(bins.width, decimals)
    if bins.rule == "capped":
        return (
            f"{len(bins.counts)} equal bins of width {width} (the Freedman–Diaconis rule asked "
            f"for {fmt_count(bins.requested_bins)}, too many to read)"
        )
    if bins.rule == "whole_numbers":
        return "one bar per whole number"
    if bins.rule == "whole_numbers_fd":
        return (
            f"bars {fmt_count(round(bins.width))} whole numbers wide (the Freedman–Diaconis "
            "width rounded to a whole number), edges half-way between whole numbers so none "
            "is split"
        )
    if bins.rule == "whole_numbers_grouped":
        wide = (
            f"bars {fmt_count(round(bins.width))} whole numbers wide, edges half-way between "
            "whole numbers so none is split"
        )
        if bins.edges[1] - bins.edges[0] < bins.width:
            share = fmt(100 * bins.counts[0] / bins.n, 0)
            wide = f"0 in a bar of its own ({share}% of rows), then {wide}"
        return (
            f"{wide} (one bar per whole number would be {fmt_count(bins.requested_bins)} "
            "bars, too many to read)"
        )
    if bins.rule == "single":
        return "one bin: the middle half of the values has no spread"
    return f"Freedman–Diaconis bins of width {width}"


def _whole_numbers_held(low_edge: float, high_edge: float) -> str:
    """The whole numbers inside a bin with edges at k − 0.5, in words."""
    first, last = low_edge + 0.5, high_edge - 0.5
    if first == last:
        return f"the {fmt(first, 0)}s"
    return f"{fmt(first, 0)} to {fmt(last, 0)}"


def histogram_chart(bins: HistogramBins, label: str, decimals: int) -> Chart:
    """Bars of the number of rows per bin, with the bin rule and n in the caption.

    ``label`` is the target's label as the user wrote it: the axis keeps it, sentences
    lower-case only its first letter (``in_sentence``).
    """
    words = in_sentence(label)
    edges = np.array(bins.edges)
    counts = np.array(bins.counts)
    widths = np.diff(edges)
    # Unequal bins (only whole-number ones, whose widths are exact; equal bins from
    # linspace differ in the last place): rows per unit, so area stays proportional to rows.
    per_unit = bins.rule.startswith("whole") and bool(widths.min() < widths.max())
    heights = counts / widths if per_unit else counts
    with themed():
        figure = new_figure(2.4)
        axes = figure.subplots()
        axes.bar(
            edges[:-1],
            heights,
            width=widths,
            align="edge",
            color=BOX_FILL,
            edgecolor=INK,
            linewidth=0.6,
        )
        axes.set_ylim(*bar_limits(0, float(heights.max()) * 1.05))
        axes.set_xlabel(label)
        axes.set_ylabel("Rows per whole number" if per_unit else "Rows")
        axes.grid(axis="x", visible=False)
        svg = to_svg(figure)
    tallest = int(np.argmax(heights))
    rows = fmt_count(int(counts[tallest]))
    if bins.rule.startswith("whole_numbers"):
        # Edges at k − 0.5: name the whole numbers a bar holds, not its edges.
        first, last = (fmt(edge, 0) for edge in (edges[0] + 0.5, edges[-1] - 0.5))
        held = _whole_numbers_held(edges[tallest], edges[tallest + 1])
        per = f", {fmt(heights[tallest], 0)} per whole number" if per_unit else ""
        alt = (
            f"Histogram of {words} over {fmt_count(bins.n)} rows, bars for the whole numbers "
            f"{first} to {last}; the tallest bar ({rows} rows{per}) holds {held}."
        )
    else:
        low, high = fmt(edges[tallest], decimals), fmt(edges[tallest + 1], decimals)
        alt = (
            f"Histogram of {words} over {fmt_count(bins.n)} rows, from {fmt(edges[0], decimals)} "
            f"to {fmt(edges[-1], decimals)}; the most values ({rows}) lie between {low} and "
            f"{high}."
        )
    height = (
        "Bar height: rows per whole number (a bar's area is its rows)"
        if per_unit
        else "Bar height: number of rows"
    )
    caption = (
        f"How {words} is spread over all {fmt_count(bins.n)} rows with a value: "
        f"{_rule_phrase(bins, decimals)}. {height}."
    )
    return Chart(
        key="histogram",
        title=f"How {words} is spread",
        svg=svg,
        alt=alt,
        caption=caption,
        rules=(CONTINUOUS_AXIS, BARS_FROM_ZERO),
    )
