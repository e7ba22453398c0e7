"""A parsed ``where`` condition ─► an Ibis boolean expression on the data's columns.

Each column is read the way the brief reads it (``source.numeric``, ``source.category``,
``source.time_values``), so ``minutes > 10`` sees the same numbers as the statistics
and ``district = 'Canal Row'`` the same level names as the tables. The comparison's
other side decides how a column is read: a number reads it as numbers, text as
levels, a date as dates. A pairing that cannot mean anything (a text column against
a number it cannot hold, a date against text) is refused naming the column and position.
"""

from __future__ import annotations

import datetime as dt
import difflib
import math

import ibis
import ibis.expr.datatypes as dt_types
import ibis.expr.types as ir

from briefgen.errors import DataError
from briefgen.rows.where import (
    Between,
    Column,
    Compare,
    Condition,
    InList,
    IsMissing,
    Literal,
    Logical,
    Not,
    Value,
    columns_of,
    parse_date,
)
from briefgen.source import category, check_time_column, is_missing, numeric, time_values

_OPERATORS = {
    "=": lambda a, b: a == b,
    "!=": lambda a, b: a != b,
    "<": lambda a, b: a < b,
    "<=": lambda a, b: a <= b,
    ">": lambda a, b: a > b,
    ">=": lambda a, b: a >= b,
}


def _kind_of_literal(value: object) -> str:
    if isinstance(value, bool):
        return "truth"
    if isinstance(value, float):
        return "number"
    if isinstance(value, dt.datetime):
        return "date"
    return "text"


def _kind_of_column(table: ir.Table, name: str) -> str:
    kind = table.schema()[name]
    if kind.is_boolean():
        return "truth"
    if kind.is_numeric():
        return "number"
    if kind.is_temporal():
        return "date"
    return "text"


class _Compiler:
    def __init__(self, table: ir.Table, label: str) -> None:
        self.table = table
        self.label = label

    def refuse(self, position: int, problem: str, advice: str) -> DataError:
        return DataError(f"{self.label}: 'where' at character {position + 1}: {problem}; {advice}.")

    def check_columns(self, tree: Condition) -> None:
        names = list(self.table.columns)
        for column in columns_of(tree):
            if column.name not in names:
                close = difflib.get_close_matches(column.name, names, n=1, cutoff=0.6)
                hint = (
                    f"did you mean '{close[0]}'?" if close else f"columns are: {', '.join(names)}."
                )
                raise DataError(
                    f"{self.label}: column '{column.name}' named by 'where' (at character "
                    f"{column.position + 1}) is not in the data; {hint}"
                )

    def read(self, value: Value, as_kind: str) -> ir.Value:
        """``value`` as an expression of ``as_kind`` (number, text, date or truth)."""
        if isinstance(value, Literal):
            return self.literal(value, as_kind)
        name = value.name
        kind = _kind_of_column(self.table, name)
        if as_kind == "number" and kind in ("number", "text"):
            return numeric(self.table, name)
        if as_kind == "text" and kind in ("text", "number"):
            return category(self.table, name)
        if as_kind == "date" and kind == "date":
            return time_values(self.table, name)
        if as_kind == "date" and kind in ("text", "number"):
            # Text or years compared with a date must hold dates, or nothing would match.
            check_time_column(self.table, name, self.label, key="where")
            return time_values(self.table, name)
        if as_kind == "truth" and kind == "truth":
            return self.table[name]
        raise self.refuse(
            value.position,
            f"column '{name}' holds {_WORDS[kind]}, which cannot be compared with {_WORDS[as_kind]}",
            _ADVICE[kind],
        )

    def literal(self, value: Literal, as_kind: str) -> ir.Value:
        own = _kind_of_literal(value.value)
        if own == as_kind:
            return ibis.literal(value.value)
        if as_kind == "date" and own == "text":
            when = parse_date(str(value.value))
            if when is not None:
                return ibis.literal(when)
        if as_kind == "text" and own == "number":
            number = float(value.value)
            shown = (
                str(int(number)) if number.is_integer() and math.isfinite(number) else repr(number)
            )
            return ibis.literal(shown)
        raise self.refuse(
            value.position,
            f"the value {_shown(value.value)} is {_WORDS[own]}, but it is compared with {_WORDS[as_kind]}",
            _ADVICE[as_kind],
        )

    def kind_for(self, values: list[Value]) -> str:
        """The kind a comparison works in: the first literal's, else the first column's."""
        literals = [v for v in values if isinstance(v, Literal)]
        if literals:
            kind = _kind_of_literal(literals[0].value)
            # A date written as text compares a date column as dates.
            columns = [v for v in values if isinstance(v, Column)]
            if (
                kind == "text"
                and columns
                and _kind_of_column(self.table, columns[0].name) == "date"
            ):
                return "date"
            return kind
        return _kind_of_column(self.table, values[0].name)

    def compile(self, tree: Condition) -> ir.BooleanValue:
        if isinstance(tree, Logical):
            parts = [self.compile(part) for part in tree.parts]
            combined = parts[0]
            for part in parts[1:]:
                combined = combined & part if tree.operator == "and" else combined | part
            return combined
        if isinstance(tree, Not):
            return ~self.compile(tree.part)
        if isinstance(tree, Compare):
            kind = self.kind_for([tree.left, tree.right])
            return _OPERATORS[tree.operator](
                self.read(tree.left, kind), self.read(tree.right, kind)
            )
        if isinstance(tree, InList):
            kind = self.kind_for([tree.value, *tree.options])
            options = [self.read(option, kind) for option in tree.options]
            found = self.read(tree.value, kind).isin(options)
            return ~found if tree.negated else found
        if isinstance(tree, Between):
            kind = self.kind_for([tree.value, tree.low, tree.high])
            inside = self.read(tree.value, kind).between(
                self.read(tree.low, kind), self.read(tree.high, kind)
            )
            return ~inside if tree.negated else inside
        return self.missing(tree)

    def missing(self, tree: IsMissing) -> ir.BooleanValue:
        value = tree.value
        if isinstance(value, Literal):
            absent = ibis.literal(False)
        elif _kind_of_column(self.table, value.name) == "number":
            # NaN and infinities count as missing, as everywhere in the brief.
            absent = numeric(self.table, value.name).isnull()
        else:
            absent = is_missing(self.table, value.name)
        return ~absent if tree.negated else absent


_WORDS = {"number": "numbers", "text": "text", "date": "dates", "truth": "true/false values"}
_ADVICE = {
    "number": "compare it with a number such as 10",
    "text": "compare it with quoted text such as 'north'",
    "date": "compare it with a date such as 2026-07-01",
    "truth": "compare it with true or false",
}


def _shown(value: object) -> str:
    if isinstance(value, str):
        return f"'{value[:30]}'"
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def compile_where(tree: Condition, table: ir.Table, label: str) -> ir.BooleanValue:
    """The condition as an engine expression; a column missing or of the wrong kind is refused."""
    compiler = _Compiler(table, label)
    compiler.check_columns(tree)
    expression = compiler.compile(tree)
    if not expression.type().is_boolean():
        raise DataError(f"{label}: 'where' does not say true or false for a row; compare a column.")
    return expression.cast(dt_types.boolean)
