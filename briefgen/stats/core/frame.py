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
from briefgen.datatext import engine_clean, needs_cleaning
from briefgen.figures.rules import fold_levels
from briefgen.source import category, materialize, numeric, time_values
from briefgen.stats.core.analysis import one_row
from briefgen.stats.core.exact import FixedPoint, as_integer, exact_sum, value_of

if TYPE_CHECKING:
    from briefgen.stats.target_kind import TargetKind

OTHER_PREFIX = "Other"


@dataclass(frozen=True, slots=True)
class ShownLevels:
    """Which levels of one group variable the brief shows, and what was folded.

    With more than ``max_levels`` levels, ``max_levels − 1`` levels are kept by
    the rule in ``shown_levels`` and the rest are relabelled ``other_label``;
    ``folded`` lists the relabelled levels (largest first, as ``shown_levels``
    ranks them) and ``folded_rows`` counts their rows with a target value, out of
    ``rows`` such rows with a level: the rows every analysis uses, so these counts
    match the n the tables and charts show. Without folding ``other_label`` is None. ``numeric`` is True when the
    column holds numbers in the data (codes, or a measure used as a group).
    """

    variable: str
    levels_in_data: int
    kept: tuple[str, ...]
    other_label: str | None
    folded: tuple[str, ...]
    rows: int = 0
    folded_rows: int = 0
    numeric: bool = False

    def is_fold(self, level: str | None) -> bool:
        """True for the "Other (k levels)" label, which stands for several levels at once."""
        return self.other_label is not None and level == self.other_label

    @property
    def levels(self) -> tuple[str, ...]:
        """Every level in the data, kept or folded."""
        return self.kept + self.folded

    @property
    def folded_share(self) -> float | None:
        """Share of the rows with a level that lie in the folded levels; None without rows."""
        return self.folded_rows / self.rows if self.rows else None


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


def shown_levels(
    table: ir.Table, column: str, variable: str, max_levels: int, numeric: bool = False
) -> ShownLevels:
    """The levels the brief shows: the largest, ties broken by how far their mean lies out.

    The rule, with more than ``max_levels`` levels: keep the ``max_levels − 1``
    levels with the most rows that have a target value (the rows the analyses use,
    so the sizes are the n the brief shows). Levels of equal size are ranked by the distance of
    their mean target from the overall mean, larger first, so that among equally
    large levels the ones that depart most stay in view; a level without any target
    value ranks last among its size. Only levels equal in both size and distance
    are ordered by name, so the name never decides a choice the data could make.
    """
    present = table.filter(table[column].notnull())
    sizes = present.group_by(column).aggregate(rows=present.y.count())
    counted = [(row[column], int(row["rows"])) for row in sizes.to_pyarrow().to_pylist()]
    rows = sum(n for _, n in counted)
    if len(counted) <= max_levels:
        kept = tuple(sorted(c for c, _ in counted))
        return ShownLevels(variable, len(counted), kept, None, (), rows, 0, numeric)
    distance = _distances_from_mean(present, column)
    ranked = sorted(counted, key=lambda item: (-item[1], -distance.get(item[0], -1.0), item[0]))
    kept, folded = fold_levels([level for level, _ in ranked], max_levels)
    folded_rows = sum(n for _, n in ranked[max_levels - 1 :])
    label = f"{OTHER_PREFIX} ({len(folded)} levels)"
    return ShownLevels(variable, len(counted), kept, label, folded, rows, folded_rows, numeric)


def _distances_from_mean(present: ir.Table, column: str) -> dict[str, float]:
    """|level mean − overall mean| of the target per level with a target value.

    The values are shifted by the smallest target value (a data value) before
    averaging, so means near an offset of 1e12 keep the digits that tell levels apart,
    and summed as exact fixed-point integers (``exact``), so a tie stays a tie on any
    number of engine threads.
    """
    with_value = present.filter(present.y.notnull())
    extent = one_row(
        with_value, {"low": with_value.y.min(), "high": with_value.y.max(), "n": with_value.count()}
    )
    reference = extent["low"]
    if reference is None:
        return {}
    scale = FixedPoint.fit(extent["high"] - reference, int(extent["n"]), degree=1)
    shifted = with_value.mutate(
        d=scale.quantise(with_value.y - ibis.literal(reference, dt.float64))
    )
    sums = shifted.group_by(column).aggregate(n=shifted.count(), total=exact_sum(shifted.d))
    rows = sums.to_pyarrow().to_pylist()
    total = sum(int(r["n"]) for r in rows)
    overall = value_of(sum(as_integer(r["total"]) for r in rows), scale) / total
    return {
        r[column]: float(abs(value_of(r["total"], scale) / int(r["n"]) - overall)) for r in rows
    }


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
    """Select, cast and (by default) cache the columns the spec names; clean and fold levels."""
    predictors = {f"x{i}": name for i, name in enumerate(spec.predictors)}
    groups = {f"g{i}": name for i, name in enumerate(spec.groups)}
    columns = {"y": numeric(table, spec.target)}
    columns |= {key: numeric(table, name) for key, name in predictors.items()}
    columns |= {key: category(table, name, clean=False) for key, name in groups.items()}
    time = spec.time.column if spec.time else None
    if time:
        # Text that does not parse as a date becomes missing (and is counted), not a crash;
        # whole numbers from 1000 to 9999 are years.
        columns["t"] = time_values(table, time)
    narrow = table.select(**columns)
    if cache:
        # One scan of the file; every later pass reads the engine's columnar copy.
        narrow = materialize(narrow)
    schema = table.schema()

    def levels_of(narrow: ir.Table, keys: dict[str, str]) -> dict[str, ShownLevels]:
        return {
            name: shown_levels(narrow, key, name, spec.max_levels, schema[name].is_numeric())
            for key, name in keys.items()
        }

    levels = levels_of(narrow, groups)
    # Text levels are cleaned (datatext.engine_clean) only in a column that holds a
    # character to clean, as its counted levels show: cleaning every column in the
    # typing scan cost 0.9 s of 2.8 s at 10M rows (a CASE copies every string), and few
    # columns hold such a character. A column that does is cleaned in a second copy.
    dirty = {
        key: name
        for key, name in groups.items()
        if any(needs_cleaning(level) for level in levels[name].levels)
    }
    if dirty:
        narrow = narrow.mutate(**{key: engine_clean(narrow[key]) for key in dirty})
        if cache:
            narrow = materialize(narrow)
        levels |= levels_of(narrow, dirty)
    return AnalysisFrame(
        table=_folded(narrow, levels, groups),
        target=spec.target,
        predictors=predictors,
        groups=groups,
        time=time,
        label=label,
        shown=levels,
    )
