"""Exact type 7 quantiles in bounded memory, for tables larger than an engine's own can take.

An engine's exact quantile holds every value of its column in memory: DuckDB keeps 8
bytes a row in a state it cannot spill, so at 100M rows one column needs 800 MB per
quantile call and a brief's medians of the target and two predictors did not fit in
a 1 GB limit. Above a threshold (``narrow_from``) the analyses ask this module instead.

Narrowing: the values of each key are counted in 4,096 equal buckets between their
smallest and largest value. Cumulative counts tell which bucket holds the k-th value.
A bucket holding one distinct value gives it at once; a small one is fetched and
sorted; a large one is cut into 4,096 buckets again. The bucket of a value is
⌊(v/2 − lo/2)·scale⌋, monotone in v under IEEE rounding, so the rows of a bucket are
exactly those between its smallest and largest value, and each round needs only the
counts, the smallest and the largest value of each bucket: memory is a few thousand
rows per key, whatever the table's size. Each round is one engine query for every key
and every quantile at once. ``narrow_from`` sets the threshold from DuckDB's memory
limit (192MB by default: from 1.9M target values with two predictors).

The quantile is DuckDB's type 7 (Hyndman and Fan 1996, definition 7): with h = (n−1)p,
k = ⌊h⌋ and d = h − k, x₍ₖ₎·(1 − d) + x₍ₖ₊₁₎·d in DuckDB's own arithmetic (``type7``), so a brief
gives the same digits on either side of the threshold (tested against DuckDB's
``quantile_cont`` and numpy's ``linear`` method).
"""

from __future__ import annotations

import math
import re
from collections import defaultdict
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from contextvars import ContextVar
from fractions import Fraction

import ibis
import ibis.expr.types as ir
import numpy as np
import pyarrow as pa

# Without a memory limit to go by (Spark), the analyses narrow above this many values.
NARROW_FROM = 20_000_000
# With DuckDB's limit: the engine's own quantiles run while each value fits the limit
# at this many bytes per quantile state held at once (8 bytes a value in a vector that
# may double), plus the rest of the query beside them. The widest query held the
# medians of the target and of each predictor: two states per predictor. Measured at
# 10M rows and two predictors (100 bytes a value): a 512 MB limit ran out, 1 GB did not.
# The fits now shift by the middle of the range and take no median, so this is cautious:
# measured again at 10M rows, two predictors, without narrowing, 384MB completes and
# 320MB stops (about 35 bytes a value). Kept until the margin is measured on other
# shapes (more predictors, many levels).
BYTES_PER_STATE = 16
BYTES_BESIDE = 36
BUCKETS = 4096
# A bucket with at most this many values is fetched and sorted in Python (0.4 MB each).
FETCH_UP_TO = 50_000


_narrowing: ContextVar[bool] = ContextVar("briefgen_narrowing", default=False)


def narrowing() -> bool:
    """True while the analyses should take quantiles by narrowing (see ``quantiles_for``)."""
    return _narrowing.get()


def narrow_from(memory_limit: str | None, predictors: int = 2) -> int:
    """Target values from which to narrow, for an engine memory limit in DuckDB's syntax."""
    if memory_limit is None:
        return NARROW_FROM
    found = re.fullmatch(r"\s*(\d+(?:\.\d+)?)\s*([kmgt])(i?)b\s*", memory_limit.lower())
    if found is None:
        return NARROW_FROM
    number, unit, binary = found.groups()
    size = float(number) * (1024 if binary else 1000) ** ("kmgt".index(unit) + 1)
    states = max(3, 2 * predictors)  # three quartiles of the target, or the medians
    return int(size // (BYTES_PER_STATE * states + BYTES_BESIDE))


@contextmanager
def quantiles_for(
    values: int, memory_limit: str | None = None, predictors: int = 2
) -> Iterator[None]:
    """Within this block, analyses of a frame with ``values`` target values narrow when large."""
    token = _narrowing.set(values >= narrow_from(memory_limit, predictors))
    try:
        yield
    finally:
        _narrowing.reset(token)


def type7(sorted_at: dict[int, float], n: int, p: float) -> float:
    """The type 7 quantile from the order statistics it needs, in DuckDB's arithmetic."""
    h = (n - 1) * p
    k = math.floor(h)
    d = h - k
    if d == 0 or k + 1 >= n:
        return sorted_at[k]
    low, high = sorted_at[k], sorted_at[k + 1]
    # DuckDB's binary computes low·(1 − d) + high·d as a fused multiply-add: high·d and
    # 1 − d are rounded, low·(1 − d) is not, the sum is rounded once. Measured: this
    # matched quantile_cont on 1,610 of 1,610 random samples; the plain expression
    # missed 212 by one unit in the last place.
    return float(Fraction(low) * Fraction(1.0 - d) + Fraction(high * d))


def _ranks(n: int, probabilities: Sequence[float]) -> set[int]:
    """The 0-based order statistics the type 7 quantiles need."""
    needed = set()
    for p in probabilities:
        h = (n - 1) * p
        k = math.floor(h)
        needed.add(k)
        if h > k and k + 1 < n:
            needed.add(k + 1)
    return needed


def narrowed_quantiles(
    table: ir.Table,
    column: str,
    probabilities: Sequence[float],
    keys: Sequence[str] = (),
    bounds: dict[tuple, tuple[int, float, float]] | None = None,
) -> dict[tuple, tuple[float, ...]]:
    """Type 7 quantiles of ``column`` per combination of ``keys`` (() for the whole table).

    Returns {key values: quantiles in the order of ``probabilities``} for every key
    with a value; null values of ``column`` are left out, null keys are a key.
    ``bounds``: {key values: (count, smallest, largest) of the column's values}, when
    the caller has counted them already (every caller has: it saves a pass over the
    rows); a key left out of it, or counted 0, has no value.
    """
    keys = list(keys)
    rows = table.filter(table[column].notnull())
    if bounds is None:
        bounds = _bounds(rows, column, keys)
    # target (key, rank) -> [lo, hi, rank within the interval]
    pending: dict[tuple[tuple, int], list] = {}
    sizes = {}
    for key, (n, lo, hi) in bounds.items():
        if not n:
            continue
        sizes[key] = int(n)
        for rank in _ranks(sizes[key], probabilities):
            pending[(key, rank)] = [lo, hi, rank]
    known: dict[tuple[tuple, int], float] = {}
    while pending:
        fetch = {}
        for target, (lo, hi, _) in list(pending.items()):
            if lo == hi:
                known[target] = lo
                del pending[target]
        if not pending:
            break
        intervals = sorted({(key, lo, hi) for (key, _), (lo, hi, _) in pending.items()}, key=repr)
        counted = dict(zip(intervals, _bucket_counts(rows, column, keys, intervals), strict=True))
        for (key, rank), (lo, hi, within) in list(pending.items()):
            count, low, high, before = _holding(counted[(key, lo, hi)], within)
            within -= before
            if low == high:
                known[(key, rank)] = low
                del pending[(key, rank)]
            elif count <= FETCH_UP_TO:
                fetch[(key, rank)] = (low, high, within)
                del pending[(key, rank)]
            else:
                pending[(key, rank)] = [low, high, within]
        if fetch:
            known |= _fetched(rows, column, keys, fetch)
    at = defaultdict(dict)
    for (key, rank), value in known.items():
        at[key][rank] = value
    return {key: tuple(type7(at[key], n, p) for p in probabilities) for key, n in sizes.items()}


def _bounds(rows: ir.Table, column: str, keys: list[str]) -> dict[tuple, tuple[int, float, float]]:
    """(count, smallest, largest) of ``column`` per key of ``rows``, one query."""
    value = rows[column]
    stats = {"_n": rows.count(), "_lo": value.min(), "_hi": value.max()}
    found = rows.group_by(keys).aggregate(**stats) if keys else rows.aggregate(**stats)
    return {
        tuple(row[k] for k in keys): (row["_n"], row["_lo"], row["_hi"])
        for row in found.to_pyarrow().to_pylist()
    }


def _holding(buckets: list[tuple[int, float, float]], rank: int) -> tuple[int, float, float, int]:
    """The bucket holding the value of 0-based ``rank``, and the values before it."""
    before = 0
    for count, low, high in buckets:
        if rank < before + count:
            return count, low, high, before
        before += count
    raise ValueError(f"rank {rank} beyond the {before} values counted")


def _interval_table(keys: list[str], intervals: list[tuple], **columns) -> ir.Table:
    """The intervals as a small engine table: key columns, ``_id``, and ``columns``."""
    data = {f"_k{i}": [key[i] for key, *_ in intervals] for i in range(len(keys))}
    data["_id"] = pa.array(range(len(intervals)), pa.int64())
    for name, values in columns.items():
        data[name] = pa.array(values, pa.float64())
    return ibis.memtable(pa.table(data))


def _joined(rows: ir.Table, column: str, keys: list[str], box: ir.Table) -> ir.Table:
    """Rows inside their key's interval, with the interval's columns (keys match null to null)."""
    value = rows[column]
    predicates = [rows[k].identical_to(box[f"_k{i}"]) for i, k in enumerate(keys)]
    predicates += [value >= box["_lo"], value <= box["_hi"]]
    return rows.inner_join(box, predicates)


def _bucket_counts(
    rows: ir.Table, column: str, keys: list[str], intervals: list[tuple]
) -> list[list[tuple[int, float, float]]]:
    """Per interval, its buckets in order: (count, smallest value, largest value)."""
    lows = [lo for _, lo, _ in intervals]
    highs = [hi for _, _, hi in intervals]
    # Halves first, so the span of any two doubles is finite.
    scales = [BUCKETS / (hi * 0.5 - lo * 0.5) for lo, hi in zip(lows, highs, strict=True)]
    box = _interval_table(keys, intervals, _lo=lows, _hi=highs, _scale=scales)
    joined = _joined(rows, column, keys, box)
    value = joined[column]
    raw = ((value * 0.5 - joined["_lo"] * 0.5) * joined["_scale"]).floor()
    bucket = ibis.greatest(ibis.least(raw, BUCKETS - 1), 0)
    bucketed = joined.select("_id", _b=bucket, _v=value)
    counts = (
        bucketed.group_by(["_id", "_b"])
        .aggregate(_c=bucketed.count(), _min=bucketed._v.min(), _max=bucketed._v.max())
        .to_pyarrow()
        .to_pylist()
    )
    per = defaultdict(list)
    for row in sorted(counts, key=lambda r: (r["_id"], r["_b"])):
        per[row["_id"]].append((int(row["_c"]), row["_min"], row["_max"]))
    return [per[i] for i in range(len(intervals))]


def _fetched(
    rows: ir.Table, column: str, keys: list[str], fetch: dict[tuple[tuple, int], tuple]
) -> dict[tuple[tuple, int], float]:
    """The values of small buckets, sorted in Python: each target's value at its rank."""
    intervals = sorted({(key, lo, hi) for (key, _), (lo, hi, _) in fetch.items()}, key=repr)
    box = _interval_table(
        keys, intervals, _lo=[i[1] for i in intervals], _hi=[i[2] for i in intervals]
    )
    joined = _joined(rows, column, keys, box)
    table = joined.select("_id", _v=joined[column]).to_pyarrow()
    ids = table["_id"].to_numpy()
    values = table["_v"].to_numpy()
    order = np.lexsort((values, ids))
    ids, values = ids[order], values[order]
    starts = dict(zip(intervals, np.searchsorted(ids, np.arange(len(intervals))), strict=True))
    return {
        target: float(values[starts[(target[0], lo, hi)] + within])
        for target, (lo, hi, within) in fetch.items()
    }
