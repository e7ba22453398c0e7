"""The analysis frame: the few columns the brief needs, typed once, in the engine.

Every analysis reads this narrow frame instead of the raw table, so casting and
the treatment of NaN and infinities happen in one place. Columns get neutral
internal names (``y``, ``x0``…, ``g0``…, ``t``) so no user column name can clash
with the names the analyses use; ``AnalysisFrame`` maps them back.
"""

from __future__ import annotations

from dataclasses import dataclass

import ibis.expr.datatypes as dt
import ibis.expr.types as ir

from briefgen.config import BriefSpec
from briefgen.source import category, numeric


@dataclass(frozen=True, slots=True)
class AnalysisFrame:
    """The narrow engine table and the user's names for its columns.

    ``table`` has ``y`` (target, float64, NaN/inf as null), ``x0``… (predictors,
    float64), ``g0``… (groups, text) and, when the spec sets a time column, ``t``
    (timestamp). ``bad_target`` counts rows whose raw target was NaN or infinite.
    """

    table: ir.Table
    target: str
    predictors: dict[str, str]
    groups: dict[str, str]
    time: str | None

    def predictor_column(self, name: str) -> str:
        return next(k for k, v in self.predictors.items() if v == name)

    def group_column(self, name: str) -> str:
        return next(k for k, v in self.groups.items() if v == name)

    def levels(self, group: str) -> ir.Table:
        """Rows with a level of ``group``: columns ``level`` and ``y`` (and the rest)."""
        column = self.group_column(group)
        table = self.table
        return table.filter(table[column].notnull()).mutate(level=table[column])


def build_frame(table: ir.Table, spec: BriefSpec, cache: bool = True) -> AnalysisFrame:
    """Select, cast and (by default) cache the columns the spec names."""
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
    return AnalysisFrame(
        table=narrow, target=spec.target, predictors=predictors, groups=groups, time=time
    )
