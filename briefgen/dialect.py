"""The few expressions whose spelling differs by engine, kept out of the statistics.

Ibis compiles one expression for every backend, except in two places briefgen needs:
PostgreSQL has no ``isnan`` rule in Ibis (its NaN equals itself, so ``x = 'NaN'``
tests it), and its regular expressions know ``\\x01`` and ``\\u200e`` but not DuckDB's
``\\x{200e}``. Everything else in the statistics runs unchanged on DuckDB and PostgreSQL.
"""

from __future__ import annotations

import ibis
import ibis.expr.types as ir


def backend_name(expression: ir.Expr) -> str:
    """The name of the backend an expression is bound to (``duckdb`` when it cannot tell)."""
    try:
        return ibis.get_backend(expression).name
    except Exception:  # noqa: BLE001 - an unbound expression: the default engine's spelling
        return "duckdb"


def is_nan(column: ir.FloatingValue) -> ir.BooleanValue:
    """True where a float is NaN, on every engine briefgen runs on."""
    if backend_name(column) == "postgres":
        return column == ibis.literal(float("nan"))
    return column.isnan()
