"""Average ranks (ties share the mean of their ranks) in one ordered window.

Twice the average rank is an integer: the lowest rank of the tie group (SQL RANK(),
1-based) plus the highest (the number of rows at or below the value, CUME_DIST()
times the rows in the partition). Both functions read the same ordered window, so
the engine sorts once; counting the ties instead takes a second window partitioned
by the value, which measured about twice the time (1M rows, DuckDB, one thread).
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
    partition = [] if group_by is None else [group_by]
    lowest = ibis.rank().over(group_by=partition, order_by=column) + 1
    at_or_below = (ibis.cume_dist().over(group_by=partition, order_by=column) * rows).round()
    return (lowest + at_or_below).cast("int64")
