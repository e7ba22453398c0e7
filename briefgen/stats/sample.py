"""A seeded, bounded sample of rows for scatter plots.

Rows are ranked by a hash of their values salted with the seed, and the first
``size`` are taken. Unlike engine sampling clauses, the result does not depend on
thread scheduling, so the same data and seed always give the same points.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import ibis
import ibis.expr.types as ir

SAMPLE_SIZE = 5000
SEED = 20240917


@dataclass(frozen=True, slots=True)
class Sample:
    """Up to ``size`` rows: the target, each predictor and each group, as parallel tuples.

    ``groups`` holds the shown level of each group variable, so a scatter can colour
    points by a group that confounds the relation.
    """

    rows_available: int
    y: tuple[float, ...]
    x: dict[str, tuple[float | None, ...]]
    groups: dict[str, tuple[str | None, ...]] = field(default_factory=dict)

    @property
    def size(self) -> int:
        return len(self.y)

    def points(self, predictor: str) -> int:
        """Sampled rows with both the target and ``predictor``: the points a scatter draws."""
        return sum(1 for x in self.x[predictor] if x is not None)


def draw_sample(
    frame: ir.Table,
    predictors: list[str],
    size: int = SAMPLE_SIZE,
    seed: int = SEED,
    groups: list[str] = (),
) -> Sample:
    """Seeded sample of rows with a target value; ``frame`` has ``y``, predictors and groups.

    Which rows are drawn depends on the target and predictors only, so adding a
    group column never changes the points.
    """
    usable = frame.filter(frame.y.notnull())
    available = int(usable.count().to_pyarrow().as_py())
    values = ["y", *predictors]
    # Identical rows would share a hash and be taken all together or not at all; numbering
    # the copies gives each its own key. Copies are numbered in the order of their groups,
    # so the numbering is the same on any number of engine threads (copies that also share
    # their groups are interchangeable).
    numbered = usable.mutate(
        _copy=ibis.row_number().over(
            group_by=[usable[c] for c in values], order_by=[usable[g] for g in groups]
        )
    )
    key = ibis.literal(str(seed))
    for name in values:
        key = key + "|" + numbered[name].cast("string").fill_null("")
    key = key + "|" + numbered["_copy"].cast("string")
    ranked = numbered.mutate(_order=key.hash())
    chosen = (
        ranked.order_by(["_order", "y", *predictors, *groups])
        .limit(size)
        .select("y", *predictors, *groups)
    )
    columns = chosen.to_pyarrow().to_pydict()
    return Sample(
        rows_available=available,
        y=tuple(float(v) for v in columns["y"]),
        x={p: tuple(None if v is None else float(v) for v in columns[p]) for p in predictors},
        groups={g: tuple(columns[g]) for g in groups},
    )
