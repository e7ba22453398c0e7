"""The README documents every field stats.json can hold and every config key.

The stats.json reference (after ``<!-- stats-json-reference -->``) has one table per
object, headed by the JSON paths where that object appears. The tests hold it to
the code in both directions: every field the dataclasses or a real demo build can
emit is in the table for its path, and every documented field still exists.
"""

from __future__ import annotations

import dataclasses
import json
import re
import types
import typing
from collections.abc import Iterator
from pathlib import Path

import pytest
from pydantic import BaseModel

from briefgen.cli import demo_config_path
from briefgen.config import BriefSpec, DataSpec, OutputSpec, TimeSpec, load_spec
from briefgen.deliver.gate import GateResult
from briefgen.history.change import SinceLastTime
from briefgen.history.record import RunRecord
from briefgen.pipeline import build_brief
from briefgen.stats import BriefStats

README = Path(__file__).resolve().parents[1] / "README.md"
STATS_MARKER = "<!-- stats-json-reference -->"
ROOT_HEADING = "Top level"
# BriefStats fields render_json writes in a shape of its own rather than as the dataclass
# (the scatter sample: counts only, not the sampled rows); checked from a real file instead.
RESHAPED_BY_RENDER = {"sample"}
# Objects in stats.json keyed by data (predictor names) rather than by documented names.
JSON_ONLY_MAPS = {"stats.sample.points_drawn"}
CODE_SPAN = re.compile(r"`([^`]+)`")


def stats_reference() -> str:
    """README text after the stats.json marker."""
    text = README.read_text(encoding="utf-8")
    assert STATS_MARKER in text, "README lost its stats.json reference marker"
    return text.split(STATS_MARKER, 1)[1]


def config_reference() -> str:
    """README text from '## Config reference' to the next second-level heading."""
    text = README.read_text(encoding="utf-8")
    start = text.index("## Config reference")
    end = text.find("\n## ", start + 1)
    return text[start : end if end != -1 else len(text)]


def reference_tables(section: str) -> dict[str, set[str]]:
    """JSON path ─► field names in the first column of the table under that path's heading."""
    tables: dict[str, set[str]] = {}
    for block in re.split(r"^### ", section, flags=re.MULTILINE)[1:]:
        heading, _, body = block.partition("\n")
        paths = CODE_SPAN.findall(heading) or ([""] if heading.strip() == ROOT_HEADING else [])
        assert paths, f"heading '### {heading}' names no JSON path"
        fields = set()
        for line in body.splitlines():
            if line.startswith("| `"):
                fields |= set(CODE_SPAN.findall(line.split("|")[1]))
        for path in paths:
            assert path not in tables, f"{path} is documented twice"
            tables[path] = fields
    return tables


def _from_hint(hint: object, path: str) -> Iterator[tuple[str, type]]:
    """Dataclasses (and dict-valued maps) a type hint can put at ``path``."""
    origin = typing.get_origin(hint)
    if isinstance(hint, type) and dataclasses.is_dataclass(hint):
        yield from dataclass_paths(hint, path)
    elif origin in (typing.Union, types.UnionType):
        for arg in typing.get_args(hint):
            yield from _from_hint(arg, path)
    elif origin in (tuple, list):
        for arg in typing.get_args(hint):
            if arg is not Ellipsis:
                yield from _from_hint(arg, f"{path}[]")
    elif origin is dict:
        yield path, dict


def dataclass_paths(cls: type, path: str) -> Iterator[tuple[str, type]]:
    """Every (JSON path, dataclass) reachable from ``cls``, following its type hints."""
    yield path, cls
    hints = typing.get_type_hints(cls)
    for field in dataclasses.fields(cls):
        if cls is BriefStats and field.name in RESHAPED_BY_RENDER:
            continue
        yield from _from_hint(hints[field.name], f"{path}.{field.name}")


def emitted_fields(cls: type) -> set[str]:
    names = {field.name for field in dataclasses.fields(cls)}
    return names - RESHAPED_BY_RENDER if cls is BriefStats else names


def json_objects(value: object, path: str, maps: set[str]) -> Iterator[tuple[str, dict]]:
    """Every JSON object with its path; keys of data-keyed maps (column names) are skipped."""
    if isinstance(value, dict) and path not in maps:
        yield path, value
        for key, child in value.items():
            yield from json_objects(child, f"{path}.{key}" if path else key, maps)
    elif isinstance(value, list):
        for item in value:
            yield from json_objects(item, f"{path}[]", maps)


# Top-level objects written from dataclasses besides the results; `since` and `checks` are
# null in the demo (no comparison, no gate), so their fields are checked from the classes.
RECORD_ROOTS = {"made_from": RunRecord, "since": SinceLastTime, "checks": GateResult}
STATS_PATHS = list(dataclass_paths(BriefStats, "stats")) + [
    item for root, cls in RECORD_ROOTS.items() for item in dataclass_paths(cls, root)
]
MAP_PATHS = {path for path, kind in STATS_PATHS if kind is dict} | JSON_ONLY_MAPS
OBJECT_PATHS = [(path, kind) for path, kind in STATS_PATHS if kind is not dict]


@pytest.fixture(scope="module")
def demo_json(tmp_path_factory: pytest.TempPathFactory) -> dict:
    """stats.json of the packaged demo, JSON only to keep the build fast."""
    spec = load_spec(demo_config_path())
    output = spec.output.model_copy(update={"formats": ["json"]})
    spec = spec.model_copy(update={"output": output})
    out = tmp_path_factory.mktemp("demo")
    build_brief(spec, out, built_on="2026-12-02")
    return json.loads((out / "stats.json").read_text(encoding="utf-8"))


def test_every_dataclass_field_is_documented_under_its_path() -> None:
    tables = reference_tables(stats_reference())
    for path, cls in OBJECT_PATHS:
        assert path in tables, f"README has no table for {path} ({cls.__name__})"
        missing = emitted_fields(cls) - tables[path]
        assert not missing, f"{path} ({cls.__name__}): undocumented fields {sorted(missing)}"


def test_demo_json_keys_are_documented(demo_json: dict) -> None:
    section = stats_reference()
    tables = reference_tables(section)
    spans = set(CODE_SPAN.findall(section))
    assert tables[""] == set(demo_json), "the top-level table differs from the file's keys"
    seen = set()
    for path, obj in json_objects(demo_json, "", MAP_PATHS):
        assert path in tables, f"stats.json holds an object at {path} that README lacks"
        missing = set(obj) - tables[path]
        assert not missing, f"{path}: undocumented keys {sorted(missing)}"
        seen |= set(obj)
    unnamed = sorted(key for key in seen if key not in spans)
    assert not unnamed, f"keys never written as a code span in the reference: {unnamed}"
    # The demo must reach the nested objects, or this test checks less than it claims.
    reached = {path for path, _ in json_objects(demo_json, "", MAP_PATHS)}
    expected = {"stats.groups[].comparison.rank_test", "stats.log_fits[].line", "stats.sample"}
    assert expected <= reached


def test_no_documented_field_or_path_is_stale(demo_json: dict) -> None:
    known: dict[str, set[str]] = {}
    for path, cls in OBJECT_PATHS:
        known.setdefault(path, set()).update(emitted_fields(cls))
    for path, obj in json_objects(demo_json, "", MAP_PATHS):
        known.setdefault(path, set()).update(obj)
    for path, fields in reference_tables(stats_reference()).items():
        assert path in known, (
            f"README documents {path or 'the top level'}, which is not in stats.json"
        )
        extra = fields - known[path]
        assert not extra, f"{path}: README documents fields that do not exist: {sorted(extra)}"


def _models(model: type[BaseModel]) -> Iterator[type[BaseModel]]:
    """``model`` and every pydantic model nested in its field annotations."""
    yield model
    for field in model.model_fields.values():
        stack = [field.annotation]
        while stack:
            hint = stack.pop()
            if isinstance(hint, type) and issubclass(hint, BaseModel):
                yield from _models(hint)
            stack.extend(typing.get_args(hint))


def test_every_config_key_is_documented() -> None:
    section = config_reference()
    fenced = re.findall(r"```.*?```", section, flags=re.DOTALL)
    code = "\n".join(fenced + CODE_SPAN.findall(re.sub(r"```.*?```", "", section, flags=re.DOTALL)))
    models = set(_models(BriefSpec))
    assert {BriefSpec, DataSpec, OutputSpec, TimeSpec} <= models
    for model in models:
        for name in model.model_fields:
            if name == "source_file":  # set by the loader, not by users
                continue
            pattern = rf"(?<!\w){re.escape(name)}(?!\w)"
            assert re.search(pattern, code), f"config key {model.__name__}.{name} not in README"


def test_readme_lists_every_exit_code():
    # A scheduler branches on these codes; each error class's code has a row in the table.
    from briefgen.errors import BriefError

    classes, found = [BriefError], set()
    while classes:
        kind = classes.pop()
        classes.extend(kind.__subclasses__())
        found.add(kind.exit_code)
    text = README.read_text(encoding="utf-8")
    missing = sorted(code for code in found - {1} if f"\n| {code} | " not in text)
    assert missing == []
