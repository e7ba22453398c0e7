"""One median-reference pass per predictor, shared by the line fits and the correlations.

Sums are shifted by these medians (data values) before squaring, so they stay exact
at large offsets; computing them once saves an engine scan per brief.
"""

from __future__ import annotations

import ibis.expr.types as ir

from briefgen.stats.core.analysis import one_row
from briefgen.stats.core.quantiles import narrowed_quantiles, narrowing


def median_references(table: ir.Table, predictors: list[str]) -> dict:
    """Per predictor i: rows with both values ``n{i}``, medians ``x_ref{i}``/``y_ref{i}``
    over them, the ranges ``x_min{i}``/``x_max{i}`` and ``y_min{i}``/``y_max{i}`` (they
    bound the deviations that the exact sums scale), ``approx_distinct{i}`` and
    ``y_distinct{i}``, estimates (HyperLogLog) of how many distinct predictor and target
    values those rows take (the second decides how the correlation ranks), and
    ``lacking{i}``, rows with a target value but no predictor value.

    The estimate costs nothing beside the medians, where an exact count of distinct
    values nearly doubles this pass on a continuous predictor; an exact count follows
    only for the predictors the estimate says take few values."""
    expressions = {}
    y = table.y
    for i, column in enumerate(predictors):
        x = table[column]
        both = x.notnull() & y.notnull()
        expressions |= {
            f"n{i}": both.sum(),
            f"x_min{i}": x.min(where=both),
            f"x_max{i}": x.max(where=both),
            f"y_min{i}": y.min(where=both),
            f"y_max{i}": y.max(where=both),
            f"approx_distinct{i}": x.approx_nunique(where=both),
            f"y_distinct{i}": y.approx_nunique(where=both),
            f"lacking{i}": (y.notnull() & x.isnull()).sum(),
        }
        if not narrowing():
            expressions |= {
                f"x_ref{i}": x.quantile(0.5, where=both),
                f"y_ref{i}": y.quantile(0.5, where=both),
            }
    found = one_row(table, expressions)
    if narrowing():
        # Too many values for the engine's quantile state: narrow in bounded memory.
        for i, column in enumerate(predictors):
            rows = table.filter(table[column].notnull() & y.notnull())
            for axis, name in (("x", column), ("y", "y")):
                medians = narrowed_quantiles(rows, name, (0.5,))
                found[f"{axis}_ref{i}"] = medians[()][0] if () in medians else None
    return found
