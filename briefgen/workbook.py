"""Read one sheet of an Excel workbook into the engine, a batch of rows at a time.

openpyxl streams the sheet in read-only mode; each batch of rows becomes an Arrow
table that DuckDB appends to an engine table, so the sheet is never held as Python
objects all at once. A column's type is the narrowest that holds every value seen so
far (true/false, whole numbers, numbers, dates, text); a later batch that needs a
wider type widens the engine column, so a column of numbers with "NA" further down
becomes text, which ``source.numeric`` parses as it does a CSV's.
"""

from __future__ import annotations

import datetime as dt
import zipfile
from pathlib import Path

import ibis.expr.types as ir
import pyarrow as pa
from ibis.backends import BaseBackend

from briefgen.datatext import excerpt
from briefgen.errors import DataError

BATCH_ROWS = 10_000
TABLE = "briefgen_workbook_rows"

# Types from narrow to wide; two kinds that do not nest meet at text.
_ORDER = {"null": 0, "boolean": 1, "bigint": 2, "double": 3, "timestamp": 4, "varchar": 5}
_ARROW = {
    "null": pa.null(),
    "boolean": pa.bool_(),
    "bigint": pa.int64(),
    "double": pa.float64(),
    "timestamp": pa.timestamp("us"),
    "varchar": pa.string(),
}
_INT64 = (-(2**63), 2**63 - 1)


def _kind(value: object) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, int):
        return "bigint" if _INT64[0] <= value <= _INT64[1] else "double"
    if isinstance(value, float):
        return "double"
    if isinstance(value, dt.datetime | dt.date):
        return "timestamp"
    return "varchar"


def _wider(a: str, b: str) -> str:
    if a == b or b == "null":
        return a
    if a == "null":
        return b
    if {a, b} <= {"bigint", "double"}:
        return "double"
    return "varchar"


def _as(value: object, kind: str) -> object:
    if value is None:
        return None
    if kind == "varchar":
        if isinstance(value, dt.datetime):
            return value.isoformat(sep=" ")
        if isinstance(value, float) and value.is_integer():
            return str(int(value))
        return str(value)
    if kind == "double":
        return float(value)
    if kind == "timestamp" and not isinstance(value, dt.datetime):
        return dt.datetime.combine(value, dt.time())
    return value


def _header(cells: tuple, sheet: str, label: str) -> list[str]:
    names = [None if cell is None else str(cell).strip() for cell in cells]
    while names and not names[-1]:
        names.pop()
    if not names:
        raise DataError(f"{label}: sheet '{sheet}' has no header row; put column names in row 1.")
    for index, name in enumerate(names):
        if not name:
            raise DataError(
                f"{label}: column {index + 1} of sheet '{sheet}' has no name in row 1; "
                "give every column a name."
            )
    repeated = sorted({name for name in names if names.count(name) > 1})
    if repeated:
        raise DataError(
            f"{label}: the header of sheet '{sheet}' repeats the column name "
            f"'{excerpt(repeated[0])}'; rename the columns so each name is unique."
        )
    return names


class _Appender:
    """Appends batches to one DuckDB table, widening its columns when a batch needs it."""

    def __init__(self, con: BaseBackend, names: list[str]) -> None:
        self.duck = con.con  # the DuckDB connection under Ibis's backend
        self.names = names
        self.kinds = ["null"] * len(names)
        self.created = False

    def _column(self, index: int) -> str:
        return '"' + self.names[index].replace('"', '""') + '"'

    def append(self, rows: list[tuple]) -> None:
        width = len(self.names)
        columns = [[row[i] if i < len(row) else None for row in rows] for i in range(width)]
        for index, values in enumerate(columns):
            seen = self.kinds[index]
            for value in values:
                seen = _wider(seen, _kind(value))
            if seen != self.kinds[index]:
                if self.created:
                    self.duck.execute(
                        f"ALTER TABLE {TABLE} ALTER {self._column(index)} TYPE {seen.upper()}"
                    )
                self.kinds[index] = seen
        if not self.created:
            spec = ", ".join(
                f"{self._column(i)} {('varchar' if k == 'null' else k).upper()}"
                for i, k in enumerate(self.kinds)
            )
            self.duck.execute(f"CREATE TEMP TABLE {TABLE} ({spec})")
            self.kinds = ["varchar" if k == "null" else k for k in self.kinds]
            self.created = True
        arrays = [
            pa.array([_as(v, kind) for v in values], type=_ARROW[kind])
            for values, kind in zip(columns, self.kinds, strict=True)
        ]
        batch = pa.Table.from_arrays(arrays, names=[f"c{i}" for i in range(width)])
        self.duck.register("briefgen_batch", batch)
        self.duck.execute(f"INSERT INTO {TABLE} SELECT * FROM briefgen_batch")
        self.duck.unregister("briefgen_batch")


def read_workbook(path: Path, sheet: str | None, label: str, con: BaseBackend) -> ir.Table:
    """One sheet (the first when ``sheet`` is None) as an engine table; row 1 names the columns."""
    from openpyxl import load_workbook

    try:
        book = load_workbook(path, read_only=True, data_only=True)
    except (zipfile.BadZipFile, KeyError, OSError, ValueError) as exc:
        raise DataError(
            f"{label}: cannot be read as an Excel workbook (.xlsx) ({excerpt(exc, 80)}); check "
            "the file, or export it as CSV."
        ) from None
    try:
        names = list(book.sheetnames)
        if sheet is not None and sheet not in names:
            raise DataError(
                f"{label}: sheet '{excerpt(sheet)}' named by data.sheet is not in the workbook; "
                f"its sheets are: {', '.join(excerpt(name) for name in names)}."
            )
        chosen = sheet if sheet is not None else names[0]
        rows = book[chosen].iter_rows(values_only=True)
        header = next(rows, None)
        if header is None:
            raise DataError(f"{label}: sheet '{excerpt(chosen)}' is empty; check data.sheet.")
        appender = _Appender(con, _header(header, chosen, label))
        batch: list[tuple] = []
        for row in rows:
            if any(cell is not None for cell in row):  # a blank row is formatting, not data
                batch.append(row)
            if len(batch) == BATCH_ROWS:
                appender.append(batch)
                batch = []
        if batch or not appender.created:
            appender.append(batch)
    finally:
        book.close()
    return con.table(TABLE)
