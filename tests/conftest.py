"""Shared fixtures: small reference data put into the engine the way a brief reads it."""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterator
from pathlib import Path

import ibis.expr.types as ir
import pandas as pd
import pytest
from ibis.backends.duckdb import Backend as DuckDBBackend

from briefgen.config import EngineSpec
from briefgen.source import connect

EngineTable = Callable[[pd.DataFrame], ir.Table]


def write_engine_table(engine: DuckDBBackend, frame: pd.DataFrame, path: Path) -> ir.Table:
    """Write ``frame`` to a parquet file at ``path`` and open it as an engine table.

    ibis 12 with DuckDB 2.0.1 cannot ``create_table`` from pandas, so the data goes
    through parquet, as a user's file would. pyarrow stores NaN in float columns as
    null, which is what the analysis frame makes of NaN.
    """
    frame.to_parquet(path, index=False)
    return engine.read_parquet(path)


# Backends the statistics suite runs on; a second Ibis backend joins by adding its name here.
BACKENDS = ["duckdb"]


@pytest.fixture(params=BACKENDS)
def engine(request: pytest.FixtureRequest) -> Iterator[DuckDBBackend]:
    """One connection per test, opened through the same seam the brief uses (source.connect)."""
    connection = connect(EngineSpec(backend=request.param))
    yield connection
    connection.disconnect()


@pytest.fixture
def engine_table(engine: DuckDBBackend, tmp_path: Path) -> EngineTable:
    """Turn a pandas DataFrame into an Ibis table on the test's DuckDB connection.

    Each call writes a new file, so the factory can be called many times in one
    test (including once per hypothesis example) without tables overwriting each other.
    """
    numbers = itertools.count()

    def to_engine(frame: pd.DataFrame) -> ir.Table:
        return write_engine_table(engine, frame, tmp_path / f"table_{next(numbers)}.parquet")

    return to_engine
