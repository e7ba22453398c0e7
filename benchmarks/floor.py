"""The floor: one DuckDB query computing the brief's per-group aggregates, nothing else.

Over the same file as the brief, with grouping sets for every group variable and
all rows: count, mean, standard deviation, the three quartiles, the slope on each
predictor, and the first and last timestamp. No engine can make a brief from these
data faster than it reads them once and computes this; the benchmark's ratios are
against it. DuckDB runs with its default settings (every core).

Run ``python benchmarks/floor.py FILE``; it prints the seconds and result rows as JSON.
"""

from __future__ import annotations

import json
import sys
import time

import duckdb

GROUPS = ("site", "shift", "product_line")
TARGET = "pick_minutes"
PREDICTORS = ("items", "distance_m")
TIME = "started_at"


def floor_query(path: str) -> str:
    reader = "read_parquet" if path.endswith(".parquet") else "read_csv"
    slopes = ", ".join(f"regr_slope({TARGET}, {p}) AS slope_{p}" for p in PREDICTORS)
    sets = ", ".join(f"({g})" for g in GROUPS)
    return f"""
        SELECT {", ".join(GROUPS)},
               count({TARGET}) AS n, avg({TARGET}) AS mean, stddev_samp({TARGET}) AS sd,
               quantile_cont({TARGET}, [0.25, 0.5, 0.75]) AS quartiles,
               {slopes}, min({TIME}) AS first, max({TIME}) AS last
        FROM {reader}('{path}')
        GROUP BY GROUPING SETS ({sets}, ())
    """


def main() -> None:
    path = sys.argv[1]
    started = time.perf_counter()
    rows = duckdb.connect().sql(floor_query(path)).fetchall()
    seconds = time.perf_counter() - started
    print(json.dumps({"seconds": seconds, "result_rows": len(rows)}))


if __name__ == "__main__":
    main()
