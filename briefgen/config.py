"""YAML config ─► BriefSpec, validated once at the edge.

Errors name the key and the line it sits on, and suggest the closest valid key
when a name looks misspelled, because the person reading the message is about
to open the YAML file in an editor.
"""

from __future__ import annotations

import datetime as dt
import difflib
import os
import re
from pathlib import Path
from typing import Any, Literal

import yaml
from pydantic import (
    BaseModel,
    Field,
    ValidationError,
    field_validator,
)

from briefgen.dataspec import DataSpec, Strict, WindowSpec, database_file
from briefgen.errors import ConfigError
from briefgen.rows.where import WhereError, parse_where

__all__ = ["BriefSpec", "DataSpec", "EngineSpec", "OutputSpec", "TimeSpec", "WindowSpec"]
# Every part of the config refuses unknown keys; the old name stays for code written against it.
_Strict = Strict

Period = Literal["auto", "day", "week", "month", "quarter", "year"]

# Tokens output.dir and the email subject may carry, filled from the build date.
DATE_TOKENS = ("date", "year", "month", "day")
_TOKEN = re.compile(r"\{([^{}]*)\}")


def check_tokens(text: str, allowed: tuple[str, ...] = DATE_TOKENS) -> str:
    """Refuse a ``{token}`` that ``fill_tokens`` would not know, naming the ones it does."""
    for name in _TOKEN.findall(text):
        if name not in allowed:
            known = ", ".join(f"{{{token}}}" for token in allowed)
            raise ValueError(f"unknown token '{{{name}}}'; use {known}")
    return text


def fill_tokens(text: str, built_on: str, **extra: str) -> str:
    """Replace ``{date}`` (2026-12-02), ``{year}``, ``{month}``, ``{day}`` and ``extra`` names."""
    day = dt.date.fromisoformat(built_on)
    values = {
        "date": day.isoformat(),
        "year": f"{day.year:04d}",
        "month": f"{day.month:02d}",
        "day": f"{day.day:02d}",
    } | extra
    # A plain substitution, not str.format: a template must not reach attributes.
    return _TOKEN.sub(lambda match: values.get(match.group(1), match.group(0)), text)


# A Spark Connect address: sc://host:port, optionally followed by /;key=value settings.
_SPARK_CONNECT = re.compile(r"^sc://[^/:;\s]+(:\d{1,5})?(/;\S*)?$")


class EngineSpec(_Strict):
    """Which engine runs the statistics, and how much memory it may hold. Only ``source`` reads this.

    ``threads``: engine threads; None (default) uses every core. The statistics give the
    same bytes on any number (exact sums, ``briefgen.stats.core.exact``).
    ``memory_limit`` caps what DuckDB holds in memory (its own size syntax, ``192MB``
    (default), ``1GB``); beyond it, tables, sorts and joins spill to ``temp_dir`` (default: the
    system's temporary folder), so data larger than memory still complete. The default is
    the smallest measured to complete 100M rows (README, engine.memory_limit).
    ``pyspark`` starts a local Spark session, or with ``connect`` reaches a Spark
    Connect server (``sc://host:15002``), which runs the queries on its cluster.
    """

    backend: Literal["duckdb", "pyspark"] = "duckdb"
    threads: int | None = Field(default=None, ge=1)
    memory_limit: str = Field(default="192MB", pattern=r"(?i)^\s*\d+(\.\d+)?\s*(k|m|g|t)i?b\s*$")
    temp_dir: str | None = None
    connect: str | None = None

    @field_validator("connect")
    @classmethod
    def _spark_connect_address(cls, value: str | None, info) -> str | None:
        if value is None:
            return None
        if info.data.get("backend") != "pyspark":
            raise ValueError("connect names a Spark Connect server; use it with backend: pyspark")
        if not _SPARK_CONNECT.match(value.strip()):
            raise ValueError(
                "write the Spark Connect server's address as sc://host:port, e.g. sc://spark.example.org:15002"
            )
        return value.strip()


class TimeSpec(_Strict):
    """A date, timestamp or year column, and the period to summarise it by.

    ``auto`` picks the period from the span and never finer than the data are
    recorded (see ``briefgen.stats.periods.choose_period``); a column of years is yearly.
    """

    column: str
    period: Period = "auto"


class OutputSpec(_Strict):
    """Where the brief goes and in which forms."""

    dir: str = "out"
    formats: list[Literal["html", "pdf", "json"]] = Field(
        default_factory=lambda: ["html", "pdf", "json"]
    )
    paper: Literal["a4", "letter"] = "a4"
    keep: int = Field(default=7, ge=1)

    @field_validator("dir")
    @classmethod
    def _dir_tokens(cls, value: str) -> str:
        return check_tokens(value)

    @field_validator("formats")
    @classmethod
    def _not_empty(cls, value: list[str]) -> list[str]:
        if not value:
            raise ValueError("list at least one of html, pdf, json")
        return list(dict.fromkeys(value))


class FiguresSpec(_Strict):
    """How the figure review (briefgen/figures/review.py) treats a figure that breaks a rule."""

    review: Literal["stop", "warn"] = "stop"


_HEX_COLOUR = re.compile(r"^#(?:[0-9A-Fa-f]{3}){1,2}$")
# The accent colours the masthead rule and the section headings: heading text at 12 pt
# needs 4.5:1 on white (WCAG 2.1, 1.4.3; 12 pt bold is not "large text").
ACCENT_CONTRAST = 4.5


class BrandSpec(_Strict):
    """An optional logo and accent colour; the logo is checked when the brief is built (assets.py)."""

    logo: str | None = None
    accent: str | None = None

    @field_validator("accent")
    @classmethod
    def _readable_accent(cls, value: str | None) -> str | None:
        if value is None:
            return value
        if not _HEX_COLOUR.match(value):
            raise ValueError(f"'{value}' is not a colour; write it as #rrggbb, such as #0072b2")
        from briefgen.figures.colour import contrast_ratio, darkened_to

        ratio = contrast_ratio(value, "#ffffff")
        if ratio < ACCENT_CONTRAST:
            raise ValueError(
                f"{value} reaches only {ratio:.2f}:1 on white, and headings in the accent "
                f"colour need {ACCENT_CONTRAST:g}:1 (WCAG 2.1, 1.4.3); use a darker colour "
                f"such as {darkened_to(value, ACCENT_CONTRAST)}, the same hue darkened"
            )
        return value.lower()


class EmailSpec(_Strict):
    """Send brief.pdf by SMTP after publishing; secrets come only from the environment."""

    host: str
    port: int | None = Field(default=None, ge=1, le=65535)
    security: Literal["starttls", "tls", "none"] = "starttls"
    sender: str
    recipients: list[str] = Field(min_length=1)
    subject: str = "{title} ({date})"
    user_env: str | None = None
    password_env: str | None = None
    ca_file: str | None = None
    timeout: float = Field(default=30.0, gt=0)

    @field_validator("sender")
    @classmethod
    def _one_address(cls, value: str) -> str:
        if "@" not in value or any(c in value for c in ",;\r\n"):
            raise ValueError("give one email address, such as briefs@example.org")
        return value

    @field_validator("recipients")
    @classmethod
    def _addresses(cls, value: list[str]) -> list[str]:
        for address in value:
            cls._one_address(address)
        return value

    @field_validator("subject")
    @classmethod
    def _subject_tokens(cls, value: str) -> str:
        return check_tokens(value, (*DATE_TOKENS, "title"))

    @field_validator("user_env", "password_env")
    @classmethod
    def _env_name(cls, value: str | None) -> str | None:
        if value is not None and not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", value):
            raise ValueError("name an environment variable (letters, digits, _), not a value")
        return value

    @property
    def smtp_port(self) -> int:
        # Submission on 587 with STARTTLS (RFC 6409, RFC 3207); implicit TLS on 465 (RFC 8314).
        return self.port or {"starttls": 587, "tls": 465, "none": 25}[self.security]


class ChecksSpec(_Strict):
    """The publish gate: limits a run must meet before its brief is published and mailed.

    Each limit is off unless set. Ratios compare rows read with the previous run's.
    """

    min_rows_ratio: float | None = Field(default=None, gt=0)
    max_rows_ratio: float | None = Field(default=None, gt=0)
    columns_kept: bool = False
    max_target_missing: float | None = Field(default=None, ge=0, le=1)

    @field_validator("max_rows_ratio")
    @classmethod
    def _ordered(cls, value: float | None, info) -> float | None:
        low = info.data.get("min_rows_ratio")
        if value is not None and low is not None and value < low:
            raise ValueError(f"it is below min_rows_ratio ({low}); swap the two limits")
        return value


class DeliverySpec(_Strict):
    """What happens after the brief is published."""

    email: EmailSpec | None = None
    # Who hears when the publish gate holds a brief (sent through delivery.email's server).
    alert: list[str] = Field(default_factory=list)

    @field_validator("alert")
    @classmethod
    def _alert_addresses(cls, value: list[str], info) -> list[str]:
        for address in value:
            EmailSpec._one_address(address)
        if value and info.data.get("email") is None:
            raise ValueError("alerts are sent through delivery.email's server; add delivery.email")
        return value

    @field_validator("email", mode="before")
    @classmethod
    def _no_secrets_in_the_file(cls, value: Any) -> Any:
        if isinstance(value, dict):
            for key in ("password", "user"):
                if key in value:
                    raise ValueError(
                        f"'{key}' cannot be written in the config; put it in an environment "
                        f"variable and name that variable in '{key}_env'"
                    )
        return value

    @field_validator("email")
    @classmethod
    def _secret_needs_encryption(cls, value: EmailSpec | None) -> EmailSpec | None:
        if value is not None and value.password_env and value.security == "none":
            raise ValueError(
                "a password must not travel unencrypted; use security: starttls or tls"
            )
        if value is not None and value.password_env and not value.user_env:
            raise ValueError("password_env needs user_env, the variable holding the login name")
        return value


class BriefSpec(_Strict):
    """The validated config: what to read and what the brief is about."""

    title: str
    description: str | None = None
    data: DataSpec
    target: str
    groups: list[str] = Field(default_factory=list)
    predictors: list[str] = Field(default_factory=list)
    time: TimeSpec | None = None
    # Which rows the brief covers (briefgen/rows): a filter and a window before the build date.
    where: str | None = None
    window: WindowSpec | None = None
    cross: list[tuple[str, str]] | None = None
    labels: dict[str, str] = Field(default_factory=dict)
    log_target: bool = False
    target_kind: Literal["auto", "continuous", "binary", "count"] = "auto"
    scale: Literal["auto", "ratio", "interval"] = "auto"
    confidence: float = Field(default=0.95, gt=0.5, lt=1.0)
    min_cell: int = Field(default=10, ge=2)
    # At least two named levels beside "Other", so highest and lowest name real levels.
    max_levels: int = Field(default=12, ge=3, le=20)
    engine: EngineSpec = Field(default_factory=EngineSpec)
    output: OutputSpec = Field(default_factory=OutputSpec)
    figures: FiguresSpec = Field(default_factory=FiguresSpec)
    brand: BrandSpec = Field(default_factory=BrandSpec)
    delivery: DeliverySpec = Field(default_factory=DeliverySpec)
    # `previous` (the last published run) or a stats.json file; None: no comparison section.
    compare_with: str | None = None
    checks: ChecksSpec | None = None
    source_file: str = ""

    @field_validator("delivery")
    @classmethod
    def _email_needs_the_pdf(cls, value: DeliverySpec, info) -> DeliverySpec:
        output = info.data.get("output")
        if value.email is not None and output is not None and "pdf" not in output.formats:
            raise ValueError("email sends brief.pdf; add pdf to output.formats")
        return value

    @field_validator("compare_with", "checks")
    @classmethod
    def _history_needs_stats_json(cls, value, info):
        # Both read the last run's stats.json; without it every later run would find none.
        output = info.data.get("output")
        if value is not None and output is not None and "json" not in output.formats:
            raise ValueError("it reads the last run's stats.json; add json to output.formats")
        return value

    @field_validator("cross")
    @classmethod
    def _cross_names_groups(cls, value, info):
        # A two-way table crosses two of the brief's groups; anything else is a typo.
        groups = info.data.get("groups") or []
        for pair in value or []:
            missing = [name for name in pair if name not in groups]
            if missing:
                raise ValueError(
                    f"'{missing[0]}' is not listed in groups; add it there or fix the name"
                )
            if pair[0] == pair[1]:
                raise ValueError(f"a pair needs two different groups, not '{pair[0]}' twice")
        return value

    @field_validator("scale")
    @classmethod
    def _no_log_without_zero(cls, value: str, info) -> str:
        # A percent change per unit is a ratio of the target: meaningless without a true zero.
        if value == "interval" and info.data.get("log_target"):
            raise ValueError("log_target reports percent changes, which need a ratio scale")
        return value

    @field_validator("where")
    @classmethod
    def _where_parses(cls, value: str | None) -> str | None:
        if value is not None:
            try:
                parse_where(value)
            except WhereError as exc:
                raise ValueError(str(exc)) from None
        return value

    @field_validator("engine", mode="before")
    @classmethod
    def _engine_shorthand(cls, value: Any) -> Any:
        # `engine: duckdb` is the common case; the mapping form leaves room for settings.
        return {"backend": value} if isinstance(value, str) else value

    @field_validator("time", mode="before")
    @classmethod
    def _time_shorthand(cls, value: Any) -> Any:
        # `time: dispatched_at` is the common case; the mapping form overrides the period.
        return {"column": value} if isinstance(value, str) else value

    @property
    def base_dir(self) -> Path:
        return Path(self.source_file).parent if self.source_file else Path.cwd()

    @property
    def data_path(self) -> Path:
        """The data file; for a database, the file a sqlite:// or duckdb:// URL names."""
        if self.data.path is None:
            return database_file(self.data.url or "", self.base_dir)
        path = Path(self.data.path).expanduser()
        return path if path.is_absolute() else Path(os.path.normpath(self.base_dir / path))

    @property
    def data_format(self) -> str:
        if self.data.format:
            return self.data.format
        if self.data.url is not None:
            return "database"
        suffix = self.data_path.suffix.lower().lstrip(".")
        if suffix in {"xlsx", "xlsm"} or self.data.sheet is not None:
            return "excel"
        if suffix in {"json", "jsonl", "ndjson"}:
            return "json"
        return "parquet" if suffix in {"parquet", "pq"} else "csv"

    def compare_path(self) -> Path | None:
        """The stats.json ``compare_with`` names, or None for ``previous`` or no comparison."""
        if self.compare_with in (None, "previous"):
            return None
        path = Path(self.compare_with).expanduser()
        return path if path.is_absolute() else Path(os.path.normpath(self.base_dir / path))

    @property
    def cross_pairs(self) -> list[tuple[str, str]]:
        """Pairs for two-way tables: as configured, else the first two groups."""
        if self.cross is not None:
            return list(self.cross)
        return [(self.groups[0], self.groups[1])] if len(self.groups) >= 2 else []

    def output_dir(self, override: str | Path | None = None, built_on: str | None = None) -> Path:
        if override is not None:
            return Path(override)
        folder = fill_tokens(self.output.dir, built_on) if built_on else self.output.dir
        path = Path(folder).expanduser()
        return path if path.is_absolute() else Path(os.path.normpath(self.base_dir / path))


def _line_index(node: yaml.Node, prefix: tuple = (), index: dict | None = None) -> dict:
    """Map each key path, e.g. ("output", "paper"), to its 1-based line in the YAML."""
    index = {} if index is None else index
    if isinstance(node, yaml.MappingNode):
        for key_node, value_node in node.value:
            path = (*prefix, key_node.value)
            index[path] = key_node.start_mark.line + 1
            _line_index(value_node, path, index)
    elif isinstance(node, yaml.SequenceNode):
        for position, item in enumerate(node.value):
            path = (*prefix, position)
            index[path] = item.start_mark.line + 1
            _line_index(item, path, index)
    return index


def _known_keys(loc: tuple) -> list[str]:
    model: type[BaseModel] = BriefSpec
    for part in loc[:-1]:
        field = model.model_fields.get(str(part))
        annotation = getattr(field, "annotation", None)
        candidates = [a for a in getattr(annotation, "__args__", (annotation,)) if a]
        model = next(
            (a for a in candidates if isinstance(a, type) and issubclass(a, BaseModel)), None
        )
        if model is None:
            return []
    return [name for name in model.model_fields if name != "source_file"]


def _describe(error: dict, lines: dict, where: str) -> str:
    loc = tuple(part for part in error["loc"] if not str(part).startswith("function-"))
    loc = tuple(p for p in loc if p not in {"tagged-union", "str", "TimeSpec"})
    key = ".".join(str(part) for part in loc) or "(top level)"
    line = next((lines[loc[:i]] for i in range(len(loc), 0, -1) if loc[:i] in lines), None)
    at = f"{where} line {line}" if line else where
    if error["type"] == "extra_forbidden":
        known = _known_keys(loc)
        close = difflib.get_close_matches(str(loc[-1]), known, n=1)
        hint = f"did you mean '{close[0]}'?" if close else f"valid keys here: {', '.join(known)}."
        return f"{at}: unknown key '{key}'; {hint}"
    if error["type"] == "missing":
        return f"{at}: required key '{key}' is missing; add it."
    message = error["msg"].removeprefix("Value error, ")
    return f"{at}: key '{key}' is invalid: {message}."


def parse_spec(text: str, source_file: str | Path = "") -> BriefSpec:
    """Validate YAML text into a BriefSpec; raise ConfigError with a located sentence."""
    where = str(source_file) or "config"
    try:
        node = yaml.compose(text)
        raw = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = f" line {mark.line + 1}" if mark else ""
        problem = getattr(exc, "problem", None) or "not valid YAML"
        raise ConfigError(f"{where}{line}: {problem}; check the indentation and quoting.") from None
    if not isinstance(raw, dict):
        raise ConfigError(f"{where}: expected a mapping of keys such as title, data, target.")
    lines = _line_index(node) if node is not None else {}
    try:
        return BriefSpec.model_validate({**raw, "source_file": str(source_file)})
    except ValidationError as exc:
        raise ConfigError(_describe(exc.errors()[0], lines, where)) from None


def load_spec(path: str | Path) -> BriefSpec:
    """Read and validate a config file."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigError(f"{path}: config file not found; check the path.") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{path}: cannot read the config ({exc.__class__.__name__}).") from None
    return parse_spec(text, path)
