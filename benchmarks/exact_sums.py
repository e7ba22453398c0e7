"""Speed of exact fixed-point sums against plain float sums on 1M rows (a measurement, not a test).

Two queries the statistics run, each in both forms: the summary's pass 2 (per-key
deviations from a joined median: Σd, Σd²) and a fits-style pass (Σdx, Σdy, Σdx², Σdx·dy,
Σdy²). Each is timed min-of-9, interleaved, in one process on every core; the ratio is
exact / float. Run: ``.venv/bin/python benchmarks/exact_sums.py``.
"""

from __future__ import annotations

import time

import ibis
import numpy as np
import pyarrow as pa

from briefgen.stats.core.exact import FixedPoint, exact_sum, quantise

ROWS = 1_000_000
REPEATS = 9


def plans(con) -> dict:
    """The four queries, float and exact forms of each, on seeded constructed data."""
    rng = np.random.default_rng(1)
    data = pa.table(
        {
            "y": 1e9 + rng.gamma(2.0, 3.0, ROWS),
            "x": rng.uniform(0.0, 50.0, ROWS),
            "k": np.array(list("abcdef"))[rng.integers(0, 6, ROWS)],
        }
    )
    table = con.create_table("rows", data, overwrite=True)
    medians = ibis.memtable(
        {
            "k2": list("abcdef"),
            "median": [1e9 + 5.0] * 6,
            "scale": [FixedPoint.fit(200.0, ROWS).factor] * 6,
        }
    )
    joined = table.inner_join(medians, table.k == medians.k2)
    d = joined.y - joined.median
    q = quantise(d, joined.scale)
    scale_x, scale_y = FixedPoint.fit(50.0, ROWS), FixedPoint.fit(200.0, ROWS)
    dx, dy = table.x - 25.0, table.y - (1e9 + 5.0)
    qx, qy = scale_x.quantise(dx), scale_y.quantise(dy)
    return {
        "summary pass 2, float": joined.group_by("k").aggregate(a=d.sum(), b=(d * d).sum()),
        "summary pass 2, exact": joined.group_by("k").aggregate(a=exact_sum(q), b=exact_sum(q * q)),
        "five sums, float": table.aggregate(
            a=dx.sum(), b=dy.sum(), c=(dx * dx).sum(), e=(dx * dy).sum(), f=(dy * dy).sum()
        ),
        "five sums, exact": table.aggregate(
            a=exact_sum(qx),
            b=exact_sum(qy),
            c=exact_sum(qx * qx),
            e=exact_sum(qx * qy),
            f=exact_sum(qy * qy),
        ),
    }


def main() -> None:
    con = ibis.duckdb.connect()
    queries = plans(con)
    times: dict[str, list[float]] = {name: [] for name in queries}
    for _ in range(REPEATS):
        for name, query in queries.items():
            started = time.perf_counter()
            con.to_pyarrow(query)
            times[name].append(time.perf_counter() - started)
    best = {name: min(values) for name, values in times.items()}
    for name in queries:
        base = best[name.replace("exact", "float")]
        print(f"{name:24s} {best[name] * 1000:7.1f} ms   exact / float {best[name] / base:4.2f}")


if __name__ == "__main__":
    main()
