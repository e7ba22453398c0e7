"""The analysis frame: the few columns the brief needs, typed once, in the engine.

Every analysis reads this narrow frame instead of the raw table, so casting, the
treatment of NaN and infinities, and the folding of many levels into "Other"
happen in one place. Columns get neutral internal names (``y``, ``x0``…, ``g0``…,
``t``) so no user column name can clash with the names the analyses use;
``AnalysisFrame`` maps them back.

Folding lives here, not in any one analysis, so that every analysis of a group
variable (summaries, boxes, Welch's tests, the rank test, the skewness check,
two-way cells, slopes by group) sees exactly the levels the brief shows.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import ibis
import ibis.expr.datatypes as dt
import ibis.expr.types as ir

from briefgen.config import BriefSpec
from briefgen.source import category, numeric

if TYPE_CHECKING:
    from briefgen.stats.target_kind import TargetKind

OTHER_PREFIX = "Other"


@dataclass(frozen=True, slots=True)
class ShownLevels:
    """Which levels of one group variable the brief shows.

    With more than ``max_levels`` levels, the ``max_levels − 1`` largest by rows are
    kept (ties by label) and the rest are relabelled ``other_label``; ``folded``
    lists the relabelled levels. Without folding ``other_label`` is None.
    """

    variable: str
    levels_in_data: int
    kept: tuple[str, ...]
    other_label: str | None
    folded: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class AnalysisFrame:
    """The narrow engine table and the user's names for its columns.

    ``table`` has ``y`` (target, float64, NaN/inf as null), ``x0``… (predictors,
    float64), ``g0``… (groups, text, already folded to the shown levels) and, when
    the spec sets a time column, ``t`` (timestamp). ``label`` names the data in
    messages. ``shown`` says, per group variable, which levels were kept.
    ``kind`` is the target's kind and scale (``stats.target_kind``), set once
    before the analyses run so each reads the same decision.
    """

    table: ir.Table
    target: str
    predictors: dict[str, str]
    groups: dict[str, str]
    time: str | None
    label: str = "data"
    shown: dict[str, ShownLevels] | None = None
    kind: TargetKind | None = None

    @property
    def binary(self) -> bool:
        return self.kind is not None and self.kind.kind == "binary"

    def predictor_column(self, name: str) -> str:
        return next(k for k, v in self.predictors.items() if v == name)

    def group_column(self, name: str) -> str:
        return next(k for k, v in self.groups.items() if v == name)

    def levels(self, group: str) -> ir.Table:
        """Rows with a level of ``group``: columns ``level`` and ``y`` (and the rest)."""
        column = self.group_column(group)
        table = self.table
        return table.filter(table[column].notnull()).mutate(level=table[column])


def shown_levels(table: ir.Table, column: str, variable: str, max_levels: int) -> ShownLevels:
    """One query for the level sizes of ``column``; the fold rule applied to them."""
    present = table.filter(table[column].notnull())
    sizes = present.group_by(column).aggregate(rows=present.count())
    counted = [(row[column], int(row["rows"])) for row in sizes.to_pyarrow().to_pylist()]
    by_size = sorted(counted, key=lambda item: (-item[1], item[0]))
    if len(by_size) <= max_levels:
        return ShownLevels(variable, len(by_size), tuple(sorted(c for c, _ in counted)), None, ())
    kept = tuple(level for level, _ in by_size[: max_levels - 1])
    folded = tuple(sorted(level for level, _ in by_size[max_levels - 1 :]))
    label = f"{OTHER_PREFIX} ({len(folded)} levels)"
    return ShownLevels(variable, len(by_size), kept, label, folded)


def _folded(table: ir.Table, shown: dict[str, ShownLevels], groups: dict[str, str]) -> ir.Table:
    """The table with each group column relabelled to its shown levels."""
    relabel = {}
    for key, name in groups.items():
        levels = shown[name]
        if levels.other_label is not None:
            column = table[key]
            relabel[key] = ibis.ifelse(
                column.isnull() | column.isin(list(levels.kept)), column, levels.other_label
            )
    return table.mutate(**relabel) if relabel else table


def build_frame(
    table: ir.Table, spec: BriefSpec, cache: bool = True, label: str = "data"
) -> AnalysisFrame:
    """Select, cast and (by default) cache the columns the spec names; fold many levels."""
    predictors = {f"x{i}": name for i, name in enumerate(spec.predictors)}
    groups = {f"g{i}": name for i, name in enumerate(spec.groups)}
    columns = {"y": numeric(table, spec.target)}
    columns |= {key: numeric(table, name) for key, name in predictors.items()}
    columns |= {key: category(table, name) for key, name in groups.items()}
    time = spec.time.column if spec.time else None
    if time:
        raw = table[time]
        # Text that does not parse as a date becomes missing (and is counted), not a crash.
        columns["t"] = raw if raw.type().is_timestamp() else raw.try_cast(dt.timestamp)
    narrow = table.select(**columns)
    if cache:
        # One scan of the file; every later pass reads the engine's columnar copy.
        narrow = narrow.cache()
    shown = {name: shown_levels(narrow, key, name, spec.max_levels) for key, name in groups.items()}
    return AnalysisFrame(
        table=_folded(narrow, shown, groups),
        target=spec.target,
        predictors=predictors,
        groups=groups,
        time=time,
        label=label,
        shown=shown,
    )
