"""The record of what a brief was built from, kept in stats.json as ``made_from``.

A later run reads it back to say what changed (``history.change``) and to hold a
brief whose data look half-loaded (``deliver.gate``).
"""

from __future__ import annotations

import hashlib
import platform
from dataclasses import dataclass
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path

import ibis
import ibis.expr.datatypes as dt

from briefgen import __version__
from briefgen.config import BriefSpec

# Read size for hashing: large enough that the per-call cost vanishes, small enough to
# keep memory flat however large the file (hashlib.file_digest's own default is 256 KiB).
HASH_CHUNK = 1 << 20


@dataclass(frozen=True, slots=True)
class DataRecord:
    """The data the brief read: the file's bytes by SHA-256, or a database query.

    ``sha256`` and ``bytes`` are None for a database source, ``query`` None for a file;
    ``rows`` is the row count the brief read either way.
    """

    path: str | None
    format: str
    sha256: str | None
    bytes: int | None
    query: str | None
    rows: int


@dataclass(frozen=True, slots=True)
class ColumnType:
    """One column of the data as the engine typed it, and its broad kind.

    ``kind`` (number, text, date/time, true/false, other) is what a change is judged
    by: a CSV column of whole numbers that gains one decimal is still a number.
    """

    name: str
    type: str
    kind: str


@dataclass(frozen=True, slots=True)
class BuiltWith:
    """Versions of the software that computed the brief."""

    briefgen: str
    engine: str
    engine_version: str
    ibis: str
    python: str


@dataclass(frozen=True, slots=True)
class RunRecord:
    """What the brief was built from: data, columns, config as used, software."""

    data: DataRecord
    schema: tuple[ColumnType, ...]
    config: dict[str, object]
    built_with: BuiltWith


def file_sha256(path: Path) -> str:
    """SHA-256 of a file, streamed in fixed-size reads: memory stays flat at any size."""
    digest = hashlib.sha256()
    with path.open("rb", buffering=0) as stream:
        buffer = bytearray(HASH_CHUNK)
        view = memoryview(buffer)
        while count := stream.readinto(buffer):
            digest.update(view[:count])
    return digest.hexdigest()


def column_kind(dtype: dt.DataType) -> str:
    if dtype.is_boolean():
        return "true/false"
    if dtype.is_numeric():
        return "number"
    if dtype.is_string():
        return "text"
    if dtype.is_temporal():
        return "date/time"
    return "other"


def schema_of(schema: ibis.Schema) -> tuple[ColumnType, ...]:
    """The data's columns in order, with engine type and kind (the schema only, no rows)."""
    return tuple(ColumnType(name, str(dtype), column_kind(dtype)) for name, dtype in schema.items())


def _version(package: str) -> str:
    try:
        return version(package)
    except PackageNotFoundError:
        return "unknown"


def built_with(engine: str) -> BuiltWith:
    return BuiltWith(
        briefgen=__version__,
        engine=engine,
        engine_version=_version(engine),
        ibis=_version("ibis-framework"),
        python=platform.python_version(),
    )


def config_as_used(spec: BriefSpec) -> dict:
    """The validated config with every default filled in, as plain JSON values.

    ``delivery`` is left out: it says who receives the brief, not what it was built
    from, and the addresses need not travel with every copy of stats.json. Settings
    after ``/;`` in ``engine.connect`` may carry a Spark Connect token, so only the
    server's address is kept.
    """
    used = spec.model_dump(mode="json", exclude={"source_file", "delivery"})
    connect = used["engine"].get("connect")
    if connect and "/;" in connect:
        used["engine"]["connect"] = connect.split("/;", 1)[0]
    return used


def record_run(spec: BriefSpec, schema: ibis.Schema, rows: int) -> RunRecord:
    """The record of this run; hashes the data file (one streamed read).

    A database source is recorded by its query (a table as ``SELECT * FROM`` it) and
    the row count, not hashed: its rows live in the server.
    """
    source = spec.data
    if source.url is not None:
        query = source.query or f"SELECT * FROM {source.table}"
        data = DataRecord(source.label, "database", None, None, query, rows)
        return RunRecord(
            data, schema_of(schema), config_as_used(spec), built_with(spec.engine.backend)
        )
    path = spec.data_path
    data = DataRecord(
        path=spec.data.path,
        format=spec.data_format,
        sha256=file_sha256(path),
        bytes=path.stat().st_size,
        query=None,
        rows=rows,
    )
    return RunRecord(data, schema_of(schema), config_as_used(spec), built_with(spec.engine.backend))
