"""Apply ``where`` and ``window`` to the data, and say in words which rows the brief covers.

The statistics see only the selected rows; ``RowScope`` keeps the unselected table and
both conditions so the row accounting can count, in the same single query as the rest
of its counts, how many rows each one left out.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import ibis
import ibis.expr.types as ir

from briefgen.config import BriefSpec
from briefgen.errors import DataError
from briefgen.rows.compile import compile_where
from briefgen.rows.where import (
    Between,
    Column,
    Compare,
    Condition,
    InList,
    IsMissing,
    Logical,
    Not,
    Value,
    parse_where,
)
from briefgen.rows.window import Window, window_for
from briefgen.source import _missing_column, check_time_column, time_values


@dataclass(frozen=True, slots=True)
class RowScope:
    """Which rows of the source the brief covers, as engine conditions and in words.

    ``where`` and ``window`` are boolean expressions on ``unselected`` (None when not
    configured); a row is covered when both are true (an undecidable row is not).
    """

    unselected: ir.Table
    where: ir.BooleanValue | None
    where_words: str | None
    window: ir.BooleanValue | None
    window_spec: Window | None

    @property
    def window_words(self) -> str | None:
        return self.window_spec.words() if self.window_spec is not None else None

    def words(self) -> str:
        """One sentence for the brief: which rows it covers."""
        parts = []
        if self.where_words:
            parts.append(f"where {self.where_words}")
        if self.window_words:
            parts.append(f"with {self.window_words}")
        return "This brief covers only the rows " + " and ".join(parts) + "."


_COMPARE_WORDS = {
    "=": "is",
    "!=": "is not",
    "<": "is below",
    "<=": "is at most",
    ">": "is above",
    ">=": "is at least",
}


def _value_words(value: Value) -> str:
    if isinstance(value, Column):
        return value.name
    item = value.value
    if isinstance(item, bool):
        return "true" if item else "false"
    if isinstance(item, float):
        return str(int(item)) if item.is_integer() else repr(item)
    if isinstance(item, dt.datetime):
        return item.date().isoformat() if item.time() == dt.time() else item.isoformat(" ")
    return f"“{item}”"


def where_words(tree: Condition, nested: bool = False) -> str:
    """The condition in plain words (``distance_km is below 10 and vehicle is “van”``)."""
    if isinstance(tree, Logical):
        text = f" {tree.operator} ".join(where_words(part, nested=True) for part in tree.parts)
        return f"({text})" if nested else text
    if isinstance(tree, Not):
        if isinstance(tree.part, IsMissing | InList | Between):
            part = tree.part
            return where_words(type(part)(*[*_fields(part)[:-1], not part.negated]))
        inner = where_words(tree.part)
        return f"not ({inner})"
    if isinstance(tree, Compare):
        left, right = _value_words(tree.left), _value_words(tree.right)
        return f"{left} {_COMPARE_WORDS[tree.operator]} {right}"
    if isinstance(tree, InList):
        options = ", ".join(_value_words(option) for option in tree.options)
        return f"{_value_words(tree.value)} is {'not ' if tree.negated else ''}one of {options}"
    if isinstance(tree, Between):
        low, high = _value_words(tree.low), _value_words(tree.high)
        return f"{_value_words(tree.value)} is {'not ' if tree.negated else ''}between {low} and {high}"
    assert isinstance(tree, IsMissing)
    return f"{_value_words(tree.value)} {'has a value' if tree.negated else 'is empty'}"


def _fields(node: IsMissing | InList | Between) -> list:
    return [getattr(node, name) for name in node.__slots__]


def select_rows(
    table: ir.Table,
    where: str | None,
    window: tuple[str, str] | None,
    built_on: str,
    label: str,
    checked: bool = False,
) -> tuple[ir.Table, RowScope | None]:
    """The rows the brief covers, and their scope; ``(table, None)`` when nothing is selected.

    ``window`` is (column, last), as in the config. ``checked``: the window's column was
    checked on another copy of the same data, so its values are not read again here.
    """
    if where is None and window is None:
        return table, None
    condition = words = None
    if where is not None:
        tree = parse_where(where)
        condition = compile_where(tree, table, label)
        words = where_words(tree)
    in_window = spec = None
    if window is not None:
        column, last = window
        if column not in table.columns:
            raise _missing_column(column, "window.column", list(table.columns), label)
        if not checked:
            check_time_column(table, column, label, key="window.column")
        spec = window_for(column, last, built_on)
        times = time_values(table, column)
        start = ibis.literal(dt.datetime.combine(spec.start, dt.time()))
        end = ibis.literal(dt.datetime.combine(spec.end, dt.time()))
        in_window = (times >= start) & (times < end)
    keep = _both(condition, in_window)
    scope = RowScope(
        unselected=table, where=condition, where_words=words, window=in_window, window_spec=spec
    )
    return table.filter(keep.fill_null(False)), scope


def select_configured(
    table: ir.Table, spec: BriefSpec, built_on: str | None, label: str
) -> tuple[ir.Table, RowScope | None]:
    """The rows the config's ``where`` and ``window`` select; refused when none is left."""
    from briefgen.pipeline import build_date  # the build date of the whole run

    if spec.where is None and spec.window is None:
        return table, None
    selected, scope = select_rows(table, spec.where, _window(spec), built_on or build_date(), label)
    if selected.limit(1).count().to_pyarrow().as_py() == 0:
        keys = " and ".join(k for k in ("where", "window") if getattr(spec, k) is not None)
        rows = scope.words().removeprefix("This brief covers only the rows ").rstrip(".")
        raise DataError(
            f"{label}: no row is left after {keys} ({rows}); widen {keys}, or check the "
            "data's dates and values."
        )
    return selected, scope


def same_rows(table: ir.Table, spec: BriefSpec, built_on: str | None, label: str) -> ir.Table:
    """The rows ``select_configured`` selected, from another copy of the same, checked data."""
    from briefgen.pipeline import build_date

    selected, _ = select_rows(
        table, spec.where, _window(spec), built_on or build_date(), label, checked=True
    )
    return selected


def _window(spec: BriefSpec) -> tuple[str, str] | None:
    return (spec.window.column, spec.window.last) if spec.window is not None else None


def _both(first: ir.BooleanValue | None, second: ir.BooleanValue | None) -> ir.BooleanValue:
    if first is None:
        return second
    if second is None:
        return first
    return first.fill_null(False) & second.fill_null(False)


def left_out_counts(scope: RowScope) -> dict[str, ir.Scalar]:
    """Aggregates over the unselected table: rows in it, and rows each condition left out.

    The window's count is of rows ``where`` kept, so the two counts add up.
    """
    counts: dict[str, ir.Scalar] = {"rows_in_source": scope.unselected.count()}
    kept = ibis.literal(True)
    if scope.where is not None:
        kept = scope.where.fill_null(False)
        counts["outside_where"] = (~kept).sum()
    if scope.window is not None:
        counts["outside_window"] = (kept & ~scope.window.fill_null(False)).sum()
    return counts
