"""Every core, same bytes: builds on many engine threads are byte-identical.

The engine combines partial results in the order its threads finish. Float sums would
then change in their last digits from build to build (measured before the exact sums:
five builds of this brief on 4 threads gave five different stats.json files); the
statistics sum exact fixed-point integers (``briefgen.stats.core.exact``), which add up
to the same bits in any order. Constructed data (seeded), large enough that DuckDB
splits the scan over several row groups and threads.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from briefgen.config import EngineSpec, load_spec
from briefgen.pipeline import build_brief
from briefgen.source import connect

BUILT_ON = "2026-12-02"
ROWS = 300_000
# DuckDB documentation, "Tuning Workloads", Parallelism: DuckDB parallelises by row
# groups of 122,880 rows, so a query runs on k threads only if it scans at least
# k × 122,880 rows. 300,000 rows are enough for two threads on the cached frame, and the
# Parquet file has six row groups for the first scan.
DUCKDB_ROW_GROUP = 122_880
# At least four threads even on a smaller machine: more threads than cores still run
# concurrently and finish in varying order.
THREADS = max(4, os.cpu_count() or 1)


def _write_data(path: Path) -> None:
    """A skewed target near 1e9 (so the last digits are fragile), one group, one predictor."""
    rng = np.random.default_rng(8)
    level = rng.integers(0, 3, ROWS)
    distance = rng.uniform(0.0, 50.0, ROWS)
    minutes = 1e9 + 3.0 * level + 0.4 * distance + rng.gamma(2.0, 2.0, ROWS)
    frame = pd.DataFrame(
        {"minutes": minutes, "kind": np.array(["a", "b", "c"])[level], "km": distance}
    )
    pq.write_table(
        pa.Table.from_pandas(frame, preserve_index=False), path, row_group_size=ROWS // 6
    )


@pytest.fixture(scope="module")
def config(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("threads")
    _write_data(folder / "data.parquet")
    path = folder / "brief.yaml"
    path.write_text(
        "title: Many threads\n"
        "data:\n  path: data.parquet\n"
        "target: minutes\ngroups: [kind]\npredictors: [km]\n"
        f"engine: {{backend: duckdb, threads: {THREADS}}}\n",
        encoding="utf-8",
    )
    return path


def test_the_engine_really_runs_in_parallel(config):
    spec = load_spec(config)
    con = connect(spec.engine)
    assert con.raw_sql("SELECT current_setting('threads')").fetchone()[0] == THREADS >= 2
    assert pq.ParquetFile(spec.data_path).num_row_groups == 6
    assert ROWS > 2 * DUCKDB_ROW_GROUP


def test_five_builds_on_all_threads_are_byte_identical(config, tmp_path):
    spec = load_spec(config)
    first = None
    for build in range(5):
        out = tmp_path / f"build{build}"
        build_brief(spec, out, built_on=BUILT_ON)
        files = {
            name: (out / name).read_bytes() for name in ("brief.html", "brief.pdf", "stats.json")
        }
        if first is None:
            first = files
        for name, content in files.items():
            assert content == first[name], f"{name} of build {build + 1} differs from build 1"


def test_default_engine_uses_every_core():
    con = connect(EngineSpec())
    assert con.raw_sql("SELECT current_setting('threads')").fetchone()[0] == (os.cpu_count() or 1)
