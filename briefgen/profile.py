"""Column roles and chart-plan rules.

Roles (measure, category, time, id) are guessed from types and distinct counts so
``briefgen init`` can propose a config. Chart plan, after the practice of
statistical graphics: sort categories by value unless they have a natural order;
with more than about eight, show the largest and fold the rest into one "other"
level, and say so in the caption.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import TYPE_CHECKING

from briefgen.figures import rules

if TYPE_CHECKING:
    import ibis.expr.types as ir

    from briefgen.stats.core.summary import Summary

MAX_LEVELS = (
    12  # common practice (no published source): a dozen levels still fit one chart and table
)


def has_natural_order(levels: list[str]) -> bool:
    """Levels that all start with a number (time slots, sizes, years) keep their order."""
    return rules.is_natural_order(levels)


def level_order(summaries: tuple[Summary, ...], other_label: str | None = None) -> list[str]:
    """Natural order if the levels have one, else by median, highest first; "Other" last.

    The rule is ``briefgen.figures.rules.level_order``, so tables and charts agree.
    """
    levels = [s.level for s in summaries]
    order, _ = rules.level_order(levels, {s.level: s.median for s in summaries}, False, other_label)
    return list(order)


def natural_sorted(levels) -> list[str]:
    """Levels in their natural (numeric) order when they have one, else as given."""
    levels = list(levels)
    return sorted(levels, key=_numeric_key) if has_natural_order(levels) else levels


def _numeric_key(level: str) -> tuple[float, str]:
    match = re.match(r"^\s*([-+]?\d+(?:\.\d+)?)", level)
    return (float(match.group(1)) if match else float("inf"), level)


# Column roles: what a column is for, guessed from its type and how many values it takes.
MAX_GROUP_LEVELS = 50  # more distinct labels than this reads as free text or an id, not a group
# Whole numbers taking at most as many values as a group shows (years, ratings) read as
# groups; with more, a group would fold most of them into "Other" and lose their order, so
# they are measures to relate the target to (common practice, no published source).
SMALL_INTEGER_LEVELS = MAX_LEVELS
# Any numbers taking this few values read as codes (1, 2, 3 for kinds), not quantities
# (common practice, no published source); findings.CODE_LIKE_VALUES flags such predictors.
CODE_VALUES = 5


@dataclass(frozen=True, slots=True)
class ColumnRole:
    """One column's guessed role: ``measure``, ``category``, ``time`` or ``id``."""

    name: str
    role: str
    distinct: int
    missing: int
    numeric: bool = False


def column_roles(table: ir.Table) -> tuple[ColumnRole, ...]:
    """Guess each column's role from one aggregate query (distinct and missing counts)."""
    schema = table.schema()
    counts = {"rows": table.count()}
    for i, name in enumerate(schema.names):
        counts[f"d{i}"] = table[name].nunique()
        counts[f"m{i}"] = table[name].isnull().sum()
    row = table.aggregate(**counts).to_pyarrow().to_pylist()[0]
    rows = int(row["rows"])
    roles = []
    for i, name in enumerate(schema.names):
        kind, distinct = schema[name], int(row[f"d{i}"])
        role = _role(kind, distinct, rows)
        roles.append(ColumnRole(name, role, distinct, int(row[f"m{i}"]), kind.is_numeric()))
    return tuple(roles)


def _role(kind, distinct: int, rows: int) -> str:
    if kind.is_temporal():
        return "time"
    unique = rows > MAX_GROUP_LEVELS and distinct >= 0.95 * rows
    if kind.is_floating() or kind.is_decimal():
        return "category" if 1 < distinct <= CODE_VALUES and rows > distinct else "measure"
    if kind.is_integer():
        if unique:
            return "id"
        return "category" if distinct <= SMALL_INTEGER_LEVELS else "measure"
    if kind.is_boolean():
        return "category"
    if unique or distinct > MAX_GROUP_LEVELS:
        return "id"
    return "category"
