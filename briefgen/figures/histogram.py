"""The target's distribution: bars of counts per Freedman–Diaconis bin.

Drawn from the bin edges and counts only; the figure never sees a row. Bars start
at zero, light fill with a dark edge so they survive a grayscale printer.
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
    if bins.rule == "single":
        return "one bin: the middle half of the values has no spread"
    return f"Freedman–Diaconis bins of width {width}"


def histogram_chart(bins: HistogramBins, label: str, decimals: int) -> Chart:
    """Bars of the number of rows per bin, with the bin rule and n in the caption.

    ``label`` is the target's label as the user wrote it: the axis keeps it, sentences
    lower-case only its first letter (``in_sentence``).
    """
    words = in_sentence(label)
    edges = np.array(bins.edges)
    counts = np.array(bins.counts)
    with themed():
        figure = new_figure(2.4)
        axes = figure.subplots()
        axes.bar(
            edges[:-1],
            counts,
            width=np.diff(edges),
            align="edge",
            color=BOX_FILL,
            edgecolor=INK,
            linewidth=0.6,
        )
        axes.set_ylim(*bar_limits(0, float(counts.max()) * 1.05))
        axes.set_xlabel(label)
        axes.set_ylabel("Rows")
        axes.grid(axis="x", visible=False)
        svg = to_svg(figure)
    tallest = int(np.argmax(counts))
    low, high = fmt(edges[tallest], decimals), fmt(edges[tallest + 1], decimals)
    alt = (
        f"Histogram of {words} over {fmt_count(bins.n)} rows, from {fmt(edges[0], decimals)} to "
        f"{fmt(edges[-1], decimals)}; the most values ({fmt_count(int(counts[tallest]))}) lie "
        f"between {low} and {high}."
    )
    caption = (
        f"How {words} is spread over all {fmt_count(bins.n)} rows with a value: "
        f"{_rule_phrase(bins, decimals)}. Bar height: number of rows."
    )
    return Chart(
        key="histogram",
        title=f"How {words} is spread",
        svg=svg,
        alt=alt,
        caption=caption,
        rules=(CONTINUOUS_AXIS, BARS_FROM_ZERO),
    )
