"""Two-way tables: the target summarised in every cell of two group variables.

The engine does all per-row work. Cells and margins are computed by one call to
``summarise_levels`` over a derived ``level`` column, so they share its exact
median-shifted two-pass mean and sd (see groups.py) and its type 7 quantiles.

The derived level is a tag (``c`` cell, ``r`` row margin, ``k`` column margin,
``a`` total) followed, for cells, by ``<length of row label>:<row><column>``. The
length prefix makes the key unambiguous whatever characters the labels hold
(a separator character could occur inside a label); both DuckDB's ``length`` and
Python's ``len`` count code points.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import ibis
import ibis.expr.types as ir

from briefgen.stats.groups import Summary, summarise_levels

log = logging.getLogger(__name__)

# Common practice, no published source: below about 10 values a cell mean and its
# interval are too unstable to state as a finding.
MIN_CELL = 10

_CELL, _ROW, _COLUMN, _TOTAL = "c", "r", "k", "a"


@dataclass(frozen=True, slots=True)
class CrossCell:
    """The target within one cell (or margin) of a two-way table.

    ``row`` and ``column`` are the two levels; a row margin has ``column=None``, a
    column margin ``row=None`` and the grand total both. ``rows`` counts rows in
    the cell, ``n`` those with a target value. The interval is Student t; it is
    None when n < 2. ``too_small`` is n < the table's ``min_cell``.
    """

    row: str | None
    column: str | None
    n: int
    mean: float | None
    median: float | None
    sd: float | None
    ci_low: float | None
    ci_high: float | None
    too_small: bool
    rows: int


@dataclass(frozen=True, slots=True)
class CrossTable:
    """A two-way table of the target over two group variables, with margins.

    Only rows with a level of both variables enter the table (margins included),
    so a row margin pools exactly the cells of its row. ``cells`` holds the level
    pairs that occur in the data, row by row; a pair with no rows at all is
    absent (``cell`` returns None), while a pair whose rows all lack a target
    value is present with ``n == 0`` and no mean. ``rows_without_level`` counts
    rows left out because one of the two levels is missing.

    Example::

        table = cross_table(frame.table, "g0", "g1", "region", "channel")
        table.cell("North", "Online").mean   # one cell
        table.cell("North", None).mean       # row margin
    """

    row_variable: str
    column_variable: str
    rows: tuple[str, ...]
    columns: tuple[str, ...]
    cells: tuple[CrossCell, ...]
    min_cell: int
    row_margins: tuple[CrossCell, ...]
    column_margins: tuple[CrossCell, ...]
    total: CrossCell | None
    rows_without_level: int
    confidence: float

    def cell(self, row: str | None, column: str | None) -> CrossCell | None:
        """The cell at ``row`` and ``column``; None for either gives its margin."""
        if row is None and column is None:
            return self.total
        if column is None:
            pool = self.row_margins
        elif row is None:
            pool = self.column_margins
        else:
            pool = self.cells
        return next((c for c in pool if c.row == row and c.column == column), None)


def _tagged_levels(frame_table: ir.Table, row_column: str, col_column: str) -> ir.Table:
    """Four stacked copies of the rows with both levels: cells, row and column margins, total."""
    table = frame_table
    both = table.filter(table[row_column].notnull() & table[col_column].notnull())
    row, column = both[row_column].cast("string"), both[col_column].cast("string")
    cell_key = ibis.literal(_CELL) + row.length().cast("string") + ":" + row + column
    parts = [
        both.select(level=cell_key, y=both.y),
        both.select(level=ibis.literal(_ROW) + row, y=both.y),
        both.select(level=ibis.literal(_COLUMN) + column, y=both.y),
        both.select(level=ibis.literal(_TOTAL), y=both.y),
    ]
    return ibis.union(*parts, distinct=False)


def _decode(level: str) -> tuple[str, str | None, str | None]:
    """Split a derived level into (tag, row, column)."""
    tag, rest = level[0], level[1:]
    if tag == _CELL:
        colon = rest.index(":")
        length = int(rest[:colon])
        body = rest[colon + 1 :]
        return tag, body[:length], body[length:]
    if tag == _ROW:
        return tag, rest, None
    if tag == _COLUMN:
        return tag, None, rest
    return tag, None, None


def _plain(value: float | None) -> float | None:
    """A Python float (scipy hands back numpy scalars) or None."""
    return None if value is None else float(value)


def _cell(summary: Summary, row: str | None, column: str | None, min_cell: int) -> CrossCell:
    return CrossCell(
        row=row,
        column=column,
        n=summary.n,
        mean=summary.mean,
        median=summary.median,
        sd=summary.sd,
        ci_low=_plain(summary.ci_low),
        ci_high=_plain(summary.ci_high),
        too_small=summary.n < min_cell,
        rows=summary.rows,
    )


def _rows_without_level(frame_table: ir.Table, row_column: str, col_column: str) -> int:
    table = frame_table
    lacking = table[row_column].isnull() | table[col_column].isnull()
    count = table.aggregate(lacking=lacking.sum()).to_pyarrow().to_pylist()[0]["lacking"]
    return int(count or 0)


def cross_table(
    frame_table: ir.Table,
    row_column: str,
    col_column: str,
    row_name: str,
    col_name: str,
    confidence: float = 0.95,
    min_cell: int = MIN_CELL,
) -> CrossTable:
    """Summarise ``y`` in every cell of ``row_column`` × ``col_column``, with margins.

    ``frame_table`` holds ``y`` (float, null when missing) and the two group
    columns as text; ``row_name`` and ``col_name`` are the user's names for them.
    Levels are listed in label order.
    """
    stacked = _tagged_levels(frame_table, row_column, col_column)
    summaries, _boxes = summarise_levels(stacked, confidence, list_outliers=False)
    cells, row_margins, column_margins, total = [], [], [], None
    for summary in summaries:
        tag, row, column = _decode(str(summary.level))
        cell = _cell(summary, row, column, min_cell)
        if tag == _CELL:
            cells.append(cell)
        elif tag == _ROW:
            row_margins.append(cell)
        elif tag == _COLUMN:
            column_margins.append(cell)
        else:
            total = cell
    rows = tuple(sorted(c.row for c in row_margins))
    columns = tuple(sorted(c.column for c in column_margins))
    unknown = [c for c in cells if c.row not in rows or c.column not in columns]
    if unknown:
        # Would mean the engine's string length disagrees with Python's code points.
        raise RuntimeError(f"two-way table keys could not be decoded: {unknown[:3]}")
    row_index = {label: i for i, label in enumerate(rows)}
    column_index = {label: i for i, label in enumerate(columns)}
    cells.sort(key=lambda c: (row_index[c.row], column_index[c.column]))
    row_margins.sort(key=lambda c: row_index[c.row])
    column_margins.sort(key=lambda c: column_index[c.column])
    log.debug("two-way table %s × %s: %d cells", row_name, col_name, len(cells))
    return CrossTable(
        row_variable=row_name,
        column_variable=col_name,
        rows=rows,
        columns=columns,
        cells=tuple(cells),
        min_cell=min_cell,
        row_margins=tuple(row_margins),
        column_margins=tuple(column_margins),
        total=total,
        rows_without_level=_rows_without_level(frame_table, row_column, col_column),
        confidence=confidence,
    )
