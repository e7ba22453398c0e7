"""Open the data as an Ibis table on an engine and check it fits the spec.

Only the schema is read here; rows stay in the engine. DuckDB is the default
engine; any Ibis backend that can read the table runs the same statistics.
"""

from __future__ import annotations

import csv
import difflib
import logging
import os
from dataclasses import dataclass
from pathlib import Path

import ibis
import ibis.expr.datatypes as dt
import ibis.expr.types as ir
from ibis.backends import BaseBackend

from briefgen.config import BriefSpec, EngineSpec
from briefgen.errors import ConfigError, DataError

log = logging.getLogger(__name__)

ENGINE_THREADS = 1


@dataclass(frozen=True, slots=True)
class Source:
    """The table to analyse and where it came from (for messages and the brief)."""

    table: ir.Table
    label: str


def connect(engine: EngineSpec) -> BaseBackend:
    """An Ibis connection to the configured engine: the one place that knows which it is.

    DuckDB runs embedded, with nothing to start. One engine thread: parallel partial
    sums are combined in scheduling order, which changes the last digits from run to
    run; one thread gives the same numbers every time, and on 1.8M rows it measured no
    slower on a 2-core machine.
    """
    if engine.backend == "duckdb":
        return ibis.duckdb.connect(threads=ENGINE_THREADS)
    raise ConfigError(f"engine '{engine.backend}' is not supported; use engine: duckdb.")


def open_source(spec: BriefSpec) -> Source:
    """Open the configured file through Ibis on the configured engine and check its columns."""
    path = spec.data_path
    label = spec.data.path
    if not path.exists():
        raise DataError(f"{label}: data file not found (looked in {path}); check data.path.")
    check_readable_file(path, label, spec.data.format)
    table = read_table(path, spec.data_format, label, connect(spec.engine))
    check_columns(table, spec, label)
    log.info("opened %s with %d columns", label, len(table.columns))
    return Source(table=table, label=label)


# Extensions of formats people export and briefgen does not read, with what to do instead.
_OTHER_FORMATS = {
    "xlsx": "an Excel workbook",
    "xls": "an Excel workbook",
    "ods": "a spreadsheet",
    "json": "JSON",
    "jsonl": "JSON lines",
}


def check_readable_file(path: Path, label: str, declared: str | None) -> None:
    """Only a regular file, inside BRIEFGEN_DATA_ROOTS when set, in a format briefgen reads."""
    # A device or FIFO would be read until memory runs out, a folder fails obscurely.
    if not path.is_file():
        raise DataError(
            f"{label}: is not a regular file (a folder, device or pipe); point data.path at a "
            "CSV or Parquet file."
        )
    roots = [r for r in os.environ.get("BRIEFGEN_DATA_ROOTS", "").split(os.pathsep) if r]
    real = path.resolve()
    if roots and not any(real.is_relative_to(Path(root).resolve()) for root in roots):
        raise DataError(
            f"{label}: is outside the data folders BRIEFGEN_DATA_ROOTS allows; move the file "
            "there or ask whoever set that variable."
        )
    kind = _OTHER_FORMATS.get(path.suffix.lower().lstrip("."))
    if kind and declared is None:
        raise DataError(
            f"{label}: looks like {kind}, which briefgen does not read; export it as CSV "
            "(.csv) or Parquet (.parquet), the formats that work."
        )


def read_table(
    path: Path, data_format: str, label: str, con: BaseBackend | None = None
) -> ir.Table:
    """Open a CSV or Parquet file as a lazy engine table; only the schema is read."""
    con = con if con is not None else connect(EngineSpec())
    try:
        table = con.read_parquet(path) if data_format == "parquet" else con.read_csv(path)
        table.schema()
    except Exception as exc:  # the engine's own exception types vary by backend
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise DataError(
            f"{label}: cannot be read as {data_format.upper()} ({first}); "
            "check the file or set data.format."
        ) from None
    if data_format == "csv":
        _check_header_names(path, list(table.columns), label)
    return table


def _check_header_names(path: Path, columns: list[str], label: str) -> None:
    """Refuse a CSV header that repeats a name: the engine would silently rename the copy."""
    try:
        with open(path, encoding="utf-8", errors="replace", newline="") as stream:
            first = stream.readline()
    except OSError:
        return
    for delimiter in (",", ";", "\t", "|"):
        names = [
            name.strip().strip('"') for name in next(csv.reader([first], delimiter=delimiter), [])
        ]
        if len(names) == len(columns):
            repeated = sorted({name for name in names if names.count(name) > 1})
            if repeated:
                raise DataError(
                    f"{label}: the header repeats the column name '{repeated[0]}'; "
                    "rename the columns so each name is unique."
                )
            return


def _missing_column(name: str, key: str, columns: list[str], label: str) -> DataError:
    close = difflib.get_close_matches(name, columns, n=1, cutoff=0.6)
    hint = f"did you mean '{close[0]}'?" if close else f"columns are: {', '.join(columns)}."
    return DataError(f"{label}: column '{name}' named by '{key}' is not in the data; {hint}")


def check_columns(table: ir.Table, spec: BriefSpec, label: str) -> None:
    """Every column the spec names exists and has a usable type."""
    schema = table.schema()
    columns = list(schema.names)
    if len(columns) == 1 and any(sep in columns[0] for sep in ",;\t|"):
        raise DataError(
            f"{label}: the header could not be split into columns ({columns[0][:60]!r}); check the "
            "delimiter and that every row has the same number of fields."
        )
    if table.limit(1).count().to_pyarrow().as_py() == 0:
        raise DataError(f"{label}: the file has no data rows; check that the export finished.")
    wanted = [("target", spec.target)]
    wanted += [(f"groups[{i}]", g) for i, g in enumerate(spec.groups)]
    wanted += [(f"predictors[{i}]", p) for i, p in enumerate(spec.predictors)]
    if spec.time is not None:
        wanted.append(("time", spec.time.column))
    for i, pair in enumerate(spec.cross or []):
        wanted += [(f"cross[{i}]", name) for name in pair]
    for key, name in wanted:
        if name not in schema:
            raise _missing_column(name, key, columns, label)
    for key, name in [("target", spec.target)] + [
        (f"predictors[{i}]", p) for i, p in enumerate(spec.predictors)
    ]:
        if schema[name].is_null():
            raise DataError(
                f"{label}: column '{name}' named by '{key}' is empty in every row; check the export."
            )
        if not schema[name].is_numeric() and table[name].count().to_pyarrow().as_py() == 0:
            raise DataError(
                f"{label}: column '{name}' named by '{key}' is empty in every row; check the export."
            )
        if not schema[name].is_numeric():
            raise DataError(
                f"{label}: column '{name}' named by '{key}' holds {schema[name]}, not numbers; "
                "name a numeric column."
            )
    if spec.time is not None:
        check_time_column(table, spec.time.column, label)
    if spec.target in spec.groups or spec.target in spec.predictors:
        raise DataError(
            f"{label}: the target '{spec.target}' is also listed as a group or predictor; remove it there."
        )


# Whole numbers in this range in a time column are read as years (1 January of that year).
YEAR_RANGE = (1000, 9999)


def time_values(table: ir.Table, name: str) -> ir.TimestampColumn:
    """A time column as timestamps: dates and text as they parse, whole numbers as years.

    A numeric column of years (1990, 2010) becomes 1 January of each year; numbers
    that are not whole or fall outside ``YEAR_RANGE`` become missing, as does text
    that parses neither as a date nor as a four-digit year. Missing times are counted
    by the trend, never guessed.
    """
    column = table[name]
    kind = column.type()
    if kind.is_timestamp():
        return column
    if kind.is_numeric():
        return _years(column.cast(dt.float64))
    as_time = column.try_cast(dt.timestamp)
    if kind.is_string():
        # A text column of years, such as "1990", reads as years too.
        return as_time.coalesce(_years(column.strip().try_cast(dt.float64)))
    return as_time


def _years(values: ir.FloatingColumn) -> ir.TimestampColumn:
    low, high = YEAR_RANGE
    whole = values.notnull() & ~values.isnan() & (values == values.floor())
    year = whole & values.between(low, high)
    stamp = ibis.date(values.cast(dt.int64), 1, 1).cast(dt.timestamp)
    return ibis.ifelse(year, stamp, ibis.null(dt.timestamp))


def check_time_column(table: ir.Table, name: str, label: str) -> None:
    """Refuse a time column of the wrong type, or one where no value reads as a date."""
    kind = table.schema()[name]
    if not (kind.is_temporal() or kind.is_string() or kind.is_numeric()):
        raise DataError(
            f"{label}: column '{name}' named by 'time' holds {kind}, not dates; name a date, "
            "timestamp or year column."
        )
    column = table[name]
    found = table.aggregate(
        present=column.count(),
        parsed=time_values(table, name).count(),
        example=column.cast(dt.string).min(),
    )
    row = found.to_pyarrow().to_pylist()[0]
    if int(row["present"] or 0) == 0:
        raise DataError(
            f"{label}: column '{name}' named by 'time' is empty in every row; check the export."
        )
    if int(row["parsed"] or 0) == 0:
        low, high = YEAR_RANGE
        raise DataError(
            f"{label}: column '{name}' named by 'time' has no value that reads as a date (one value "
            f"is {row['example']!r}); write dates as 2024-03-31 or 2024-03-31 14:05, or years as "
            f"whole numbers from {low} to {high}, or name another column in 'time'."
        )


def numeric(table: ir.Table, name: str) -> ir.FloatingColumn:
    """A numeric column as float64, with NaN and infinities treated as missing."""
    column = table[name].cast(dt.float64)
    return ibis.ifelse(column.isnan() | column.isinf(), ibis.null(dt.float64), column)


def category(table: ir.Table, name: str) -> ir.StringColumn:
    """A grouping column as text, so numbers-as-codes group like labels.

    Whole numbers stored as floats (a CSV column of codes with one gap reads as
    float) print as "5", not "5.0": a code's label should look like the code.
    """
    column = table[name]
    if column.type().is_floating():
        whole = column.notnull() & (column == column.round(0)) & (column.abs() < 1e15)
        return ibis.ifelse(whole, column.cast(dt.int64).cast(dt.string), column.cast(dt.string))
    return column.cast(dt.string)
