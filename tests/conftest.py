"""Shared fixtures: small reference data put into the engine the way a brief reads it."""

from __future__ import annotations

import itertools
import subprocess
from collections.abc import Callable, Iterator
from pathlib import Path

import ibis.expr.types as ir
import pandas as pd
import pytest
from ibis.backends import BaseBackend

from briefgen.config import EngineSpec
from briefgen.source import connect

EngineTable = Callable[[pd.DataFrame], ir.Table]


def write_engine_table(engine: BaseBackend, frame: pd.DataFrame, path: Path) -> ir.Table:
    """Write ``frame`` to a parquet file at ``path`` and open it as an engine table.

    ibis 12 with DuckDB 2.0.1 cannot ``create_table`` from pandas, so the data goes
    through parquet, as a user's file would. pyarrow stores NaN in float columns as
    null, which is what the analysis frame makes of NaN.
    """
    # Microseconds: Spark reads no nanosecond timestamps from Parquet, DuckDB reads both.
    frame.to_parquet(path, index=False, coerce_timestamps="us", allow_truncated_timestamps=True)
    return engine.read_parquet(path)


# Backends the statistics suite runs on. Every test on local Spark takes minutes where
# DuckDB takes seconds (each query costs Spark a plan and a job), so that run is slow:
# `pytest -m slow`. tests/test_engine_spark.py compares whole briefs' statistics on
# both engines in the default run.
BACKENDS = ["duckdb", pytest.param("pyspark", marks=pytest.mark.slow)]


@pytest.fixture(scope="session")
def spark_connection() -> Iterator[BaseBackend]:
    """One local Spark session for the whole run: starting its JVM costs 10-20 s."""
    connection = connect(EngineSpec(backend="pyspark"))
    yield connection
    connection.disconnect()


@pytest.fixture(params=BACKENDS)
def engine(request: pytest.FixtureRequest) -> Iterator[BaseBackend]:
    """A connection per test, opened through the same seam the brief uses (source.connect)."""
    if request.param == "pyspark":
        yield request.getfixturevalue("spark_connection")
        return
    connection = connect(EngineSpec(backend=request.param))
    yield connection
    connection.disconnect()


@pytest.fixture
def engine_table(engine: BaseBackend, tmp_path: Path) -> EngineTable:
    """Turn a pandas DataFrame into an Ibis table on the test's engine connection.

    Each call writes a new file, so the factory can be called many times in one
    test (including once per hypothesis example) without tables overwriting each other.
    """
    numbers = itertools.count()

    def to_engine(frame: pd.DataFrame) -> ir.Table:
        return write_engine_table(engine, frame, tmp_path / f"table_{next(numbers)}.parquet")

    return to_engine


@pytest.fixture
def small_disk(tmp_path: Path) -> Iterator[Path]:
    """A 1 MiB tmpfs, mounted for the test (a real full disk); skipped where this user may not mount."""
    mount_point = tmp_path / "disk"
    mount_point.mkdir()
    done = subprocess.run(
        ["mount", "-t", "tmpfs", "-o", "size=1m", "tmpfs", str(mount_point)], capture_output=True
    )
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {done.stderr.decode().strip() or 'not allowed'}")
    yield mount_point
    subprocess.run(["umount", str(mount_point)], check=False)
