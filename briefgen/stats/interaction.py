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

from dataclasses import dataclass, replace

import ibis.expr.types as ir
import numpy as np

from briefgen.stats.core.additive import additive_fit, blocks
from briefgen.stats.core.distributions import f_sf
from briefgen.stats.core.ranking import doubled_average_rank
from briefgen.stats.core.shifted import deviations
from briefgen.stats.core.summary import summarise

SCALES = ("mean", "log", "rank")


@dataclass(frozen=True, slots=True)
class AdjustedTest:
    """Whether one group variable still matters once the other is allowed for.

    The F test of ``y ~ other + this`` against ``y ~ other`` (type II sums of squares,
    on the interaction test's scale), over the additive model's residual. ``kept`` is
    its sum of squares over the variable's own (unadjusted) sum of squares: the share
    of its differences the other variable does not explain. Fields are None when the
    other variable leaves no degree of freedom for it.
    """

    f_statistic: float | None
    df_effect: int | None
    df_residual: int | None
    p_value: float | None
    kept: float | None


_UNDEFINED = AdjustedTest(None, None, None, None, None)


@dataclass(frozen=True, slots=True)
class InteractionTest:
    """F test of the row × column interaction on ``scale`` ("mean", "log" or "rank").

    Interaction fields are None when the design leaves no degree of freedom for the
    interaction (for instance one level of either variable, or levels that occur in
    one combination only) or no spread within cells. ``row_given_column`` and
    ``column_given_row`` test each variable once the other is allowed for, which
    tells a real difference from one the other variable explains (confounding).
    """

    scale: str
    cells: int
    f_statistic: float | None
    df_interaction: int | None
    df_within: int | None
    p_value: float | None
    row_given_column: AdjustedTest = _UNDEFINED
    column_given_row: AdjustedTest = _UNDEFINED


def _scaled(table: ir.Table, scale: str) -> ir.Table:
    """``row``, ``column`` and the target on ``scale``, rows with both levels and a value."""
    if scale == "log":
        return table.mutate(y=table.y.ln())
    if scale == "rank":
        # Average rank of ties (see stats.core.ranking).
        doubled = doubled_average_rank(table.y, table.count().over())
        return table.select("row", "column", y=doubled.cast("float64") / 2)
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
    ss_within = sum((s.n - 1) * s.sd**2 for s in cells if s.n >= 2 and s.sd is not None)
    fitted = additive_fit(row_of, column_of, means, weights)
    # No interaction df: the additive model fits every cell mean exactly.
    fitted = means if fitted is None else fitted
    sse_additive = ss_within + float(np.sum(weights * (means - fitted) ** 2))
    adjusted = {
        "row_given_column": _given(
            row_of, column_of, means, weights, ss_within, sse_additive, parameters
        ),
        "column_given_row": _given(
            column_of, row_of, means, weights, ss_within, sse_additive, parameters
        ),
    }
    if df_interaction < 1 or df_within < 1 or ss_within <= 0:
        return replace(empty, **adjusted)
    ss_interaction = sse_additive - ss_within
    f = (ss_interaction / df_interaction) / (ss_within / df_within)
    p = f_sf(f, df_interaction, df_within)
    return InteractionTest(scale, len(cells), f, df_interaction, df_within, p, **adjusted)


def _group_means(index: np.ndarray, means: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Each cell's level mean over ``index`` (weighted by n), cell by cell."""
    totals = np.bincount(index, weights * means)
    sizes = np.bincount(index, weights)
    return (totals / sizes)[index]


def _given(
    this: np.ndarray,
    other: np.ndarray,
    means: np.ndarray,
    weights: np.ndarray,
    ss_within: float,
    sse_additive: float,
    parameters: int,
) -> AdjustedTest:
    """Type II F test of ``this`` variable given ``other``, from the cell summaries."""
    sse_other = ss_within + float(
        np.sum(weights * (means - _group_means(other, means, weights)) ** 2)
    )
    grand = float(np.sum(weights * means) / weights.sum())
    ss_alone = float(np.sum(weights * (_group_means(this, means, weights) - grand) ** 2))
    df_effect = parameters - len(np.unique(other))
    df_residual = int(weights.sum()) - parameters
    if df_effect < 1 or df_residual < 1 or sse_additive <= 0:
        return _UNDEFINED
    ss_effect = max(sse_other - sse_additive, 0.0)
    f = (ss_effect / df_effect) / (sse_additive / df_residual)
    p = f_sf(f, df_effect, df_residual)
    return AdjustedTest(
        f, df_effect, df_residual, p, ss_effect / ss_alone if ss_alone > 0 else None
    )


def scale_for(strongly_skewed: bool, minimum: float | None) -> str:
    """The scale the interaction test runs on: means unless the target is strongly skewed."""
    if not strongly_skewed:
        return "mean"
    return "log" if minimum is not None and minimum > 0 else "rank"
