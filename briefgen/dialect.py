"""The few expressions whose spelling differs by engine, kept out of the statistics.

Ibis compiles one expression for every backend, except in the places briefgen needs here:
PostgreSQL has no ``isnan`` rule in Ibis (its NaN equals itself, so ``x = 'NaN'``
tests it); Ibis compiles ``try_cast`` to a plain cast there, which stops the query at
the first text that is no number or date, so text is matched by pattern first; and its
regular expressions know ``\\x01`` and ``\\u200e`` but not DuckDB's ``\\x{200e}``
(``datatext``). Everything else in the statistics runs unchanged on DuckDB and PostgreSQL.
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


# Text PostgreSQL casts to a double: decimal or exponent notation, infinity and NaN.
_PG_NUMBER = (
    r"^[-+]?((\d+\.?\d*|\.\d+)([eE][-+]?\d+)?|[iI][nN][fF]([iI][nN][iI][tT][yY])?|[nN][aA][nN])$"
)
# ISO dates with an optional time: what DuckDB's try_cast to a timestamp reads.
_PG_TIMESTAMP = r"^\d{4}-\d{2}-\d{2}([ T]\d{2}:\d{2}(:\d{2}(\.\d+)?)?)?$"


def try_float(text: ir.StringValue) -> ir.FloatingValue:
    """Text as a double where it reads as one, else null (never an error)."""
    if backend_name(text) == "postgres":
        return ibis.ifelse(text.re_search(_PG_NUMBER), text.cast("float64"), ibis.null("float64"))
    return text.try_cast("float64")


def try_timestamp(text: ir.Value) -> ir.TimestampValue:
    """A value as a timestamp where it reads as one, else null (never an error)."""
    if backend_name(text) == "postgres" and text.type().is_string():
        stamp = ibis.ifelse(text.re_search(_PG_TIMESTAMP), text, ibis.null("string"))
        return stamp.cast("timestamp")
    return text.try_cast("timestamp")


def is_nan(column: ir.FloatingValue) -> ir.BooleanValue:
    """True where a float is NaN, on every engine briefgen runs on."""
    if backend_name(column) == "postgres":
        return column == ibis.literal(float("nan"))
    return column.isnan()
