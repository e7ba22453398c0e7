"""Invented warehouse pick jobs for the speed benchmark, written one chunk at a time.

Every row is made up by a seeded generator: a pick job at one of 12 sites, in one
of 3 shifts, for one of 6 product lines, with the number of items and the walking
distance (the two predictors), the minutes it took (the target, right-skewed:
lognormal noise plus a few long stalls) and its start time over one year. A small
share of cells is empty, as in real exports.

The file is written in chunks of ``CHUNK_ROWS`` rows (one generator call and one
Parquet row group or CSV block each, the seed raised by one per chunk), so memory
stays at one chunk however many rows are asked for. Files are cached under
``benchmarks/.data/`` (not committed) and written under a temporary name, renamed
when complete, so an interrupted run never leaves a short file behind.

``--extra N`` adds N columns a brief's config does not name, as wide exports carry
(numbers, whole numbers, codes and remarks in turn, 2% of their cells empty), from a
generator of their own so the seven columns above stay the same rows.

Run ``python benchmarks/data.py --rows 1000000 --format csv`` to make one file; it
prints the path.
"""

from __future__ import annotations

import argparse
import os
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.csv as pa_csv
import pyarrow.parquet as pq

DATA_DIR = Path(__file__).resolve().parent / ".data"
CHUNK_ROWS = 1_000_000
SEED = 20261202

SITES = tuple(
    f"Depot {name}"
    for name in [
        "Ash",
        "Birch",
        "Cedar",
        "Elm",
        "Fir",
        "Hazel",
        "Larch",
        "Maple",
        "Oak",
        "Pine",
        "Rowan",
        "Yew",
    ]
)
SHIFTS = ("early", "late", "night")
LINES = ("chilled", "dry goods", "frozen", "household", "produce", "bulky")
START = np.datetime64("2026-01-01T00:00:00", "s")
SECONDS_IN_YEAR = 365 * 24 * 3600
MISSING_SHARE = 0.001  # empty target and distance cells
EXTRA_MISSING_SHARE = 0.02  # empty cells in the columns no config names


def generate_chunk(seed: int, rows: int) -> pa.Table:
    """One chunk of pick jobs as an Arrow table; the same seed gives the same rows."""
    rng = np.random.default_rng(seed)
    site = rng.integers(0, len(SITES), rows)
    shift = rng.choice(len(SHIFTS), rows, p=(0.45, 0.35, 0.20))
    line = rng.integers(0, len(LINES), rows)
    items = rng.poisson(8.0, rows) + 1
    distance = np.round(rng.gamma(2.0, 150.0, rows), 1)
    # Sites differ by up to 30%, the night shift is 15% slower, bulky lines 40%.
    site_factor = 0.85 + 0.3 * (site / (len(SITES) - 1))
    shift_factor = np.where(shift == 2, 1.15, 1.0)
    line_factor = np.where(line == len(LINES) - 1, 1.4, 1.0)
    base = 2.0 + 0.45 * items + 0.01 * distance
    minutes = base * site_factor * shift_factor * line_factor * rng.lognormal(0.0, 0.35, rows)
    stalled = rng.random(rows) < 0.01
    minutes = np.round(minutes + np.where(stalled, rng.exponential(30.0, rows), 0.0), 2)
    started = START + rng.integers(0, SECONDS_IN_YEAR, rows).astype("timedelta64[s]")
    no_minutes = rng.random(rows) < MISSING_SHARE
    no_distance = rng.random(rows) < MISSING_SHARE
    return pa.table(
        {
            "started_at": pa.array(started, pa.timestamp("s")),
            "site": pa.DictionaryArray.from_arrays(site.astype(np.int32), list(SITES)),
            "shift": pa.DictionaryArray.from_arrays(shift.astype(np.int32), list(SHIFTS)),
            "product_line": pa.DictionaryArray.from_arrays(line.astype(np.int32), list(LINES)),
            "items": pa.array(items, pa.int64()),
            "distance_m": pa.array(distance, mask=no_distance),
            "pick_minutes": pa.array(minutes, mask=no_minutes),
        }
    )


def extra_columns(seed: int, rows: int, count: int) -> dict[str, pa.Array]:
    """``count`` columns no config names: numbers, whole numbers, codes, remarks in turn."""
    rng = np.random.default_rng([seed, 1])
    columns = {}
    for i in range(count):
        empty = rng.random(rows) < EXTRA_MISSING_SHARE
        kind = i % 4
        if kind == 0:
            values = pa.array(np.round(rng.gamma(3.0, 4.0, rows), 2), mask=empty)
        elif kind == 1:
            values = pa.array(rng.integers(1, 40, rows), mask=empty)
        elif kind == 2:
            codes = np.char.add("C", rng.integers(1000, 9999, rows).astype(str))
            values = pa.array(codes.tolist(), pa.string(), mask=empty)
        else:
            remarks = np.array(["", "recount", "damaged box", "short pick", "relabelled"])
            chosen = remarks[rng.choice(len(remarks), rows, p=(0.9, 0.04, 0.02, 0.02, 0.02))]
            values = pa.array(chosen.tolist(), pa.string(), mask=empty | (chosen == ""))
        columns[f"extra_{i + 1:02d}"] = values
    return columns


def dataset_path(rows: int, data_format: str, directory: Path = DATA_DIR, extra: int = 0) -> Path:
    """Where the file with ``rows`` rows lives; the name records the row count and extras."""
    wide = f"_extra{extra}" if extra else ""
    return directory / f"picks_{rows}{wide}.{data_format}"


def write_dataset(rows: int, data_format: str, target: Path, extra: int = 0) -> None:
    """Write ``rows`` rows to ``target`` as CSV or Parquet, one chunk at a time."""
    partial = target.with_name(f".{target.name}.partial")
    writer = None
    try:
        for index, start in enumerate(range(0, rows, CHUNK_ROWS)):
            size = min(CHUNK_ROWS, rows - start)
            chunk = generate_chunk(SEED + index, size)
            for name, values in extra_columns(SEED + index, size, extra).items():
                chunk = chunk.append_column(name, values)
            if data_format == "csv":
                # Plain text columns: a CSV has no dictionary, and time as ISO text.
                chunk = chunk.cast(
                    pa.schema(
                        [
                            pa.field(
                                f.name, pa.string() if pa.types.is_dictionary(f.type) else f.type
                            )
                            for f in chunk.schema
                        ]
                    )
                )
                if writer is None:
                    writer = pa_csv.CSVWriter(partial, chunk.schema)
            elif writer is None:
                writer = pq.ParquetWriter(partial, chunk.schema, compression="zstd")
            writer.write_table(chunk) if data_format == "csv" else writer.write_table(
                chunk, row_group_size=CHUNK_ROWS
            )
        writer.close()
        writer = None
        os.replace(partial, target)
    finally:
        if writer is not None:
            writer.close()
        partial.unlink(missing_ok=True)


def ensure_dataset(rows: int, data_format: str, directory: Path = DATA_DIR, extra: int = 0) -> Path:
    """The cached file with ``rows`` rows, generated first when missing."""
    target = dataset_path(rows, data_format, directory, extra)
    if not target.exists():
        directory.mkdir(parents=True, exist_ok=True)
        write_dataset(rows, data_format, target, extra)
    return target


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, required=True)
    parser.add_argument("--format", choices=["csv", "parquet"], required=True)
    parser.add_argument("--extra", type=int, default=0, help="columns no config names")
    args = parser.parse_args()
    print(ensure_dataset(args.rows, args.format, extra=args.extra))


if __name__ == "__main__":
    main()
