"""Shares of a 0/1 target by level: each share with its Wilson interval, on a 0–100% axis.

A 0/1 outcome has no spread worth a box: its box would sit at 0 or 1 with every
other value an outlier. The share and its interval are the whole story, so that
is what the chart shows, against a dashed line at the share over all rows.
"""

from __future__ import annotations

from briefgen.figures.rules import (
    CATEGORICAL_AXIS,
    FOLDED_OTHER,
    NATURAL_ORDER,
    VALUE_ORDER,
    is_natural_order,
)
from briefgen.figures.theme import (
    ACCENT,
    LINE,
    ROW_IN,
    SHORTENED_NOTE,
    Chart,
    new_figure,
    rows_height,
    short_label,
    shortened,
    themed,
    to_svg,
)
from briefgen.numbers import fmt_count, fmt_level, fmt_share
from briefgen.present.wording import in_sentence
from briefgen.stats.groups import GroupResult
from briefgen.stats.proportions import Share


def share_chart(
    group: GroupResult,
    overall: Share | None,
    label: str,
    confidence: float,
    name: str,
    row_in: float = ROW_IN,
) -> Chart:
    """Dots at each level's share (percent), bars for its Wilson interval.

    ``row_in`` closes the rows up for page 1 (see ``theme.compact_row_in``).
    """
    shares = [s for s in group.shares if s.share is not None]
    levels = [s.level for s in shares]
    order = NATURAL_ORDER if is_natural_order(levels, group.shown.numeric) else VALUE_ORDER
    # First level at the top: matplotlib counts positions upwards from the bottom.
    positions = list(range(len(shares), 0, -1))
    with themed():
        figure = new_figure(rows_height(len(shares), row_in))
        axes = figure.subplots()
        axes.hlines(
            positions,
            [100 * s.ci_low for s in shares],
            [100 * s.ci_high for s in shares],
            color=LINE,
            linewidth=2.2,
        )
        axes.plot(
            [100 * s.share for s in shares],
            positions,
            "o",
            color=LINE,
            markersize=5,
            markeredgecolor="white",
            markeredgewidth=0.6,
        )
        if overall is not None and overall.share is not None:
            axes.axvline(100 * overall.share, color=ACCENT, linestyle=(0, (4, 2)), linewidth=1.1)
        axes.set_yticks(positions, [short_label(s.level) for s in shares])
        axes.set_xlim(0, 100)
        axes.set_xlabel(f"{label}: share of rows that are 1 (%)")
        axes.set_title(
            f"Share with {fmt_level(confidence)} interval", fontsize=8.5, fontweight="normal"
        )
        axes.grid(axis="y", visible=False)
        axes.tick_params(axis="y", length=0)
        svg = to_svg(figure)
    counts = ", ".join(f"{s.level} {fmt_count(s.n)}" for s in shares)
    high = max(shares, key=lambda s: s.share)
    low = min(shares, key=lambda s: s.share)
    return Chart(
        key=f"group-{group.variable}",
        title=f"{label} by {name}",
        svg=svg,
        alt=(
            f"Share of rows where {in_sentence(label)} is 1, for {len(shares)} levels of {name}. "
            f"Highest: {high.level} ({fmt_share(high.share, 1)}); "
            f"lowest: {low.level} ({fmt_share(low.share, 1)})."
        ),
        caption=(
            f"{label} by {name}: share of rows that are 1, with {fmt_level(confidence)} Wilson "
            f"score intervals; dashed line: share over all rows. n per level: {counts}."
            + (f" {SHORTENED_NOTE}" if shortened(s.level for s in shares) else "")
        ),
        rules=(CATEGORICAL_AXIS, order, *((FOLDED_OTHER,) if group.shown.other_label else ())),
    )
