"""Open a table or a query in a database named by ``data.url``, through Ibis.

Where the statistics run depends on the database:

- ``duckdb://`` attaches the file read-only to the engine, which runs the statistics on
  it and keeps its own tables in its private file; a query is run by the file's own
  DuckDB client (read-only) and its rows copied into the engine in Arrow batches.
- ``postgresql://`` runs the statistics in PostgreSQL: every query is compiled by
  Ibis and only aggregates come back. The session turns parallel workers off, as one
  DuckDB thread does, so sums combine in one order and builds repeat to the last digit.
- ``sqlite://`` copies the rows once into the embedded DuckDB, in Arrow batches, and
  the statistics run there: SQLite has no quantiles, standard deviations or NaN, which
  the statistics need.

The password comes only from the environment variable ``data.password_env`` names; a
URL is shown only without it.
"""

from __future__ import annotations

import logging
import os
import re
from pathlib import Path
from urllib.parse import unquote, urlsplit

import duckdb
import ibis
import ibis.expr.types as ir
from ibis.backends import BaseBackend

from briefgen.config import BriefSpec, database_file
from briefgen.datatext import excerpt, first_line
from briefgen.errors import ConfigError, DataError

log = logging.getLogger(__name__)

# Rows per Arrow batch when a SQLite table is copied into DuckDB: bounded memory.
COPY_BATCH_ROWS = 65_536
COPIED_TABLE = "briefgen_source_rows"


def quiet(connection: duckdb.DuckDBPyConnection) -> duckdb.DuckDBPyConnection:
    """``connection`` without DuckDB's own progress bar.

    DuckDB draws one on stdout for any query over two seconds, terminal or not: in a
    nightly job's log or mail it was lines of bar characters, and on a terminal it
    fought the build's progress lines. A session setting: the connect-time config
    refuses it.
    """
    connection.execute("SET enable_progress_bar = false")
    return connection


def where_statistics_run(url: str) -> str:
    """The engine that runs the statistics for this URL, in words (for the brief's method)."""
    scheme = url.split(":", 1)[0].lower()
    if scheme.startswith("postgres"):
        return "PostgreSQL ran the statistics in the database (only aggregates left it)."
    if scheme == "duckdb":
        return "DuckDB ran the statistics in the database file (opened read-only)."
    return (
        "The rows were copied once from SQLite into DuckDB, which ran the statistics "
        "(SQLite has no quantiles or standard deviations)."
    )


def password(spec: BriefSpec) -> str | None:
    """The database password from the environment variable the config names, if any."""
    name = spec.data.password_env
    if name is None:
        return None
    value = os.environ.get(name)
    if value is None:
        raise ConfigError(
            f"environment variable {name} (named by data.password_env) is not set; "
            "set it to the database password, or remove data.password_env."
        )
    return value


def _postgres(spec: BriefSpec, label: str) -> BaseBackend:
    parts = urlsplit(spec.data.url or "")
    secret = password(spec)
    database = unquote(parts.path.lstrip("/")) or None
    try:
        con = ibis.postgres.connect(
            host=parts.hostname or "localhost",
            port=parts.port or 5432,
            user=unquote(parts.username) if parts.username else None,
            password=secret,
            database=database,
            connect_timeout=15,
        )
        # One order of summation, as with one DuckDB thread: repeatable last digits.
        con.raw_sql("SET max_parallel_workers_per_gather = 0")
        con.raw_sql("SET TimeZone = 'UTC'")
    except Exception as exc:  # psycopg's errors: refused, unknown host, bad login, no database
        raise DataError(
            f"{label}: cannot connect to the database ({first_line(exc, hide=secret)}); check "
            "data.url, that the server is running, and the password in data.password_env."
        ) from None
    return con


def _file_database(spec: BriefSpec, label: str, scheme: str) -> BaseBackend:
    path = database_file(spec.data.url or "", spec.base_dir)
    if not path.is_file():
        raise DataError(
            f"{label}: database file not found (looked in {path}); check data.url "
            f"({scheme}:///relative/path or {scheme}:////absolute/path)."
        )
    try:
        if scheme == "duckdb":
            con = ibis.duckdb.connect(path, read_only=True, threads=1)
            quiet(con.con)
            return con
        return ibis.sqlite.connect(path)
    except Exception as exc:  # a file that is not a database of that kind
        raise DataError(
            f"{label}: cannot be opened as a {scheme} database ({first_line(exc)}); check data.url."
        ) from None


def _table_or_query(con: BaseBackend, spec: BriefSpec, label: str) -> ir.Table:
    name = spec.data.table
    if name is not None:
        schema, _, table = name.rpartition(".")
        try:
            found = con.table(table, database=schema or None)
            found.schema()
            return found
        except Exception:  # noqa: BLE001 - Ibis raises a different error per backend
            known = _tables(con)
            hint = f"tables are: {', '.join(known[:12])}" if known else "the database has no tables"
            raise DataError(
                f"{label}: table '{excerpt(name)}' named by data.table is not in the database; "
                f"{hint}."
            ) from None
    try:
        found = con.sql(spec.data.query or "")
        found.schema()
        return found
    except Exception as exc:
        raise DataError(
            f"{label}: the query in data.query failed in the database ({first_line(exc)}); "
            "check it in the database's own client."
        ) from None


def _tables(con: BaseBackend) -> list[str]:
    try:
        return sorted(con.list_tables())
    except Exception:  # noqa: BLE001
        return []


def _copy_into(engine: BaseBackend, table: ir.Table, label: str) -> ir.Table:
    """The rows of ``table`` as a table in ``engine``, copied in Arrow batches."""
    try:
        batches = table.to_pyarrow_batches(chunk_size=COPY_BATCH_ROWS)
    except Exception as exc:
        raise DataError(f"{label}: reading the rows failed ({first_line(exc)}).") from None
    return _insert_batches(engine, table.schema(), batches, label)


def _insert_batches(engine: BaseBackend, schema, batches, label: str) -> ir.Table:
    """Arrow ``batches`` of ``schema`` as one temporary table in ``engine``."""
    try:
        engine.create_table(COPIED_TABLE, schema=schema, temp=True)
        for batch in batches:
            if batch.num_rows:
                engine.insert(COPIED_TABLE, batch)
    except Exception as exc:
        raise DataError(f"{label}: reading the rows failed ({first_line(exc)}).") from None
    return engine.table(COPIED_TABLE)


def _duckdb_query(spec: BriefSpec, label: str, engine: BaseBackend) -> ir.Table:
    """The rows of ``data.query`` on a DuckDB file, copied into the engine.

    The file's own DuckDB client runs the query (read-only): Ibis 12's ``sql`` calls a
    result method that DuckDB 2 no longer has.
    """
    path = database_file(spec.data.url or "", spec.base_dir)
    if not path.is_file():
        raise DataError(f"{label}: database file not found (looked in {path}); check data.url.")
    try:
        source = quiet(duckdb.connect(str(path), read_only=True))
        reader = source.sql(spec.data.query or "").to_arrow_reader(COPY_BATCH_ROWS)
    except Exception as exc:
        raise DataError(
            f"{label}: the query in data.query failed in the database ({first_line(exc)}); "
            "check it in the database's own client."
        ) from None
    try:
        return _insert_batches(engine, ibis.Schema.from_pyarrow(reader.schema), reader, label)
    finally:
        source.close()


def open_database(spec: BriefSpec, label: str, engine: BaseBackend) -> ir.Table:
    """The configured table or query; in the database itself, or copied into ``engine``."""
    url = spec.data.url or ""
    scheme = url.split(":", 1)[0].lower()
    if scheme.startswith("postgres"):
        return _table_or_query(_postgres(spec, label), spec, label)
    if scheme == "duckdb" and spec.data.query is not None:
        return _duckdb_query(spec, label, engine)
    if scheme == "duckdb" and spec.data.table is not None:
        # Attached read-only to the engine, which keeps its own tables in its private file.
        path = database_file(url, spec.base_dir)
        if not path.is_file():
            raise DataError(f"{label}: database file not found (looked in {path}); check data.url.")
        escaped = str(path).replace("'", "''")
        engine.raw_sql(f"ATTACH '{escaped}' AS briefgen_source (READ_ONLY)")
        schema, _, name = spec.data.table.rpartition(".")
        try:
            found = engine.table(name, database=("briefgen_source", schema or "main"))
            found.schema()
            return found
        except Exception:  # noqa: BLE001
            raise DataError(
                f"{label}: table '{excerpt(spec.data.table)}' named by data.table is not in "
                "the database; check data.table."
            ) from None
    con = _file_database(spec, label, scheme)
    table = _table_or_query(con, spec, label)
    if scheme == "sqlite":
        return _copy_into(engine, table, label)
    return table


def safe_url(url: str) -> str:
    """The URL without a password (the config refuses one, but messages never risk it)."""
    return re.sub(r"(//[^/:@]*):[^@/]*@", r"\1:***@", url)


def database_path(spec: BriefSpec) -> Path | None:
    """The database file of a sqlite:// or duckdb:// URL; None for a server."""
    scheme = (spec.data.url or "").split(":", 1)[0].lower()
    return (
        database_file(spec.data.url or "", spec.base_dir)
        if scheme in ("sqlite", "duckdb")
        else None
    )
