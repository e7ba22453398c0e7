"""YAML config ─► BriefSpec, validated once at the edge.

Errors name the key and the line it sits on, and suggest the closest valid key
when a name looks misspelled, because the person reading the message is about
to open the YAML file in an editor.
"""

from __future__ import annotations

import difflib
import os
from pathlib import Path
from typing import Any, Literal

import yaml
from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator

from briefgen.errors import ConfigError

Period = Literal["auto", "day", "week", "month"]


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class DataSpec(_Strict):
    """Where the data lives. ``format`` defaults to the file's extension."""

    path: str
    format: Literal["csv", "parquet"] | None = None


class EngineSpec(_Strict):
    """Which engine runs the statistics. Only ``source`` reads this."""

    backend: Literal["duckdb"] = "duckdb"


class TimeSpec(_Strict):
    """A date or timestamp column, and the period to summarise it by."""

    column: str
    period: Period = "auto"


class OutputSpec(_Strict):
    """Where the brief goes and in which forms."""

    dir: str = "out"
    formats: list[Literal["html", "pdf", "json"]] = Field(
        default_factory=lambda: ["html", "pdf", "json"]
    )
    paper: Literal["a4", "letter"] = "a4"

    @field_validator("formats")
    @classmethod
    def _not_empty(cls, value: list[str]) -> list[str]:
        if not value:
            raise ValueError("list at least one of html, pdf, json")
        return list(dict.fromkeys(value))


class BriefSpec(_Strict):
    """The validated config: what to read and what the brief is about."""

    title: str
    description: str | None = None
    data: DataSpec
    target: str
    groups: list[str] = Field(default_factory=list)
    predictors: list[str] = Field(default_factory=list)
    time: TimeSpec | None = None
    cross: list[tuple[str, str]] | None = None
    labels: dict[str, str] = Field(default_factory=dict)
    log_target: bool = False
    confidence: float = Field(default=0.95, gt=0.5, lt=1.0)
    min_cell: int = Field(default=10, ge=2)
    max_levels: int = Field(default=8, ge=2, le=20)
    engine: EngineSpec = Field(default_factory=EngineSpec)
    output: OutputSpec = Field(default_factory=OutputSpec)
    source_file: str = ""

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
        path = Path(self.data.path).expanduser()
        return path if path.is_absolute() else Path(os.path.normpath(self.base_dir / path))

    @property
    def data_format(self) -> str:
        if self.data.format:
            return self.data.format
        suffix = self.data_path.suffix.lower().lstrip(".")
        return "parquet" if suffix in {"parquet", "pq"} else "csv"

    @property
    def cross_pairs(self) -> list[tuple[str, str]]:
        """Pairs for two-way tables: as configured, else the first two groups."""
        if self.cross is not None:
            return list(self.cross)
        return [(self.groups[0], self.groups[1])] if len(self.groups) >= 2 else []

    def output_dir(self, override: str | Path | None = None) -> Path:
        if override is not None:
            return Path(override)
        path = Path(self.output.dir).expanduser()
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
