"""Whether two group variables combine beyond adding up: the interaction F test.

The test compares the cell-means model ``y ~ row × column`` with the additive model
``y ~ row + column``. Both come from the cell summaries alone: the additive fit to
the cell means weighted by their n is the least-squares fit on the rows, so

    SS_interaction = Σ nᵢⱼ (ȳᵢⱼ − ŷᵢⱼ)²,   SS_within = Σ (nᵢⱼ − 1) sᵢⱼ²,

and F = (SS_interaction / df₁) / (SS_within / (N − cells)), df₁ = cells − (R + C − blocks).

On a strongly skewed target one extreme value in one cell can make a neighbouring
cell look out of line, so the test runs on a scale that fits: ln(y) when every value
is positive (the lognormal case), the average ranks otherwise (Conover & Iman 1981).
The scale is chosen by the caller and recorded in the result.
"""

from __future__ import annotations

from dataclasses import dataclass

import ibis
import ibis.expr.types as ir
import numpy as np
from scipy import stats as scipy_stats

from briefgen.stats.core.additive import additive_fit, blocks
from briefgen.stats.core.shifted import deviations
from briefgen.stats.core.summary import summarise

SCALES = ("mean", "log", "rank")


@dataclass(frozen=True, slots=True)
class InteractionTest:
    """F test of the row × column interaction on ``scale`` ("mean", "log" or "rank").

    Fields are None when the design leaves no degree of freedom for the interaction
    (for instance one level of either variable) or no spread within cells.
    """

    scale: str
    cells: int
    f_statistic: float | None
    df_interaction: int | None
    df_within: int | None
    p_value: float | None


def _scaled(table: ir.Table, scale: str) -> ir.Table:
    """``row``, ``column`` and the target on ``scale``, rows with both levels and a value."""
    if scale == "log":
        return table.mutate(y=table.y.ln())
    if scale == "rank":
        # Average rank of ties: lowest (0-based) + 1 + (ties − 1) / 2.
        ranked = table.mutate(
            lowest=ibis.rank().over(order_by=table.y),
            ties=table.y.count().over(group_by=table.y),
        )
        average = ranked.lowest.cast("float64") + 1 + (ranked.ties.cast("float64") - 1) / 2
        return ranked.select("row", "column", y=average)
    return table


def interaction_test(
    frame_table: ir.Table, row_column: str, col_column: str, scale: str = "mean"
) -> InteractionTest:
    """The interaction F test of ``y`` over two group columns of the analysis frame."""
    table = frame_table
    usable = table.filter(
        table[row_column].notnull() & table[col_column].notnull() & table.y.notnull()
    ).select(row=table[row_column].cast("string"), column=table[col_column].cast("string"), y="y")
    keyed = summarise(_scaled(usable, scale), ["row", "column"], 0.95, list_outliers=False)
    cells = [s for s in keyed.summaries.values() if s.n >= 1 and s.mean is not None]
    keys = [key for key, s in keyed.summaries.items() if s.n >= 1 and s.mean is not None]
    empty = InteractionTest(scale, len(cells), None, None, None, None)
    if len(cells) < 2:
        return empty
    row_labels = {label: i for i, label in enumerate(sorted({k[0] for k in keys}))}
    column_labels = {label: i for i, label in enumerate(sorted({k[1] for k in keys}))}
    row_of = np.array([row_labels[k[0]] for k in keys])
    column_of = np.array([column_labels[k[1]] for k in keys])
    weights = np.array([float(s.n) for s in cells])
    reference = cells[0].median if cells[0].median is not None else cells[0].mean
    means = np.array(deviations(cells, reference))
    parameters = len(row_labels) + len(column_labels) - blocks(row_of, column_of)
    df_interaction = len(cells) - parameters
    df_within = int(weights.sum()) - len(cells)
    fitted = additive_fit(row_of, column_of, means, weights)
    if fitted is None or df_interaction < 1 or df_within < 1:
        return empty
    ss_interaction = float(np.sum(weights * (means - fitted) ** 2))
    ss_within = sum((s.n - 1) * s.sd**2 for s in cells if s.n >= 2 and s.sd is not None)
    if ss_within <= 0:
        return empty
    f = (ss_interaction / df_interaction) / (ss_within / df_within)
    p = float(scipy_stats.f.sf(f, df_interaction, df_within))
    return InteractionTest(scale, len(cells), f, df_interaction, df_within, p)


def scale_for(strongly_skewed: bool, minimum: float | None) -> str:
    """The scale the interaction test runs on: means unless the target is strongly skewed."""
    if not strongly_skewed:
        return "mean"
    return "log" if minimum is not None and minimum > 0 else "rank"
