"""Large copies of the demo deliveries, written to Parquet one row group at a time.

The demo generator makes one DataFrame per call; here it is called once per
chunk with a different seed, and each chunk goes straight into a Parquet row
group, so at most one chunk of pandas rows is in memory however large the file.
Files are cached under ``benchmarks/.data/`` and reused when present.
"""

from __future__ import annotations

import logging
import os
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from briefgen.demo.generate import SEED, generate

log = logging.getLogger(__name__)

DATA_DIR = Path(__file__).resolve().parent / ".data"
CHUNK_ROWS = 1_000_000


def dataset_path(rows: int, directory: Path = DATA_DIR) -> Path:
    """Where the file with ``rows`` rows lives; the name records the row count."""
    return directory / f"deliveries_{rows}.parquet"


def chunk_sizes(rows: int, chunk_rows: int = CHUNK_ROWS) -> list[int]:
    """Split ``rows`` into chunks of at most ``chunk_rows``."""
    full, rest = divmod(rows, chunk_rows)
    return [chunk_rows] * full + ([rest] if rest else [])


def write_dataset(rows: int, target: Path, chunk_rows: int = CHUNK_ROWS) -> None:
    """Write ``rows`` demo rows to ``target``, one generator call and row group per chunk."""
    # Write beside the target and rename at the end, so an interrupted run never
    # leaves a short file that a later run would take for a finished one.
    partial = target.with_name(f".{target.name}.partial")
    writer: pq.ParquetWriter | None = None
    try:
        for index, size in enumerate(chunk_sizes(rows, chunk_rows)):
            # A different seed per chunk: repeated chunks would make a file whose
            # quantiles and ties are unlike real data of that size.
            frame = generate(seed=SEED + index, rows=size)
            chunk = pa.Table.from_pandas(frame, preserve_index=False)
            del frame
            if writer is None:
                writer = pq.ParquetWriter(partial, chunk.schema, compression="zstd")
            writer.write_table(chunk.cast(writer.schema), row_group_size=chunk_rows)
            log.info("%s: wrote chunk %d (%d rows)", target.name, index + 1, size)
        if writer is not None:
            writer.close()
            writer = None
        os.replace(partial, target)
    finally:
        if writer is not None:
            writer.close()
        partial.unlink(missing_ok=True)


def ensure_dataset(rows: int, directory: Path = DATA_DIR) -> Path:
    """The cached file with ``rows`` rows, generated first if missing or of another size."""
    target = dataset_path(rows, directory)
    if target.exists() and pq.ParquetFile(target).metadata.num_rows == rows:
        return target
    directory.mkdir(parents=True, exist_ok=True)
    write_dataset(rows, target)
    return target
