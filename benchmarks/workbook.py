"""Memory and time of reading an Excel sheet, as ratios against baselines from the same run.

The demo deliveries (``briefgen.demo.generate``, seeded) are written to one .xlsx
sheet with openpyxl's write-only mode; each reader then runs in a fresh Python
process, so its peak resident set size is its own:

* import: Python with briefgen, DuckDB and openpyxl imported, nothing read;
* engine: the same with a DuckDB connection that has taken one tiny Arrow batch
  (briefgen's floor: the engine's own buffers, whatever the sheet);
* whole sheet: every row of the sheet as a list of Python tuples (openpyxl read-only),
  what reading the sheet into Python objects at once would hold;
* briefgen: ``workbook.read_workbook`` streaming the sheet into a DuckDB table in batches.

Each reader's peak is reported above its own floor (import for the whole sheet, engine
for briefgen): briefgen's should stay below the whole sheet's and grow more slowly
with the rows; its time should be close, since both parse the same XML.

    .venv/bin/python benchmarks/workbook.py --rows 200000
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import time
from pathlib import Path

DATA = Path(__file__).resolve().parent / ".data"

MEASURE = r"""
import json, resource, sys, time
from pathlib import Path
import duckdb, ibis, openpyxl
from briefgen import workbook
what, path = sys.argv[1], Path(sys.argv[2])
start = time.perf_counter()
rows = 0
if what == "whole":
    book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    held = list(book.active.iter_rows(values_only=True))
    rows = len(held) - 1
    book.close()
elif what == "engine":
    import pyarrow as pa
    con = ibis.duckdb.connect(threads=1)
    con.con.execute("create temp table x (a double)")
    con.con.register("b", pa.table({"a": [1.0] * 10}))
    con.con.execute("insert into x select * from b")
elif what == "briefgen":
    con = ibis.duckdb.connect(threads=1)
    table = workbook.read_workbook(path, None, path.name, con)
    rows = table.count().to_pyarrow().as_py()
seconds = time.perf_counter() - start
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps({"rows": rows, "seconds": seconds, "peak_mib": peak}))
"""


def ensure_workbook(rows: int) -> Path:
    """The demo deliveries as one .xlsx sheet, written once and reused."""
    path = DATA / f"deliveries_{rows}.xlsx"
    if path.exists():
        return path
    from openpyxl import Workbook

    from briefgen.demo.generate import generate

    DATA.mkdir(exist_ok=True)
    frame = generate(20261202, rows)
    book = Workbook(write_only=True)
    sheet = book.create_sheet("Deliveries")
    sheet.append(list(frame.columns))
    for row in frame.itertuples(index=False):
        sheet.append([value.to_pydatetime() if hasattr(value, "to_pydatetime") else value
                      for value in row])  # fmt: skip
    partial = path.with_suffix(".partial.xlsx")
    book.save(partial)
    partial.rename(path)
    return path


def measure(what: str, path: Path) -> dict:
    result = subprocess.run(
        [sys.executable, "-c", MEASURE, what, str(path)],
        capture_output=True,
        text=True,
        check=True,
    )
    return json.loads(result.stdout)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=200_000)
    args = parser.parse_args()
    started = time.perf_counter()
    path = ensure_workbook(args.rows)
    print(f"workbook ready in {time.perf_counter() - started:.0f} s: {path}", file=sys.stderr)
    floor, engine, whole, ours = (
        measure(what, path) for what in ("import", "engine", "whole", "briefgen")
    )
    assert whole["rows"] == ours["rows"] == args.rows, (whole, ours)
    above = {
        "whole": whole["peak_mib"] - floor["peak_mib"],
        "ours": ours["peak_mib"] - engine["peak_mib"],
    }
    print(f"rows                              {args.rows:,}")
    print(f"peak above import, whole sheet    {above['whole']:8.1f} MiB")
    print(f"peak above engine, briefgen       {above['ours']:8.1f} MiB")
    if above["whole"] > 0:
        print(f"memory ratio briefgen / whole     {above['ours'] / above['whole']:8.2f}")
    else:  # a sheet this small does not lift the peak above the imports'
        print("memory ratio briefgen / whole            - (sheet too small to measure)")
    print(f"time, whole sheet                 {whole['seconds']:8.1f} s")
    print(f"time, briefgen                    {ours['seconds']:8.1f} s")
    print(f"time ratio briefgen / whole       {ours['seconds'] / whole['seconds']:8.2f}")


if __name__ == "__main__":
    main()
