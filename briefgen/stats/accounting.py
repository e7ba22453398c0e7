"""Where every row went: read, used by each analysis, or left out and why.

Nothing is dropped silently: the brief prints these counts next to the analyses
that lost rows, and stats.json carries all of them. The per-analysis counts come
from each result's ``RowUsage``; only the raw-file counts are queried here.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import ibis.expr.types as ir

from briefgen.config import BriefSpec
from briefgen.rows.scope import RowScope, left_out_counts
from briefgen.source import is_missing
from briefgen.stats.core.analysis import one_row
from briefgen.stats.core.frame import AnalysisFrame
from briefgen.stats.core.usage import Dropped, RowUsage, usage

__all__ = ["Accounting", "Dropped", "count_rows"]


@dataclass(frozen=True, slots=True)
class Accounting:
    """Row counts for the whole brief.

    ``used`` maps each analysis (``target``, ``group:<name>``, ``fit:<name>``,
    ``cross:<a> × <b>``, ``trend``) to the rows it used; ``missing_by_column`` counts
    empty cells in every column of the source, named or not. With ``where`` or
    ``window`` in the config, ``rows_read`` counts the rows they select,
    ``rows_in_source`` all rows, and ``selection`` the rows each left out; without,
    ``rows_in_source`` equals ``rows_read`` and ``selection`` is empty.
    """

    rows_read: int
    target_missing: int
    target_not_finite: int
    used: dict[str, int]
    dropped: tuple[Dropped, ...]
    missing_by_column: dict[str, int]
    rows_in_source: int = 0
    selection: tuple[Dropped, ...] = ()
    covers: str | None = None


def _fit_usages(frame: AnalysisFrame, references: dict) -> list[RowUsage]:
    """Rows each predictor's fit used, from the shared reference pass."""
    return [
        usage(
            f"fit:{name}",
            int(references[f"n{i}"] or 0),
            f"relationship with {name}",
            f"no finite value in '{name}'",
            int(references[f"lacking{i}"] or 0),
        )
        for i, name in enumerate(frame.predictors.values())
    ]


def count_rows(
    raw: ir.Table,
    frame: AnalysisFrame,
    spec: BriefSpec,
    usages: Sequence[RowUsage],
    references: dict,
    scope: RowScope | None = None,
    unused: ir.Table | None = None,
    columns: Sequence[str] | None = None,
) -> Accounting:
    """One aggregate query over the raw table; the rest from the results' usages.

    With a row ``scope``, one more query over the source before selection counts the
    rows ``where`` and ``window`` left out. ``unused`` holds the same rows' columns the
    raw table leaves out (``source.Source``): one more query counts their empty cells,
    listed with the others in the data's order, ``columns``.
    """
    # A missing marker ("NA") in a target read as text is a missing value, like an empty cell.
    raw_counts = {"rows": raw.count(), "target_null": is_missing(raw, spec.target).sum()}
    raw_counts |= {f"missing_{i}": raw[name].isnull().sum() for i, name in enumerate(raw.columns)}
    raw_row = one_row(raw, raw_counts)
    rows_read = int(raw_row["rows"])
    missing = {name: int(raw_row[f"missing_{i}"]) for i, name in enumerate(raw.columns)}
    if unused is not None:
        counts = {
            f"missing_{i}": unused[name].isnull().sum() for i, name in enumerate(unused.columns)
        }
        unused_row = one_row(unused, counts)
        missing |= {name: int(unused_row[f"missing_{i}"]) for i, name in enumerate(unused.columns)}
    if columns is not None:
        missing = {name: missing[name] for name in columns}
    target_missing = int(raw_row["target_null"])
    all_usages = [*usages, *_fit_usages(frame, references)]
    with_target = next(u.rows_used for u in all_usages if u.analysis == "target")
    not_finite = rows_read - target_missing - with_target
    dropped = []
    if target_missing:
        dropped.append(Dropped("all analyses", f"no value in '{spec.target}'", target_missing))
    if not_finite:
        dropped.append(Dropped("all analyses", f"'{spec.target}' not a finite number", not_finite))
    # Same order as before: groups and fits first, then the two-way tables and the trend.
    order = {"target": 0, "group": 1, "fit": 2, "cross": 3, "trend": 4}
    ordered = sorted(all_usages, key=lambda u: order[u.analysis.partition(":")[0]])
    for u in ordered:
        dropped.extend(u.left_out)
    rows_in_source, selection = rows_read, ()
    if scope is not None:
        counts = one_row(scope.unselected, left_out_counts(scope))
        rows_in_source = int(counts["rows_in_source"])
        selection = tuple(
            Dropped("the brief", reason, int(counts[key] or 0))
            for key, reason in (
                ("outside_where", f"not where {scope.where_words}"),
                ("outside_window", f"outside {scope.window_words}"),
            )
            if key in counts
        )
    return Accounting(
        rows_read=rows_read,
        target_missing=target_missing,
        target_not_finite=not_finite,
        used={u.analysis: u.rows_used for u in ordered},
        dropped=tuple(dropped),
        missing_by_column=missing,
        rows_in_source=rows_in_source,
        selection=selection,
        covers=scope.words() if scope is not None else None,
    )
