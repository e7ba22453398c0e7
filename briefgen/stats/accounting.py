"""Where every row went: read, used by each analysis, or left out and why.

Nothing is dropped silently: the brief prints these counts next to the analyses
that lost rows, and stats.json carries all of them.
"""

from __future__ import annotations

from dataclasses import dataclass

import ibis.expr.types as ir

from briefgen.config import BriefSpec
from briefgen.stats.frame import AnalysisFrame


@dataclass(frozen=True, slots=True)
class Dropped:
    """Rows one analysis could not use, and the reason, in words a reader follows."""

    analysis: str
    reason: str
    rows: int


@dataclass(frozen=True, slots=True)
class Accounting:
    """Row counts for the whole brief.

    ``used`` maps each analysis (``target``, ``group:<name>``, ``fit:<name>``) to
    the rows it used; ``missing_by_column`` counts empty cells in every column of
    the source, named or not.
    """

    rows_read: int
    target_missing: int
    target_not_finite: int
    used: dict[str, int]
    dropped: tuple[Dropped, ...]
    missing_by_column: dict[str, int]


def count_rows(raw: ir.Table, frame: AnalysisFrame, spec: BriefSpec) -> Accounting:
    """One aggregate query over the raw table and one over the analysis frame."""
    target_raw = raw[spec.target]
    raw_counts = {"rows": raw.count(), "target_null": target_raw.isnull().sum()}
    raw_counts |= {f"missing_{i}": raw[name].isnull().sum() for i, name in enumerate(raw.columns)}
    raw_row = raw.aggregate(**raw_counts).to_pyarrow().to_pylist()[0]

    table = frame.table
    has_y = table.y.notnull()
    counts = {"target_used": has_y.sum()}
    for key in frame.groups:
        counts[f"{key}_used"] = (has_y & table[key].notnull()).sum()
        counts[f"{key}_null"] = (has_y & table[key].isnull()).sum()
    for key in frame.predictors:
        counts[f"{key}_used"] = (has_y & table[key].notnull()).sum()
        counts[f"{key}_null"] = (has_y & table[key].isnull()).sum()
    row = table.aggregate(**counts).to_pyarrow().to_pylist()[0]

    rows_read = int(raw_row["rows"])
    target_missing = int(raw_row["target_null"])
    not_finite = rows_read - target_missing - int(row["target_used"])
    used = {"target": int(row["target_used"])}
    dropped = []
    if target_missing:
        dropped.append(Dropped("all analyses", f"no value in '{spec.target}'", target_missing))
    if not_finite:
        dropped.append(Dropped("all analyses", f"'{spec.target}' not a finite number", not_finite))
    for key, name in frame.groups.items():
        used[f"group:{name}"] = int(row[f"{key}_used"])
        if row[f"{key}_null"]:
            dropped.append(
                Dropped(f"comparison by {name}", f"no value in '{name}'", int(row[f"{key}_null"]))
            )
    for key, name in frame.predictors.items():
        used[f"fit:{name}"] = int(row[f"{key}_used"])
        if row[f"{key}_null"]:
            reason = f"no finite value in '{name}'"
            dropped.append(Dropped(f"relationship with {name}", reason, int(row[f"{key}_null"])))
    missing = {name: int(raw_row[f"missing_{i}"]) for i, name in enumerate(raw.columns)}
    return Accounting(
        rows_read=rows_read,
        target_missing=target_missing,
        target_not_finite=not_finite,
        used=used,
        dropped=tuple(dropped),
        missing_by_column=missing,
    )
