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

import bisect
from dataclasses import dataclass, field

import ibis
import ibis.expr.datatypes as dt
import ibis.expr.types as ir
import pyarrow as pa

SAMPLE_SIZE = 5000
SEED = 20240917
# The Mersenne prime 2^31 - 1 and Park and Miller's (1988) multiplier 48271: every
# product of two residues stays below 2^62, so no engine overflows or wraps.
PRIME = 2_147_483_647
MULTIPLIER = 48_271
# Copy numbers of one value tuple are listed this many at a time: a few kilobytes a row.
COPY_BLOCK = 256


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
    usable = frame.filter(frame.y.notnull()).select(*values, *groups)
    available = int(usable.count().to_pyarrow().as_py())
    chosen = _chosen_copies(usable, values, size, seed).to_pyarrow().to_pylist()
    levels = _levels_of_copies(usable, values, groups, chosen) if groups else {}
    return Sample(
        rows_available=available,
        y=tuple(_number(row["y"]) for row in chosen),
        x={p: tuple(_number(row[p]) for row in chosen) for p in predictors},
        groups={
            g: tuple(_levels(levels[_tuple(row, values)], row["_copy"])[i] for row in chosen)
            for i, g in enumerate(groups)
        },
    )


def _chosen_copies(usable: ir.Table, values: list[str], size: int, seed: int) -> ir.Table:
    """The first ``size`` copies of value tuples in the seeded order: values and copy number.

    Identical rows would share a hash and be taken all together or not at all, so the
    n copies of a value tuple are numbered 0 … n−1 and each has its own place in the
    order. The copies are counted, not numbered row by row: the engine aggregates the
    distinct tuples (an aggregate spills to disk; a window numbering every row did not
    fit a 192MB limit at 100 million rows), hashes each tuple once, and expands its
    copy numbers arithmetically into a top-N that keeps only ``size`` rows.
    """
    tuples = usable.group_by(values).aggregate(_rows=usable.count())
    keyed = tuples.mutate(
        _key=_polynomial([part for name in values for part in _exact_parts(tuples[name])], seed)
    )
    # Copy numbers come in blocks of at most COPY_BLOCK: one list of a million copy numbers
    # (a 0/1 target with no predictor has two tuples) would not fit the engine's memory.
    blocks = keyed.mutate(
        _block=ibis.range(0, (keyed["_rows"] + (COPY_BLOCK - 1)) // COPY_BLOCK)
    ).unnest("_block")
    start = blocks["_block"] * COPY_BLOCK
    stop = ibis.least(blocks["_rows"], start + COPY_BLOCK)
    copies = blocks.mutate(_copy=ibis.range(start, stop)).unnest("_copy")
    ranked = copies.mutate(_order=_scrambled(copies["_key"], copies["_copy"]))
    return ranked.order_by(["_order", *values, "_copy"]).limit(size).select(*values, "_copy")


def _levels_of_copies(
    usable: ir.Table, values: list[str], groups: list[str], chosen: list[dict]
) -> dict[tuple, list[tuple[int, tuple]]]:
    """Per chosen value tuple, its copies' group levels as runs: (copies up to here, levels).

    Copy k of a value tuple is its k-th row when its rows are sorted by their levels
    (missing last), so the levels drawn are the same on any engine and any number of
    threads; copies that share their levels too are interchangeable. Only the rows of
    the chosen tuples are read, and counted once per distinct set of levels.
    """
    schema = pa.schema([(f"_k{i}", pa.float64()) for i in range(len(values))])
    columns = {f"_k{i}": [row[v] for row in chosen] for i, v in enumerate(values)}
    wanted = ibis.memtable(pa.table(columns, schema=schema)).distinct()
    same = [usable[v].identical_to(wanted[f"_k{i}"]) for i, v in enumerate(values)]
    rows = usable.semi_join(wanted, same)
    counted = rows.group_by([*values, *groups]).aggregate(_n=rows.count()).to_pyarrow()
    runs: dict[tuple, list[tuple[int, tuple]]] = {}
    for row in sorted(counted.to_pylist(), key=lambda r: [(r[g] is None, r[g]) for g in groups]):
        run = runs.setdefault(_tuple(row, values), [])
        run.append(((run[-1][0] if run else 0) + row["_n"], tuple(row[g] for g in groups)))
    return runs


def _levels(runs: list[tuple[int, tuple]], copy: int) -> tuple:
    """The levels of copy number ``copy`` (from 0), found in its value tuple's runs."""
    return runs[bisect.bisect_right([end for end, _ in runs], copy)][1]


def _number(value: float | None) -> float | None:
    """A drawn value as the engine groups it: -0.0 and 0.0 are one value.

    The engine keeps whichever of the two it met first, which depends on its threads;
    a sum with 0.0 gives 0.0 for both.
    """
    return None if value is None else value + 0.0


def _tuple(row: dict, values: list[str]) -> tuple:
    """A row's drawn values as a dictionary key."""
    return tuple(_number(row[v]) for v in values)


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
    """Integers below 2^31 combined into one residue modulo ``PRIME``, salted with ``seed``.

    The value of Horner's rule, h = (h·M + part) mod P from h = (part₀ + seed) mod P, written
    as Σ partᵢ·M^(N−1−i) mod P with the powers computed here and the sum added as a balanced
    tree. Horner's nesting grows with every part (seven per column), and its SQL ran past
    the compiler's recursion limit at eight predictors; the tree is log₂ N deep. Each term
    is below P < 2^31, so any sum of up to 2^32 terms stays inside 64 bits.
    """
    last = len(parts) - 1
    # Start from a column, not a literal: engines type a literal as 32-bit and would overflow.
    first = (parts[0] + seed % PRIME) % PRIME
    terms = [
        (part * pow(MULTIPLIER, last - i, PRIME)) % PRIME
        for i, part in enumerate([first, *parts[1:]])
    ]
    while len(terms) > 1:
        paired = [a + b for a, b in zip(terms[::2], terms[1::2], strict=False)]
        terms = paired + (terms[-1:] if len(terms) % 2 else [])
    return terms[0] % PRIME


def _scrambled(key: ir.IntegerValue, copy: ir.IntegerValue) -> ir.IntegerValue:
    """The key and copy number, with three squarings to break the polynomial's linearity.

    Without them the copies of one row would get consecutive residues and be drawn
    all together or not at all.
    """
    mixed = (key * MULTIPLIER + copy.cast(dt.int64)) % PRIME
    for _ in range(3):
        mixed = (mixed * mixed + MULTIPLIER) % PRIME
    return mixed
