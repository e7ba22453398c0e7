"""Where the data live: a file, a workbook's sheet, or a table or query in a database.

Split from ``config`` because a source is its own small language: file formats,
database URLs that must never carry a password, and the window before the build date.
"""

from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, field_validator, model_validator

from briefgen.errors import ConfigError
from briefgen.rows.window import parse_last


class Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


# A scheme followed by "//": a database or network address, not a file name.
_URL = re.compile(r"^([A-Za-z][A-Za-z0-9+.-]*)://")
_DATABASE_SCHEMES = ("postgres", "mysql", "mariadb", "sqlite", "duckdb", "mssql", "oracle")
# Databases briefgen opens through Ibis from data.url; see briefgen/database.py.
DATABASE_SCHEMES = ("postgres", "postgresql", "sqlite", "duckdb")


def refuse_url(path: str) -> str:
    """Refuse a database URL or network address in ``data.path``, echoing only its scheme.

    The rest of a URL may carry a user name and password, so it is never quoted.
    """
    found = _URL.match(path.strip())
    if not found:
        return path
    scheme = found.group(1).lower()
    if scheme.startswith(_DATABASE_SCHEMES) or "+" in scheme:
        raise ValueError(
            f"it is a {scheme}:// database URL, and data.path names a file; write the URL in "
            "data.url instead, with data.table or data.query"
        )
    raise ValueError(
        f"it is a {scheme}:// address, and briefgen reads local files only; "
        "copy the data to a CSV, Parquet or JSON file and name that file here"
    )


def check_database_url(url: str) -> str:
    """A database URL briefgen opens, with no password in it; only the scheme is ever echoed."""
    found = _URL.match(url.strip())
    if not found:
        raise ValueError(
            "write a database URL such as postgresql://user@host/database, "
            "sqlite:///file.db or duckdb:///file.duckdb"
        )
    scheme = found.group(1).lower()
    if scheme not in DATABASE_SCHEMES:
        raise ValueError(
            f"{scheme}:// is not a database briefgen opens; use postgresql://, sqlite:// or duckdb://"
        )
    authority = url.strip()[found.end() :].split("/", 1)[0]
    if ":" in authority.rpartition("@")[0] or "password=" in url.lower():
        raise ValueError(
            "the URL holds a password, which cannot be written in the config; put it in an "
            "environment variable and name that variable in data.password_env"
        )
    return url.strip()


def database_file(url: str, base_dir: Path) -> Path:
    """The file a ``sqlite://`` or ``duckdb://`` URL names, relative to the config's folder.

    As in SQLAlchemy's URLs: three slashes before a relative path
    (``sqlite:///data/ops.db``), four before an absolute one (``sqlite:////srv/ops.db``).
    """
    found = _URL.match(url)
    scheme = found.group(1).lower() if found else ""
    if scheme not in ("sqlite", "duckdb"):
        raise ConfigError(f"data.url names a {scheme}:// server, not a file.")
    rest = url[found.end() :]
    path = Path(rest[1:] if rest.startswith("/") else rest).expanduser()
    return path if path.is_absolute() else Path(os.path.normpath(base_dir / path))


class DataSpec(Strict):
    """Where the data live: a file (``path``) or a database (``url`` with ``table`` or ``query``).

    ``format`` defaults to the file's extension; ``sheet`` picks a workbook's sheet by
    name; a database password comes only from the environment variable ``password_env``.
    """

    path: str | None = None
    format: Literal["csv", "parquet", "json", "excel"] | None = None
    sheet: str | None = None
    url: str | None = None
    table: str | None = None
    query: str | None = None
    password_env: str | None = None

    @field_validator("path")
    @classmethod
    def _a_file(cls, value: str | None) -> str | None:
        return refuse_url(value) if value is not None else None

    @field_validator("url")
    @classmethod
    def _a_database(cls, value: str | None) -> str | None:
        return check_database_url(value) if value is not None else None

    @field_validator("password_env")
    @classmethod
    def _env_name(cls, value: str | None) -> str | None:
        if value is not None and not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", value):
            raise ValueError("name an environment variable (letters, digits, _), not a value")
        return value

    @model_validator(mode="before")
    @classmethod
    def _no_password_in_the_file(cls, value: Any) -> Any:
        if isinstance(value, dict) and "password" in value:
            raise ValueError(
                "'password' cannot be written in the config; put it in an environment variable "
                "and name that variable in 'data.password_env'"
            )
        return value

    @model_validator(mode="after")
    def _one_source(self) -> DataSpec:
        if (self.path is None) == (self.url is None):
            raise ValueError("name either a file in 'path' or a database in 'url', not both")
        if self.url is not None:
            if (self.table is None) == (self.query is None):
                raise ValueError("with 'url', name either a 'table' or a 'query' (one of them)")
            if self.format is not None or self.sheet is not None:
                raise ValueError("'format' and 'sheet' describe files; a database needs neither")
        else:
            for key in ("table", "query", "password_env"):
                if getattr(self, key) is not None:
                    raise ValueError(f"'{key}' goes with a database 'url', not with a file 'path'")
        if self.sheet is not None and self.format not in (None, "excel"):
            raise ValueError("'sheet' names a sheet of an Excel workbook; set format: excel")
        return self

    @property
    def label(self) -> str:
        """How messages and the brief name the source (a URL only without its password)."""
        if self.path is not None:
            return self.path
        what = f"table {self.table}" if self.table is not None else "a query"
        return f"{self.url} ({what})"


class WindowSpec(Strict):
    """The latest period before the build date: ``{column: dispatched_at, last: 7 days}``."""

    column: str
    last: str

    @field_validator("last", mode="before")
    @classmethod
    def _a_span(cls, value: Any) -> str:
        parse_last(str(value))
        return str(value)
