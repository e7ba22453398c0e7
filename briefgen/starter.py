"""`briefgen init`: propose a starting config from a data file's columns.

The proposal is a guess from column roles (see profile.column_roles); the file it
writes says so, lists what it left out, and validates as it stands.
"""

from __future__ import annotations

import os
from pathlib import Path

import yaml

from briefgen.config import EngineSpec
from briefgen.errors import ConfigError
from briefgen.profile import MAX_GROUP_LEVELS, MAX_LEVELS, ColumnRole, column_roles
from briefgen.source import connect, read_table
from briefgen.workbook import read_workbook

MAX_GROUPS = 3
MAX_PREDICTORS = 3


def _data_format(path: Path) -> str:
    if path.suffix.lower() in {".xlsx", ".xlsm"}:
        return "excel"
    if path.suffix.lower() in {".json", ".jsonl", ".ndjson"}:
        return "json"
    return "parquet" if path.suffix.lower() in {".parquet", ".pq"} else "csv"


def propose(roles: tuple[ColumnRole, ...]) -> dict:
    """Target, groups, predictors and time from the roles; the target is a guess.

    Exports usually put the outcome last, after the columns that describe it. A
    measure with few distinct values (a year, a month, a size step) reads as an axis
    to relate the outcome to rather than the outcome, so the target is the last
    measure with more than ``MAX_GROUP_LEVELS`` values when there is one.
    """
    numeric = [r for r in roles if r.role == "measure"]
    categories = [r for r in roles if r.role == "category"]
    times = [r.name for r in roles if r.role == "time"]
    if not numeric:
        return {}
    outcomes = [r for r in numeric if r.distinct > MAX_GROUP_LEVELS] or numeric
    target = outcomes[-1].name
    measures = [r.name for r in numeric if r.name != target] + [target]
    # Fewer levels first: they make the clearest comparisons.
    groups = [r.name for r in sorted(categories, key=lambda r: r.distinct)][:MAX_GROUPS]
    proposal = {"target": target, "groups": groups, "predictors": measures[:-1][:MAX_PREDICTORS]}
    if times:
        proposal["time"] = times[0]
    return proposal


def _numeric_role_notes(roles: tuple[ColumnRole, ...], proposal: dict) -> list[str]:
    """Why a numeric column became a group or a predictor, where the choice is not obvious."""
    notes = []
    for r in roles:
        if r.numeric and r.name in proposal["groups"]:
            notes.append(
                f"# {r.name}: numbers with {r.distinct} values, proposed as a group (codes)."
            )
        elif r.numeric and r.name in proposal["predictors"] and r.distinct <= MAX_GROUP_LEVELS:
            notes.append(
                f"# {r.name}: numbers with {r.distinct} values, more than a group shows "
                f"(max_levels {MAX_LEVELS}), so proposed as a predictor."
            )
    return notes


def starter_text(data: Path, config: Path, title: str | None = None) -> str:
    """The YAML text of a proposed config for ``data``, written to sit at ``config``."""
    label = str(data)
    if _data_format(data) == "excel":  # the first sheet; data.sheet picks another
        table = read_workbook(data, None, label, connect(EngineSpec()))
    else:
        table = read_table(data, _data_format(data), label)
    roles = column_roles(table)
    proposal = propose(roles)
    if not proposal:
        raise ConfigError(
            f"{label}: no numeric column to report on; a brief needs a numeric target."
        )
    relative = os.path.relpath(data.resolve(), config.resolve().parent)
    body = {
        "title": title or data.stem.replace("_", " ").capitalize(),
        "data": {"path": relative},
        **proposal,
        "output": {"dir": "out", "formats": ["html", "pdf", "json"], "paper": "a4"},
    }
    used = {proposal["target"], *proposal["groups"], *proposal["predictors"], proposal.get("time")}
    skipped = [f"{r.name} ({r.role})" for r in roles if r.name not in used]
    header = [
        f"# Proposed by `briefgen init` from the columns of {data.name}.",
        "# Check the target first: it is the last numeric column with many values, a guess.",
    ]
    if skipped:
        header.append(f"# Not used: {', '.join(skipped)}.")
    header += _numeric_role_notes(roles, proposal)
    header.append("# Reference of every key: README, section 'Config reference'.")
    return (
        "\n".join(header)
        + "\n"
        + yaml.safe_dump(body, sort_keys=False, allow_unicode=True, default_flow_style=None)
    )


def write_starter(data: Path, config: Path, title: str | None = None, force: bool = False) -> Path:
    """Write the proposed config, refusing to overwrite an existing file unless ``force``."""
    if config.exists() and not force:
        raise ConfigError(f"{config}: already exists; choose another name or pass --force.")
    if not data.exists():
        raise ConfigError(f"{data}: data file not found; check the path.")
    text = starter_text(data, config, title)
    config.write_text(text, encoding="utf-8")
    return config
