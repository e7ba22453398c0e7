"""A seeded, bounded sample of rows for scatter plots.

Rows are ranked by a hash of their values salted with the seed, and the first
``size`` are taken. Unlike engine sampling clauses, the result does not depend on
thread scheduling, so the same data and seed always give the same points.

The hash is plain arithmetic that every engine computes alike: engines' own hash
functions differ (DuckDB's and Spark's give other numbers), and so does their
text for a double. Each value is read as its sign and its remainders modulo a
prime at a few power-of-two scales (all exact in IEEE arithmetic), and the
integers are mixed modulo a prime small enough that no product leaves 64 bits.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import ibis
import ibis.expr.datatypes as dt
import ibis.expr.types as ir

SAMPLE_SIZE = 5000
SEED = 20240917
# The Mersenne prime 2^31 - 1 and Park and Miller's (1988) multiplier 48271: every
# product of two residues stays below 2^62, so no engine overflows or wraps.
PRIME = 2_147_483_647
MULTIPLIER = 48_271


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
    values = ["y", *predictors]
    # Only the columns drawn: the window below carries every column it is given.
    usable = frame.filter(frame.y.notnull()).select(*values, *groups)
    available = int(usable.count().to_pyarrow().as_py())
    # Identical rows would share a hash and be taken all together or not at all; numbering
    # the copies gives each its own key. Copies are numbered in the order of their groups,
    # so the numbering is the same on any number of engine threads (copies that also share
    # their groups are interchangeable). The row number is a window function, so Ibis keeps
    # this projection apart from the next: the squarings then repeat a column name, not the
    # whole key expression.
    numbered = usable.mutate(
        _copy=ibis.row_number().over(
            group_by=[usable[c] for c in values], order_by=[usable[g] for g in groups]
        ),
        _key=_polynomial([part for name in values for part in _exact_parts(usable[name])], seed),
    )
    ranked = numbered.mutate(_order=_scrambled(numbered["_key"], numbered["_copy"]))
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


# A double's fraction is read in chunks of 31 bits: five reach 2^-155, every bit of any
# value from 2^-102 up (a double has 53 significant bits).
CHUNK_BITS = 31
FRACTION_CHUNKS = 5


def _exact_parts(value: ir.FloatingValue) -> list[ir.IntegerValue]:
    """A double as integers below 2^31 that every engine computes alike; missing is its own code.

    The whole part is taken modulo the prime; the fraction f = |v| − ⌊|v|⌋ is read 31
    bits at a time: the chunk is ⌊f·2^31⌋ and f·2^31 − chunk is read next. Every step
    is exact in IEEE arithmetic (a floor, a power-of-two scaling, a remainder, the
    difference of a number and its floor), so engines agree to the bit. An earlier
    form took |v|·2^100 and |v|·2^200 modulo the prime; a remainder's cost grows with
    the exponents between its operands, and those two took 7 s of DuckDB's time at
    10M rows.
    """
    size = value.abs()
    kind = ibis.ifelse(value.isnull(), 2, ibis.ifelse(value < 0, 1, 0)).cast(dt.int64)
    # Ibis's floor is an integer, so values from 2^62 up (whole numbers, no fraction) are
    # kept out of it and taken modulo the prime as doubles.
    wide = size >= 2.0**62
    narrow = ibis.ifelse(wide, 0.0, size)
    whole = narrow.floor()
    parts = [kind, ibis.ifelse(wide, (size % PRIME).floor(), whole % PRIME).fill_null(0)]
    rest = narrow - whole.cast(dt.float64)
    for _ in range(FRACTION_CHUNKS):
        scaled = rest * 2.0**CHUNK_BITS
        chunk = scaled.floor()
        parts.append(chunk.fill_null(0))
        rest = scaled - chunk.cast(dt.float64)
    return parts


def _polynomial(parts: list[ir.IntegerValue], seed: int) -> ir.IntegerValue:
    """Integers below 2^31 combined into one residue modulo ``PRIME``, salted with ``seed``."""
    # Start from a column, not a literal: engines type a literal as 32-bit and would overflow.
    mixed = (parts[0] + seed % PRIME) % PRIME
    for part in parts[1:]:
        mixed = (mixed * MULTIPLIER + part) % PRIME
    return mixed


def _scrambled(key: ir.IntegerValue, copy: ir.IntegerValue) -> ir.IntegerValue:
    """The key and copy number, with three squarings to break the polynomial's linearity.

    Without them the copies of one row would get consecutive residues and be drawn
    all together or not at all.
    """
    mixed = (key * MULTIPLIER + copy.cast(dt.int64)) % PRIME
    for _ in range(3):
        mixed = (mixed * mixed + MULTIPLIER) % PRIME
    return mixed
