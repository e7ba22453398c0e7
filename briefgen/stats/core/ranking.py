"""Average ranks (ties share the mean of their ranks) in one ordered window.

Twice the average rank is an integer: the lowest rank of the tie group (SQL RANK(),
1-based) plus the highest (the number of rows at or below the value, CUME_DIST()
times the rows in the partition). Both functions read the same ordered window, so
the engine sorts once; counting the ties instead takes a second window partitioned
by the value, which measured about twice the time (1M rows, DuckDB, one thread).

When values repeat, counting them beats sorting the rows: a hash aggregate gives each
distinct value its count, a window over those few values their cumulative counts, and
twice a value's average rank is 2 × (rows at or below) − (its count) + 1. Measured at
10M rows on DuckDB (2 threads, 1 GB limit): 13,600 distinct values, rank sums per
level 0.13 s by counting against 0.95 s by sorting; nearly every value distinct, 4.2 s
against 2.0 s. ``counting_pays`` decides from an estimate of the distinct values.
"""

from __future__ import annotations

import ibis
import ibis.expr.types as ir


def doubled_average_rank(
    column: ir.Column, rows: int | ir.IntegerValue, group_by: ir.Value | None = None
) -> ir.IntegerValue:
    """2 × the average rank of ``column`` among the ``rows`` rows of its partition.

    ``rows`` is the partition's size: a number when the caller knows it, else an
    expression such as ``column.count().over(...)``. ``group_by`` partitions the
    ranking (None: all rows). Rows where ``column`` is null must be outside the
    partition that is used. CUME_DIST() is a fraction of ``rows``: multiplied back and
    rounded it is exact for fewer than 2^52 rows.
    """
    lowest, at_or_below = _rank_bounds(column, rows, group_by)
    return (lowest + at_or_below).cast("int64")


def doubled_rank_and_ties(
    column: ir.Column, rows: int | ir.IntegerValue
) -> tuple[ir.IntegerValue, ir.IntegerValue]:
    """``doubled_average_rank`` and the size of each row's tie group, from the same window.

    A tie group spans ranks lowest … at_or_below, so it holds at_or_below − lowest + 1
    rows: the rank tests' tie term needs no pass of its own.
    """
    lowest, at_or_below = _rank_bounds(column, rows)
    return (lowest + at_or_below).cast("int64"), (at_or_below - lowest + 1).cast("int64")


def _rank_bounds(
    column: ir.Column, rows: int | ir.IntegerValue, group_by: ir.Value | None = None
) -> tuple[ir.IntegerValue, ir.FloatingValue]:
    """The lowest (1-based) and highest rank of each row's tie group."""
    partition = [] if group_by is None else [group_by]
    lowest = ibis.rank().over(group_by=partition, order_by=column) + 1
    at_or_below = (ibis.cume_dist().over(group_by=partition, order_by=column) * rows).round()
    return lowest, at_or_below


# Rank by counting when at most this share of the ranked rows are distinct values: far
# below the crossover seen (counting wins at 0.14% distinct, loses at ~100%).
COUNTED_SHARE = 0.25


def counting_pays(distinct_estimate: float | int | None, rows: int) -> bool:
    """True when ranking by counts of each value beats sorting every row (see module doc)."""
    return distinct_estimate is not None and rows > 0 and distinct_estimate <= COUNTED_SHARE * rows


def doubled_ranks_of_values(rows: ir.Table, column: str, weight: str | None = None) -> ir.Table:
    """Each distinct non-null ``column`` value of ``rows`` as ``value``, with ``ties`` (its
    rows) and ``doubled`` (2 × its average rank), from counts alone.

    ``weight`` names a column of row counts when ``rows`` are already counted cells.
    """
    present = rows.filter(rows[column].notnull())
    ties = present.count() if weight is None else present[weight].sum()
    counts = present.group_by(value=present[column]).aggregate(ties=ties)
    at_or_below = counts.ties.cumsum(order_by=counts.value)
    return counts.mutate(doubled=(2 * at_or_below - counts.ties + 1).cast("int64"))
