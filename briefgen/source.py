"""Open the data as an Ibis table on an engine and check it fits the spec.

Only the schema is read here; rows stay in the engine. DuckDB is the default
engine; any Ibis backend that can read the table runs the same statistics.
"""

from __future__ import annotations

import csv
import difflib
import json
import logging
import os
import re
import tempfile
import weakref
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import duckdb
import ibis
import ibis.expr.datatypes as dt
import ibis.expr.types as ir
from ibis.backends import BaseBackend

from briefgen.config import BriefSpec, EngineSpec
from briefgen.database import open_database, quiet
from briefgen.datafile import check_not_other_format, check_readable_file
from briefgen.datatext import engine_clean, excerpt, first_line
from briefgen.dialect import is_nan, try_float, try_timestamp
from briefgen.errors import ConfigError, DataError, EngineError
from briefgen.origin import origin_of
from briefgen.workbook import read_workbook
from briefgen.workfolder import make_work_folder, remove_work_folder

if TYPE_CHECKING:
    from briefgen.rows.scope import RowScope

log = logging.getLogger(__name__)

# Every core by default: the statistics sum exact integers (briefgen.stats.core.exact), so
# the order in which threads combine partial results changes no digit.
ENGINE_THREADS = os.cpu_count() or 1


@dataclass(frozen=True, slots=True)
class Source:
    """The table to analyse and where it came from (for messages and the brief).

    ``scope`` says which rows of the source ``table`` keeps (``where`` and ``window``),
    None when it keeps all; ``origin`` is ``describe()``'s answer.
    """

    table: ir.Table
    label: str
    # Every column of the data, in its order, with its type: ``table`` may hold fewer.
    columns: ibis.Schema
    scope: RowScope | None = None
    origin: tuple[tuple[str, str | None], ...] = ()
    # The selected rows' columns that ``table`` leaves out (no setting names them), still
    # in the file: read again only to count their empty cells. None when none is left out.
    unused: ir.Table | None = None

    def describe(self) -> dict[str, str | None]:
        """Where the rows came from, for provenance records: never a password.

        ``kind`` is ``file`` (with ``path``, ``format``, ``sheet``) or ``database``
        (with ``url``, ``table`` or ``query``, and ``statistics_run_in``); ``where``
        and ``window`` are the row selection in words, None when not configured.
        """
        return dict(self.origin)


def connect(engine: EngineSpec, base_dir: Path | None = None) -> BaseBackend:
    """An Ibis connection to the configured engine: the one place that knows which it is.

    DuckDB runs embedded, with nothing to start, on ``engine.threads`` threads (default:
    every core). Parallel partial sums are combined in scheduling order; the statistics
    only sum exact integers, so any thread count gives the same bytes.
    """
    if engine.backend == "duckdb":
        return _duckdb(engine, base_dir)
    if engine.backend == "pyspark":
        from briefgen.spark import spark_backend

        return spark_backend(engine)
    raise ConfigError(f"engine '{engine.backend}' is not supported; use engine: duckdb.")


def _duckdb(engine: EngineSpec, base_dir: Path | None) -> BaseBackend:
    """DuckDB on a private database file in a temporary folder, removed with the connection.

    A file rather than memory: the tables the brief reads are stored compressed (10M rows
    of seven columns take about 200 MB instead of 800 MB), and DuckDB holds at most
    ``engine.memory_limit`` of them, of sorts and of joins in memory, spilling the rest
    to the same folder, so data larger than memory complete. Folders that killed builds
    left there are removed first (``workfolder``).
    """
    parent = None
    if engine.temp_dir:
        parent = Path(engine.temp_dir).expanduser()
        if not parent.is_absolute() and base_dir is not None:
            parent = base_dir / parent
    try:
        folder, owner = make_work_folder(parent)
    except OSError as exc:
        where = parent if parent is not None else tempfile.gettempdir()
        raise ConfigError(
            f"engine.temp_dir: cannot make a working folder in {where} ({exc.strerror}); "
            "name an existing, writable folder."
        ) from None
    con = ibis.duckdb.connect(
        folder / "engine.duckdb",
        threads=engine.threads or ENGINE_THREADS,
        memory_limit=engine.memory_limit,
        temp_directory=str(folder / "spill"),
    )
    # The file is thrown away with the connection: writing its tables back at close (a
    # checkpoint) cost 1.2 s and 200 MiB at 10M rows for nothing.
    con.con.execute("PRAGMA disable_checkpoint_on_shutdown")
    quiet(con.con)
    _RELEASES[con] = weakref.finalize(con, _close_and_remove, con.con, folder, owner)
    return con


# Each private DuckDB connection's closing, to run early by ``release`` or at collection.
_RELEASES: weakref.WeakKeyDictionary[BaseBackend, weakref.finalize] = weakref.WeakKeyDictionary()


def _close_and_remove(
    connection: duckdb.DuckDBPyConnection, folder: Path, owner: int | None
) -> None:
    connection.close()
    remove_work_folder(folder, owner)


def release(table: ir.Table) -> None:
    """Close the private engine behind ``table`` now, with its buffers and folder.

    The statistics are done by then; DuckDB keeps up to ``engine.memory_limit`` of
    cached rows until closed, which would sit under the figures and the PDF. Other
    engines are left to their owners.
    """
    closing = _RELEASES.get(table.get_backend())
    if closing is not None:
        closing()


def materialize(table: ir.Table) -> ir.Table:
    """``table`` computed once and kept in the engine, so later queries read the stored rows.

    On DuckDB a table in the private database file (see ``_duckdb``); on other engines
    Ibis's cache.
    """
    backend = table.get_backend()
    if backend.name != "duckdb":
        return table.cache()
    return backend.create_table(ibis.util.gen_name("briefgen_rows"), table)


def open_source(spec: BriefSpec, built_on: str | None = None) -> Source:
    """Open the configured file or database table through Ibis, check it, select its rows.

    ``built_on`` is the build date a ``window`` counts back from (default: today, or
    ``SOURCE_DATE_EPOCH``).
    """
    # Imported here: briefgen.rows reads columns with this module's numeric() and category().
    from briefgen.rows.scope import same_rows, select_configured

    label = spec.data.label
    con = connect(spec.engine, spec.base_dir)
    if spec.data.url is not None:
        table = open_database(spec, label, con)
    else:
        table = _open_file(spec, label, con)
    schema, unused, named = table.schema(), None, None
    with reading(label):
        if spec.data.url is None and spec.data_format in ("csv", "json"):
            # Text is parsed once, here, not again by every check and by the accounting;
            # Parquet is read column by column already, a sheet or a copy is a table.
            # Only the columns the config names are stored: storing is most of a read's
            # cost (a 31-column CSV of 2M rows: 5.0 s for every column, 1.0 s for six).
            named = used_columns(table, spec)
            view = table
            table = materialize(table.select(named) if named else table)
        check_columns(table, spec, label)
        table, scope = select_configured(table, spec, built_on, label)
        if named:
            unused = same_rows(view, spec, built_on, label).drop(*named)
    log.info("opened %s with %d columns", label, len(schema))
    return Source(
        table=table,
        label=label,
        scope=scope,
        origin=origin_of(spec, scope),
        columns=schema,
        unused=unused,
    )


def used_columns(table: ir.Table, spec: BriefSpec) -> list[str] | None:
    """The columns the config names, in the data's order; None to keep every column.

    None also when a named column is missing, so the checks that follow name the
    column with the whole header to choose from.
    """
    from briefgen.rows.where import columns_of, parse_where

    named = {spec.target, *spec.groups, *spec.predictors}
    named |= {name for pair in spec.cross or [] for name in pair}
    named |= {spec.time.column} if spec.time is not None else set()
    named |= {spec.window.column} if spec.window is not None else set()
    if spec.where is not None:
        named |= {column.name for column in columns_of(parse_where(spec.where))}
    if not named <= set(table.columns) or set(table.columns) <= named:
        return None
    return [name for name in table.columns if name in named]


def _open_file(spec: BriefSpec, label: str, con: BaseBackend) -> ir.Table:
    path = spec.data_path
    if not path.exists():
        raise DataError(f"{label}: data file not found (looked in {path}); check data.path.")
    check_readable_file(path, label, spec.data.format)
    if spec.data_format == "excel":
        return read_workbook(path, spec.data.sheet, label, con)
    if spec.data_format == "csv":
        check_not_other_format(path, label)
    table = read_table(path, spec.data_format, label, con)
    if spec.data_format == "csv":
        table = _whole_numbers_as_double(path, table, spec, label, con)
    return table


def read_table(
    path: Path,
    data_format: str,
    label: str,
    con: BaseBackend | None = None,
) -> ir.Table:
    """Open a CSV, Parquet or JSON file as a lazy engine table; only the schema is read.

    JSON is an array of objects or one object per line (JSON Lines), as DuckDB's
    ``read_json`` detects.
    """
    con = con if con is not None else connect(EngineSpec())
    try:
        if data_format == "parquet":
            table = con.read_parquet(path)
        elif data_format == "json":
            table = con.read_json(path, **_json_options(path, con))
            if con.name == "pyspark":
                table = _json_in_file_order(path, table)
        else:
            table = con.read_csv(path)
        table.schema()
    except Exception as exc:  # the engine's own exception types vary by backend
        raise DataError(
            f"{label}: cannot be read as {data_format.upper()} ({first_line(exc)}); "
            "check the file, or set data.format to csv, parquet or json."
        ) from None
    if data_format == "csv":
        _check_header_names(path, list(table.columns), label)
    return table


def _json_options(path: Path, con: BaseBackend) -> dict[str, bool]:
    """Spark reads JSON Lines unless told the file is one array of objects."""
    if con.name != "pyspark":
        return {}
    with open(path, "rb") as stream:
        first = stream.read(4096).lstrip(b"\xef\xbb\xbf \t\r\n")
    return {"multiLine": first.startswith(b"[")}


def _json_in_file_order(path: Path, table: ir.Table) -> ir.Table:
    """The columns in the order of the file's first object, as DuckDB gives them.

    Spark sorts the fields of a JSON file by name; the order shows in the brief's
    accounting, so it is put back where the first object names every column.
    """
    with open(path, "rb") as stream:
        head = stream.read(65536).decode("utf-8", errors="replace").lstrip("\ufeff \t\r\n[")
    try:
        first, _ = json.JSONDecoder().raw_decode(head)
    except ValueError:
        return table
    if not isinstance(first, dict) or sorted(first) != sorted(table.columns):
        return table
    return table.select(*first)


def _whole_numbers_as_double(
    path: Path, table: ir.Table, spec: BriefSpec, label: str, con: BaseBackend
) -> ir.Table:
    """The CSV again, with the whole-number columns named as numbers read as DOUBLE.

    DuckDB's sniffer types a column from its first 20,480 rows: a column of whole
    numbers with "inf" or "NaN" further down is typed BIGINT and the first query
    fails on that row. Read as DOUBLE, those values parse (and ``numeric`` makes them
    missing) at no cost; columns typed DOUBLE already parse them, and text columns
    are parsed by ``numeric``.
    """
    if con.name != "duckdb":
        # Spark types a CSV column from every row, so a late "inf" makes it text, which
        # ``numeric`` parses.
        return table
    named = [spec.target, *spec.predictors]
    as_labels = set(spec.groups) | {name for pair in spec.cross or [] for name in pair}
    if spec.time is not None:
        as_labels.add(spec.time.column)
    schema = table.schema()
    whole = {
        name: "DOUBLE"
        for name in dict.fromkeys(named)
        if name in schema and name not in as_labels and schema[name].is_integer()
    }
    if not whole:
        return table
    return con.read_csv(path, types=whole)


# DuckDB's message for a value further down a CSV that does not fit the sniffed type.
_CONVERSION = re.compile(
    r"CSV Error on Line: (\d+).*?converting column \"(.*?)\"\. "
    r"Could not convert string \"(.*?)\" to '(\w+)'",
    re.DOTALL,
)


@contextmanager
def reading(label: str) -> Iterator[None]:
    """Turn the engine's errors that a person can act on into sentences: a value that does
    not fit its column, its memory limit, a full disk, a server that went away."""
    try:
        yield
    except duckdb.IOException as exc:
        raise EngineError(_file_failure(label, exc)) from None
    except duckdb.OutOfMemoryException:
        raise ConfigError(
            f"{label}: the engine needed more memory than engine.memory_limit allows and could "
            "not spill the rest to disk; raise engine.memory_limit in the config (for example "
            "to 4GB), or check that engine.temp_dir has free space."
        ) from None
    except duckdb.ConversionException as exc:
        found = _CONVERSION.search(str(exc))
        if not found:
            raise
        line, column, value, kind = found.groups()
        raise DataError(
            f"{label}: line {line} holds '{excerpt(value, 30)}' in column '{excerpt(column)}', "
            f"but the rows before it read as {kind}; write missing values as empty cells, "
            "or fix that value."
        ) from None
    except Exception as exc:  # the engines' client libraries are imported only when used
        if not _engine_went_away(exc):
            raise
        raise EngineError(
            f"{label}: the engine stopped answering during the work ({first_line(exc)}); "
            "check the Spark server (engine.connect) or the database (data.url), then run "
            "again. Nothing was published; the previous brief is unchanged."
        ) from None


def _file_failure(label: str, exc: duckdb.IOException) -> str:
    """A file the engine could not write (its working files: a full disk) or read (the data)."""
    text = str(exc)
    if "write" in text.lower() or "No space left" in text:
        doing, remedy = (
            "could not write its working files",
            "free space there or set engine.temp_dir to a folder with room",
        )
    else:
        doing, remedy = "could not read a file", "check that the data file is still in place"
    return (
        f"{label}: the engine {doing} ({first_line(exc, 400)}); {remedy}, then run again. "
        "Nothing was published; the previous brief is unchanged."
    )


# Client errors that mean a server or an engine process went away mid-run: Spark Connect
# (its gRPC status), a local Spark's JVM (py4j), PostgreSQL (psycopg).
_GONE_WORDS = ("UNAVAILABLE", "Connection refused", "Socket closed", "closed the connection")


def _engine_went_away(exc: BaseException) -> bool:
    """True when ``exc`` or an exception behind it says the engine's connection was lost."""
    seen = 0
    while exc is not None and seen < 8:
        kind, module = type(exc).__name__, type(exc).__module__
        if isinstance(exc, ConnectionError) or kind == "Py4JNetworkError":
            return True
        if module.startswith("psycopg") and kind == "OperationalError":
            return True
        if kind == "SparkConnectGrpcException" and any(w in str(exc) for w in _GONE_WORDS):
            return True
        exc, seen = exc.__cause__ or exc.__context__, seen + 1
    return False


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
    text = []
    for key, name in [("target", spec.target)] + [
        (f"predictors[{i}]", p) for i, p in enumerate(spec.predictors)
    ]:
        if schema[name].is_null():
            raise DataError(
                f"{label}: column '{name}' named by '{key}' is empty in every row; check the export."
            )
        if schema[name].is_string():
            text.append((key, name))
        elif not schema[name].is_numeric():
            raise DataError(
                f"{label}: column '{name}' named by '{key}' holds {schema[name]}, not numbers; "
                "name a numeric column."
            )
    if text:
        _check_numbers_in_text(table, text, label)
    if spec.time is not None:
        check_time_column(table, spec.time.column, label)
    if spec.target in spec.groups or spec.target in spec.predictors:
        raise DataError(
            f"{label}: the target '{spec.target}' is also listed as a group or predictor; remove it there."
        )


def _check_numbers_in_text(table: ir.Table, named: list[tuple[str, str]], label: str) -> None:
    """Text columns named as numbers: every value a number, inf, NaN or a missing marker.

    ``named`` holds (key, column) pairs; one scan checks them all.
    """
    counts = {}
    for i, (_, name) in enumerate(named):
        column = table[name]
        given = ~is_missing(table, name)
        not_number = given & try_float(column.strip()).isnull()
        counts[f"given{i}"] = given.sum()
        counts[f"not_number{i}"] = not_number.sum()
        counts[f"example{i}"] = ibis.ifelse(not_number, column, ibis.null(dt.string)).min()
    row = table.aggregate(**counts).to_pyarrow().to_pylist()[0]
    for i, (key, name) in enumerate(named):
        if int(row[f"given{i}"] or 0) == 0:
            raise DataError(
                f"{label}: column '{name}' named by '{key}' is empty in every row; check the export."
            )
        if int(row[f"not_number{i}"] or 0):
            raise DataError(
                f"{label}: column '{name}' named by '{key}' holds text, not numbers (one value is "
                f"'{excerpt(row[f'example{i}'], 30)}'); name a numeric column, or write missing "
                "values as empty cells or NA."
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
    as_time = try_timestamp(column)
    if kind.is_string():
        # A text column of years, such as "1990", reads as years too.
        return as_time.coalesce(_years(try_float(column.strip())))
    return as_time


def _years(values: ir.FloatingColumn) -> ir.TimestampColumn:
    low, high = YEAR_RANGE
    whole = values.notnull() & ~is_nan(values) & (values == values.floor())
    year = whole & values.between(low, high)
    stamp = ibis.date(values.cast(dt.int64), 1, 1).cast(dt.timestamp)
    return ibis.ifelse(year, stamp, ibis.null(dt.timestamp))


def check_time_column(table: ir.Table, name: str, label: str, key: str = "time") -> None:
    """Refuse a time column of the wrong type, or one where no value reads as a date.

    ``key`` is the config key that names the column (``time``, ``window.column``, ``where``).
    """
    kind = table.schema()[name]
    if not (kind.is_temporal() or kind.is_string() or kind.is_numeric()):
        raise DataError(
            f"{label}: column '{name}' named by '{key}' holds {kind}, not dates; name a date, "
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
            f"{label}: column '{name}' named by '{key}' is empty in every row; check the export."
        )
    if int(row["parsed"] or 0) == 0:
        low, high = YEAR_RANGE
        raise DataError(
            f"{label}: column '{name}' named by '{key}' has no value that reads as a date (one value "
            f"is {row['example']!r}); write dates as 2024-03-31 or 2024-03-31 14:05, or years as "
            f"whole numbers from {low} to {high}, or name another column in '{key}'."
        )


# Text that means "no value" in a numeric column: pandas' default na_values (the
# read_csv documentation), compared in lower case, without "nan" and "-nan": those
# parse as NaN and are counted, like "inf", as values that are not finite.
MISSING_MARKERS = (
    "",
    "#n/a",
    "#n/a n/a",
    "#na",
    "-1.#ind",
    "-1.#qnan",
    "1.#ind",
    "1.#qnan",
    "<na>",
    "n/a",
    "na",
    "none",
    "null",
)


def numeric(table: ir.Table, name: str) -> ir.FloatingColumn:
    """A numeric column as float64, with NaN and infinities treated as missing.

    A text column (a CSV column with "NA" among its first rows reads as text)
    is parsed here: "inf", "-inf", "NaN" become infinities and NaN, and so missing;
    missing markers such as "NA" and anything else that is no number become missing.
    """
    column = table[name]
    text = column.type().is_string()
    column = try_float(column.strip()) if text else column.cast(dt.float64)
    return ibis.ifelse(is_nan(column) | column.isinf(), ibis.null(dt.float64), column)


def is_missing(table: ir.Table, name: str) -> ir.BooleanColumn:
    """True where a cell holds no value: empty, or a text missing marker such as "NA"."""
    column = table[name]
    if column.type().is_string():
        return column.isnull() | column.strip().lower().isin(list(MISSING_MARKERS))
    return column.isnull()


def category(table: ir.Table, name: str, clean: bool = True) -> ir.StringColumn:
    """A grouping column as text, so numbers-as-codes group like labels.

    Whole numbers stored as floats (a CSV column of codes with one gap reads as
    float) print as "5", not "5.0": a code's label should look like the code.
    Text loses its control and bidirectional characters (``datatext.engine_clean``)
    unless ``clean`` is False: the analysis frame cleans only columns that need it.
    """
    column = table[name]
    if column.type().is_string():
        # Control and bidi characters would break the SVG and reorder the finding's numbers.
        return engine_clean(column) if clean else column
    if column.type().is_floating():
        whole = column.notnull() & (column == column.round(0)) & (column.abs() < 1e15)
        return ibis.ifelse(whole, column.cast(dt.int64).cast(dt.string), column.cast(dt.string))
    return column.cast(dt.string)
