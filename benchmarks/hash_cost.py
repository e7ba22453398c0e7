"""What recording the data file's SHA-256 costs (stats.json ``made_from.data.sha256``).

Hashing is one extra read of the file. On a CSV of about 500 MB (the demo deliveries'
rows repeated) three things are timed, each in a fresh Python process so its peak
resident set size belongs to it alone:

* baseline 1: a plain read of the file in the same 1 MiB reads, without hashing;
* baseline 2: one DuckDB scan of the CSV (count and mean of the target), the least any
  brief on that file pays, on the same engine settings as briefgen's source;
* ``briefgen.history.record.file_sha256`` on the file.

Printed: seconds, the ratios of the hash to each baseline, and each process's peak
memory, which must not grow with the file. Run
``.venv/bin/python benchmarks/hash_cost.py [--mb 500] [--repeat 3]``.
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import time
from pathlib import Path

DATA_DIR = Path(__file__).resolve().parent / ".data"
DEMO_CSV = Path(__file__).resolve().parents[1] / "briefgen" / "demo" / "deliveries.csv"


def csv_of(megabytes: int) -> Path:
    """The demo CSV's rows repeated until the file holds about ``megabytes`` MB."""
    target = DATA_DIR / f"deliveries_{megabytes}mb.csv"
    if target.exists():
        return target
    DATA_DIR.mkdir(exist_ok=True)
    header, body = DEMO_CSV.read_bytes().split(b"\n", 1)
    copies = megabytes * 1_000_000 // len(body) + 1
    partial = target.with_name(f".{target.name}.partial")
    with partial.open("wb") as out:
        out.write(header + b"\n")
        for _ in range(copies):
            out.write(body)
    partial.replace(target)
    return target


def peak_mib() -> float:
    """This process's peak resident memory so far (Linux reports kibibytes)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def _plain_read(path: Path) -> None:
    from briefgen.history.record import HASH_CHUNK

    with path.open("rb", buffering=0) as stream:
        buffer = bytearray(HASH_CHUNK)
        while stream.readinto(buffer):
            pass


def _engine_scan(path: Path) -> None:
    import ibis

    from briefgen.source import ENGINE_THREADS

    con = ibis.duckdb.connect(threads=ENGINE_THREADS)
    table = con.read_csv(path)
    table.aggregate(n=table.count(), mean=table.delivery_minutes.mean()).execute()


def _hash(path: Path) -> None:
    from briefgen.history.record import file_sha256

    file_sha256(path)


MEASURES = {"read": _plain_read, "scan": _engine_scan, "hash": _hash}


def child(kind: str, path: Path) -> None:
    """Run one measurement in this process and print its seconds and peak memory as JSON."""
    import briefgen.history.record  # noqa: F401 - imports stay out of the timing
    import briefgen.source  # noqa: F401

    start = time.perf_counter()
    MEASURES[kind](path)
    print(json.dumps({"seconds": time.perf_counter() - start, "peak_mib": peak_mib()}))


def measure(kind: str, path: Path, repeat: int) -> dict[str, float]:
    runs = []
    for _ in range(repeat):
        done = subprocess.run(
            [sys.executable, __file__, "--child", kind, str(path)],
            check=True,
            capture_output=True,
            text=True,
        )
        runs.append(json.loads(done.stdout))
    return min(runs, key=lambda r: r["seconds"])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--mb", type=int, default=500)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--child", nargs=2, metavar=("KIND", "PATH"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        child(args.child[0], Path(args.child[1]))
        return
    path = csv_of(args.mb)
    size = path.stat().st_size
    _plain_read(path)  # warm the page cache once, so no measurement pays the cold read alone
    results = {kind: measure(kind, path, args.repeat) for kind in MEASURES}
    hashed = results["hash"]["seconds"]
    print(f"file: {path.name}, {size / 1e6:,.0f} MB; best of {args.repeat}, page cache warm")
    print(f"{'measure':<28}{'seconds':>9}{'MB/s':>9}{'peak MiB':>10}")
    names = {
        "read": "plain read (baseline 1)",
        "scan": "DuckDB scan (baseline 2)",
        "hash": "SHA-256",
    }
    for kind, result in results.items():
        rate = size / 1e6 / result["seconds"]
        print(f"{names[kind]:<28}{result['seconds']:>9.2f}{rate:>9,.0f}{result['peak_mib']:>10.0f}")
    print(f"hash / plain read: {hashed / results['read']['seconds']:.2f}")
    print(f"hash / DuckDB scan: {hashed / results['scan']['seconds']:.2f}")


if __name__ == "__main__":
    main()
