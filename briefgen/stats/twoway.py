"""Two-way tables: the target summarised in every cell of two group variables.

The engine does all per-row work. Cells and margins are computed by the core
``summarise`` over the key columns (part, row, column) of four tagged copies of the
rows, one call per copy, so they share its exact median-shifted two-pass mean and sd
and its type 7 quantiles; a margin's missing level is a null key, joined back
with IS NOT DISTINCT FROM.

The standout combination (``CrossStandout``) is found afterwards from the cell
summaries alone, so its cost depends on the number of cells, never on rows.

A pair whose cells show one variable nested in the other (``Nesting``: every level
of one lies within a single level of the other, as census divisions lie within
regions) is not crossed: each level has one filled cell, so there is no table to
read and no interaction to test. The cell counts, the table's first query, decide
this before the margins and the interaction test run.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

import ibis
import ibis.expr.types as ir
import numpy as np

from briefgen.stats.core.additive import additive_fit
from briefgen.stats.core.analysis import one_row
from briefgen.stats.core.shifted import deviations, t_quantile
from briefgen.stats.core.summary import Summary, summarise
from briefgen.stats.core.usage import RowUsage, usage
from briefgen.stats.interaction import InteractionTest, interaction_test, scale_for

if TYPE_CHECKING:
    from briefgen.config import BriefSpec
    from briefgen.stats.core.frame import AnalysisFrame

log = logging.getLogger(__name__)

# Common practice, no published source: below about 10 values a cell mean and its
# interval are too unstable to state as a finding.
MIN_CELL = 10

_CELL, _ROW, _COLUMN, _TOTAL = "c", "r", "k", "a"

# An excess this small against the spread of the cell means is rounding left by the
# additive fit, not a difference: it matters only for cells whose values are all equal
# (sd 0, so a zero-width interval).
_ROUNDING = 1e-9


@dataclass(frozen=True, slots=True)
class CrossCell:
    """The target within one cell (or margin) of a two-way table.

    ``row`` and ``column`` are the two levels; a row margin has ``column=None``, a
    column margin ``row=None`` and the grand total both. ``rows`` counts rows in
    the cell, ``n`` those with a target value. The interval is Student t; it is
    None when n < 2. ``too_small`` is n < the table's ``min_cell``. ``mean_shift``
    is mean − median at full precision (see ``Summary``), None when n = 0.
    """

    row: str | None
    column: str | None
    n: int
    mean: float | None
    median: float | None
    sd: float | None
    ci_low: float | None
    ci_high: float | None
    too_small: bool
    rows: int
    mean_shift: float | None = None


@dataclass(frozen=True, slots=True)
class CrossStandout:
    """The combination whose mean departs most from what its row and column predict.

    ``expected`` is the additive prediction for the cell: a row effect plus a column
    effect, fitted by least squares to all cell means weighted by their n (the same
    fit as ``y ~ row + column`` on the rows themselves). When every cell has the
    same n it is row margin mean + column margin mean − total mean; with unequal
    cells the margins would mix in the other variable's effect, the fit does not.
    ``excess`` = ``mean`` − ``expected``.

    Candidates are the trusted cells (not too small, n ≥ 2); ``cells_compared``
    counts them. Each one's interval for the excess is its own Student t interval
    of the mean shifted by −expected, at the Bonferroni level ``adjusted_confidence``
    = 1 − (1 − confidence) / cells_compared (Dunn 1961), so all of them hold
    together. It treats ``expected`` as fixed; under additivity with equal variances
    and normal errors the excess is a least-squares residual, whose variance
    σ²(1 − leverage)/n is below the σ²/n the interval assumes, so the simplification
    errs towards wide. With unequal variances that bound is not guaranteed.

    ``stands_out`` is True when the interval excludes 0. The cell reported is the
    one with the largest |excess| among those that stand out; when none does, the
    largest |excess| of all. Means are differenced as medians plus ``mean_shift``,
    so ``excess`` keeps its digits at large offsets.
    """

    row: str
    column: str
    n: int
    mean: float
    expected: float
    excess: float
    excess_ci_low: float
    excess_ci_high: float
    cells_compared: int
    adjusted_confidence: float
    stands_out: bool


@dataclass(frozen=True, slots=True)
class CrossTable:
    """A two-way table of the target over two group variables, with margins.

    Only rows with a level of both variables enter the table (margins included),
    so a row margin pools exactly the cells of its row. ``cells`` holds the level
    pairs that occur in the data, row by row; a pair with no rows at all is
    absent (``cell`` returns None), while a pair whose rows all lack a target
    value is present with ``n == 0`` and no mean. ``rows_without_level`` counts
    rows left out because one of the two levels is missing.

    Example::

        table = cross_table(frame.table, "g0", "g1", "region", "channel")
        table.cell("North", "Online").mean   # one cell
        table.cell("North", None).mean       # row margin
    """

    key: str
    row_variable: str
    column_variable: str
    rows: tuple[str, ...]
    columns: tuple[str, ...]
    cells: tuple[CrossCell, ...]
    min_cell: int
    row_margins: tuple[CrossCell, ...]
    column_margins: tuple[CrossCell, ...]
    total: CrossCell | None
    rows_without_level: int
    confidence: float
    standout: CrossStandout | None
    interaction: InteractionTest
    usage: RowUsage

    def cell(self, row: str | None, column: str | None) -> CrossCell | None:
        """The cell at ``row`` and ``column``; None for either gives its margin."""
        if row is None and column is None:
            return self.total
        if column is None:
            pool = self.row_margins
        elif row is None:
            pool = self.column_margins
        else:
            pool = self.cells
        return next((c for c in pool if c.row == row and c.column == column), None)


@dataclass(frozen=True, slots=True)
class NestedLevel:
    """One level of the inner variable, the outer level it lies within, and its n."""

    level: str
    within: str
    n: int


@dataclass(frozen=True, slots=True)
class Nesting:
    """A configured pair in which one group variable is nested in the other.

    Every level of ``inner`` that has rows with a target value (and a level of both
    variables) lies within exactly one level of ``outer``, and ``outer`` has at least
    two such levels and fewer than ``inner``. The differences by ``inner`` then
    contain those by ``outer`` by construction: ``outer`` is part of what ``inner``
    measures, not a confounder of it. The two-way table would have one filled cell
    per inner level, so its additive fit is exact and the interaction has no degree
    of freedom: no table, interaction test or claim is made for the pair.
    ``row_variable`` and ``column_variable`` are the pair as configured; ``levels``
    lists the inner levels in label order.
    """

    row_variable: str
    column_variable: str
    inner: str
    outer: str
    levels: tuple[NestedLevel, ...]


def nesting(
    counts: Mapping[tuple[str, str], int],
    row_name: str,
    col_name: str,
    folds: tuple[str | None, str | None] = (None, None),
) -> Nesting | None:
    """The nesting the cell counts show, or None when the pair is crossed.

    ``counts`` maps (row level, column level) to the rows with a target value in that
    cell; empty cells are ignored. ``folds`` are the "Other (k levels)" labels of the
    row and column variables: a level lying within the other variable's fold may span
    several of its real levels, so it is not taken as nested.
    """
    filled = [(pair, n) for pair, n in counts.items() if n > 0]
    for inner_at, inner, outer, outer_fold in (
        (0, row_name, col_name, folds[1]),
        (1, col_name, row_name, folds[0]),
    ):
        within: dict[str, set[str]] = {}
        sizes: dict[str, int] = {}
        for pair, n in filled:
            level, other = pair[inner_at], pair[1 - inner_at]
            within.setdefault(level, set()).add(other)
            sizes[level] = sizes.get(level, 0) + n
        outers = {other for others in within.values() for other in others}
        if (
            all(len(others) == 1 for others in within.values())
            and 2 <= len(outers) < len(within)
            and outer_fold not in outers
        ):
            levels = tuple(
                NestedLevel(level, next(iter(within[level])), sizes[level])
                for level in sorted(within)
            )
            return Nesting(row_name, col_name, inner, outer, levels)
    return None


def _parts(frame_table: ir.Table, row_column: str, col_column: str) -> list[ir.Table]:
    """Four copies of the rows with both levels: cells, row and column margins, total.

    ``part`` tags the copy; a margin's missing level is null, so the core summary's
    key columns (part, row, column) need no joined string keys. Each copy is summarised
    on its own: stacked into one query, the engine would hold every value four times at
    once for the quartiles (4 × 10M values at 10M rows), which a memory limit cannot
    spill.
    """
    table = frame_table
    both = table.filter(table[row_column].notnull() & table[col_column].notnull())
    row, column = both[row_column].cast("string"), both[col_column].cast("string")
    none = ibis.null().cast("string")
    parts = [
        both.select(part=ibis.literal(_CELL), row=row, column=column, y=both.y),
        both.select(part=ibis.literal(_ROW), row=row, column=none, y=both.y),
        both.select(part=ibis.literal(_COLUMN), row=none, column=column, y=both.y),
        both.select(part=ibis.literal(_TOTAL), row=none, column=none, y=both.y),
    ]
    return parts


def _cell(summary: Summary, row: str | None, column: str | None, min_cell: int) -> CrossCell:
    return CrossCell(
        row=row,
        column=column,
        n=summary.n,
        mean=summary.mean,
        median=summary.median,
        sd=summary.sd,
        ci_low=summary.ci_low,
        ci_high=summary.ci_high,
        too_small=summary.n < min_cell,
        rows=summary.rows,
        mean_shift=summary.mean_shift,
    )


def _rows_without_level(frame_table: ir.Table, row_column: str, col_column: str) -> tuple[int, int]:
    """Rows lacking one of the two levels: all of them, and those with a target value."""
    table = frame_table
    lacking = table[row_column].isnull() | table[col_column].isnull()
    row = one_row(table, {"all": lacking.sum(), "valued": (lacking & table.y.notnull()).sum()})
    return int(row["all"] or 0), int(row["valued"] or 0)


def _summaries(part: ir.Table, confidence: float) -> dict:
    return summarise(part, ["part", "row", "column"], confidence, list_outliers=False).summaries


def cell_summaries(
    frame_table: ir.Table, row_column: str, col_column: str, confidence: float = 0.95
) -> dict:
    """The cells' summaries alone, keyed (part, row, column): the table's first query."""
    return _summaries(_parts(frame_table, row_column, col_column)[0], confidence)


def cross_table(
    frame_table: ir.Table,
    row_column: str,
    col_column: str,
    row_name: str,
    col_name: str,
    confidence: float = 0.95,
    min_cell: int = MIN_CELL,
    scale: str = "mean",
    cells: dict | None = None,
) -> CrossTable:
    """Summarise ``y`` in every cell of ``row_column`` × ``col_column``, with margins.

    ``frame_table`` holds ``y`` (float, null when missing) and the two group
    columns as text; ``row_name`` and ``col_name`` are the user's names for them.
    Levels are listed in label order. ``scale`` is the scale of the interaction
    test (see ``briefgen.stats.interaction``). ``cells``, from ``cell_summaries``
    at the same confidence, spares the query of the cells when it has already run.
    """
    parts = _parts(frame_table, row_column, col_column)
    summaries = dict(cells) if cells is not None else _summaries(parts[0], confidence)
    for part in parts[1:]:
        summaries |= _summaries(part, confidence)
    cells, row_margins, column_margins, total = [], [], [], None
    for (tag, row, column), summary in summaries.items():
        cell = _cell(summary, row, column, min_cell)
        if tag == _CELL:
            cells.append(cell)
        elif tag == _ROW:
            row_margins.append(cell)
        elif tag == _COLUMN:
            column_margins.append(cell)
        else:
            total = cell
    rows = tuple(sorted(c.row for c in row_margins))
    columns = tuple(sorted(c.column for c in column_margins))
    row_index = {label: i for i, label in enumerate(rows)}
    column_index = {label: i for i, label in enumerate(columns)}
    cells.sort(key=lambda c: (row_index[c.row], column_index[c.column]))
    row_margins.sort(key=lambda c: row_index[c.row])
    column_margins.sort(key=lambda c: column_index[c.column])
    log.debug("two-way table %s × %s: %d cells", row_name, col_name, len(cells))
    without, without_valued = _rows_without_level(frame_table, row_column, col_column)
    used = total.n if total else 0
    pair = f"{row_name} × {col_name}"
    return CrossTable(
        key=f"cross-{row_name}-{col_name}",
        row_variable=row_name,
        column_variable=col_name,
        rows=rows,
        columns=columns,
        cells=tuple(cells),
        min_cell=min_cell,
        row_margins=tuple(row_margins),
        column_margins=tuple(column_margins),
        total=total,
        rows_without_level=without,
        confidence=confidence,
        standout=find_standout(cells, confidence),
        interaction=interaction_test(frame_table, row_column, col_column, scale),
        usage=usage(
            f"cross:{pair}",
            used,
            f"the table of {pair}",
            "no value in one of the two groups",
            without_valued,
        ),
    )


def find_standout(cells: list[CrossCell], confidence: float) -> CrossStandout | None:
    """The trusted cell that departs most from the additive row + column prediction.

    None when no cell is trusted or the additive fit leaves nothing to compare
    (for instance one row level only). See ``CrossStandout`` for the method.
    """
    with_data = [c for c in cells if c.mean is not None and c.n >= 1]
    trusted = [i for i, c in enumerate(with_data) if not c.too_small and c.sd is not None]
    if not trusted:
        return None
    rows = {label: i for i, label in enumerate(sorted({c.row for c in with_data}))}
    columns = {label: i for i, label in enumerate(sorted({c.column for c in with_data}))}
    reference = with_data[0].median if with_data[0].median is not None else with_data[0].mean
    means = np.array(deviations(with_data, reference))
    fitted = additive_fit(
        np.array([rows[c.row] for c in with_data]),
        np.array([columns[c.column] for c in with_data]),
        means,
        np.array([float(c.n) for c in with_data]),
    )
    if fitted is None:
        return None
    adjusted = 1.0 - (1.0 - confidence) / len(trusted)
    floor = _ROUNDING * float(means.max() - means.min())
    found = []
    for i in trusted:
        cell = with_data[i]
        excess = float(means[i] - fitted[i])
        quantile = t_quantile(adjusted, cell.n - 1)
        half = quantile * cell.sd / math.sqrt(cell.n)
        low, high = excess - half, excess + half
        found.append(
            CrossStandout(
                row=cell.row,
                column=cell.column,
                n=cell.n,
                mean=reference + float(means[i]),
                expected=reference + float(fitted[i]),
                excess=excess,
                excess_ci_low=low,
                excess_ci_high=high,
                cells_compared=len(trusted),
                adjusted_confidence=adjusted,
                stands_out=low > floor or high < -floor,
            )
        )
    return max(found, key=lambda s: (s.stands_out, abs(s.excess)))


@dataclass(frozen=True, slots=True)
class CrossAnalysis:
    """Two-way table of the target over one configured pair of group variables.

    ``scale`` is the interaction test's scale, decided from the group comparisons
    (see ``briefgen.stats.interaction.scale_for``), so ``plan`` takes them. A pair
    whose cells show nesting gives a ``Nesting`` instead of a table.
    """

    row: str
    column: str
    confidence: float
    min_cell: int
    scale: str = "mean"
    name: ClassVar[str] = "crosses"
    many: ClassVar[bool] = True
    result: ClassVar[type] = CrossTable

    @classmethod
    def plan(
        cls,
        spec: BriefSpec,
        frame: AnalysisFrame,
        skewed: frozenset[str] = frozenset(),
        minimum: float | None = None,
    ) -> tuple[CrossAnalysis, ...]:
        """One table per pair in ``spec.cross_pairs``; ``skewed`` names groups found strongly skewed."""
        return tuple(
            cls(a, b, spec.confidence, spec.min_cell, scale_for(bool({a, b} & skewed), minimum))
            for a, b in spec.cross_pairs
        )

    def __call__(self, frame: AnalysisFrame) -> CrossTable | Nesting:
        row_column, col_column = frame.group_column(self.row), frame.group_column(self.column)
        cells = cell_summaries(frame.table, row_column, col_column, self.confidence)
        shown = frame.shown or {}
        folds = tuple(
            shown[name].other_label if name in shown else None for name in (self.row, self.column)
        )
        counts = {(key[1], key[2]): summary.n for key, summary in cells.items()}
        nested = nesting(counts, self.row, self.column, folds)
        if nested is not None:
            log.debug("%s is nested in %s: no two-way table", nested.inner, nested.outer)
            return nested
        return cross_table(
            frame.table,
            row_column,
            col_column,
            self.row,
            self.column,
            self.confidence,
            self.min_cell,
            scale=self.scale,
            cells=cells,
        )
