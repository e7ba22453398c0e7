"""Speed and memory of briefgen on large data, as ratios against a baseline from the same run.

For each row count the demo deliveries are scaled up (see ``data.py``) and three
things are measured, each in a fresh Python process so the peak resident set
size belongs to that measurement alone:

* baseline: one DuckDB scan that any analysis of the target pays at least once
  (count, mean and median of the target), on the same engine and thread count
  as briefgen's source;
* statistics stage: ``briefgen.stats.compute(open_source(spec), spec)`` with the
  demo spec pointed at the large file;
* the rest of the pipeline (document, HTML, PDF, stats.json) from those results,
  which should not grow with the number of rows.

Run ``make bench`` or ``.venv/bin/python benchmarks/run.py --rows 100000,1000000``.
"""

from __future__ import annotations

import argparse
import json
import logging
import resource
import statistics
import subprocess
import sys
import time
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from data import ensure_dataset

if TYPE_CHECKING:
    from briefgen.config import BriefSpec

DEFAULT_ROWS = (1_000_000, 10_000_000)
# A fixed build date keeps the PDF bytes, and so their size, the same from run to run.
BUILT_ON = "2026-10-01"
MIB = 1024 * 1024
# Engine and pipeline modules are imported inside the measuring functions, so each
# child process loads only what its measurement needs and the imports stay untimed.


def peak_mib() -> float:
    """This process's peak resident set size so far, in MiB."""
    # Linux carries ru_maxrss across exec, so a child started by a parent that once
    # held a large chunk would report the parent's peak; VmHWM belongs to the
    # child's own address space. ru_maxrss (KiB on Linux) is the fallback elsewhere.
    status = Path("/proc/self/status")
    if status.exists():
        for line in status.read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) * 1024 / MIB
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024 / MIB


def measure_baseline(path: Path) -> dict[str, float]:
    """Time one aggregate scan of the target: the least any analysis must read."""
    import ibis

    from briefgen.source import ENGINE_THREADS

    idle = peak_mib()
    started = time.perf_counter()
    con = ibis.duckdb.connect(threads=ENGINE_THREADS)
    table = con.read_parquet(path)
    minutes = table["delivery_minutes"]
    # quantile(0.5) compiles to DuckDB's quantile_cont, which must hold the column.
    query = table.aggregate(rows=table.count(), mean=minutes.mean(), median=minutes.quantile(0.5))
    query.to_pyarrow()
    seconds = time.perf_counter() - started
    return {"seconds": seconds, "peak_mib": peak_mib(), "idle_mib": idle}


def demo_spec_for(path: Path) -> BriefSpec:
    """The demo spec, reading ``path`` instead of the packaged CSV."""
    from importlib import resources

    from briefgen.config import DataSpec, parse_spec

    demo = Path(str(resources.files("briefgen").joinpath("demo/demo.yaml")))
    spec = parse_spec(demo.read_text(encoding="utf-8"), demo)
    return spec.model_copy(update={"data": DataSpec(path=str(path.resolve()))})


def measure_brief(path: Path) -> dict[str, float]:
    """Time the statistics stage, read its peak memory, then time the rest of the pipeline."""
    from briefgen.source import open_source
    from briefgen.stats import compute

    spec = demo_spec_for(path)
    idle = peak_mib()
    started = time.perf_counter()
    stats = compute(open_source(spec), spec)
    stats_seconds = time.perf_counter() - started
    # Read before rendering: matplotlib and WeasyPrint are not part of the statistics stage.
    stats_peak = peak_mib()

    import weasyprint  # noqa: F401  (imported here so its import is not timed below)

    from briefgen.document import build_document
    from briefgen.render import render_html, render_json, render_pdf

    started = time.perf_counter()
    doc = build_document(stats, spec, BUILT_ON, rows_label=Path(spec.data.path).name)
    html = render_html(doc, spec)
    pdf = render_pdf(html, BUILT_ON)
    stats_json = render_json(stats, spec, BUILT_ON)
    render_seconds = time.perf_counter() - started
    return {
        "seconds": stats_seconds,
        "peak_mib": stats_peak,
        "idle_mib": idle,
        "render_seconds": render_seconds,
        "html_bytes": len(html.encode("utf-8")),
        "pdf_bytes": len(pdf),
        "json_bytes": len(stats_json.encode("utf-8")),
        "rows_read": stats.accounting.rows_read,
    }


def run_child(kind: str, path: Path) -> dict[str, float]:
    """Run one measurement in a fresh interpreter and return what it reported."""
    command = [sys.executable, str(Path(__file__).resolve()), "--child", kind, "--data", str(path)]
    done = subprocess.run(command, stdout=subprocess.PIPE, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def warm_page_cache(path: Path) -> None:
    """Read the file once so neither measurement pays for the first read from disk."""
    with path.open("rb") as stream:
        while stream.read(64 * MIB):
            pass


@dataclass(frozen=True, slots=True)
class SizeResult:
    """Everything measured for one row count (best time over the repeats)."""

    rows: int
    baseline_seconds: float
    stats_seconds: float
    render_seconds: float
    baseline_mib: float
    stats_mib: float
    baseline_idle_mib: float
    stats_idle_mib: float
    html_bytes: int
    pdf_bytes: int
    json_bytes: int


def measure_size(rows: int, repeat: int) -> SizeResult:
    """Measure baseline and brief ``repeat`` times each, alternating, in fresh processes."""
    path = ensure_dataset(rows)
    warm_page_cache(path)
    baselines, briefs = [], []
    for round_number in range(1, repeat + 1):
        log(f"{rows:,} rows, round {round_number}/{repeat}: baseline")
        baselines.append(run_child("baseline", path))
        log(f"{rows:,} rows, round {round_number}/{repeat}: statistics and render")
        briefs.append(run_child("brief", path))
    if briefs[0]["rows_read"] != rows:
        raise SystemExit(f"{path} gave {briefs[0]['rows_read']} rows, expected {rows}")
    return SizeResult(
        rows=rows,
        baseline_seconds=min(b["seconds"] for b in baselines),
        stats_seconds=min(b["seconds"] for b in briefs),
        render_seconds=min(b["render_seconds"] for b in briefs),
        baseline_mib=max(b["peak_mib"] for b in baselines),
        stats_mib=max(b["peak_mib"] for b in briefs),
        baseline_idle_mib=statistics.median(b["idle_mib"] for b in baselines),
        stats_idle_mib=statistics.median(b["idle_mib"] for b in briefs),
        html_bytes=briefs[-1]["html_bytes"],
        pdf_bytes=briefs[-1]["pdf_bytes"],
        json_bytes=briefs[-1]["json_bytes"],
    )


def format_table(results: list[SizeResult]) -> str:
    """A plain fixed-width table, one line per row count."""
    header = (
        f"{'rows':>12} {'base s':>8} {'stats s':>8} {'ratio':>7} {'render s':>9} "
        f"{'base MiB':>9} {'stats MiB':>10} {'ratio':>7} "
        f"{'html B':>9} {'pdf B':>9} {'json B':>9}"
    )
    lines = [header, "-" * len(header)]
    for r in results:
        lines.append(
            f"{r.rows:>12,} {r.baseline_seconds:>8.2f} {r.stats_seconds:>8.2f} "
            f"{r.stats_seconds / r.baseline_seconds:>7.1f} {r.render_seconds:>9.2f} "
            f"{r.baseline_mib:>9.0f} {r.stats_mib:>10.0f} {r.stats_mib / r.baseline_mib:>7.2f} "
            f"{r.html_bytes:>9,} {r.pdf_bytes:>9,} {r.json_bytes:>9,}"
        )
    return "\n".join(lines)


def format_growth(results: list[SizeResult]) -> str:
    """How much each output and the render time grew from the smallest to the largest size."""
    small, large = results[0], results[-1]
    parts = [
        f"html {large.html_bytes / small.html_bytes:.3f}",
        f"pdf {large.pdf_bytes / small.pdf_bytes:.3f}",
        f"json {large.json_bytes / small.json_bytes:.3f}",
        f"render time {large.render_seconds / small.render_seconds:.2f}",
    ]
    return (
        f"growth from {small.rows:,} to {large.rows:,} rows "
        f"({large.rows / small.rows:g}x): " + ", ".join(parts)
    )


def log(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


def parse_args(argv: list[str] | None = None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--rows",
        default=",".join(str(n) for n in DEFAULT_ROWS),
        help="comma-separated row counts (default 1000000,10000000)",
    )
    parser.add_argument("--repeat", type=int, default=1, help="runs per measurement; best is kept")
    parser.add_argument("--child", choices=["baseline", "brief"], help=argparse.SUPPRESS)
    parser.add_argument("--data", type=Path, help=argparse.SUPPRESS)
    return parser.parse_args(argv)


def main(argv: list[str] | None = None) -> int:
    args = parse_args(argv)
    if args.child:
        logging.basicConfig(level=logging.WARNING)
        measure = measure_baseline if args.child == "baseline" else measure_brief
        print(json.dumps(measure(args.data)))
        return 0
    logging.basicConfig(level=logging.INFO, format="%(message)s")
    sizes = sorted({int(n.replace("_", "")) for n in args.rows.split(",") if n.strip()})
    if not sizes or sizes[0] <= 0 or args.repeat < 1:
        raise SystemExit("--rows needs positive row counts and --repeat at least 1")
    results = [measure_size(rows, args.repeat) for rows in sizes]
    print(format_table(results))
    print(
        "resident MiB after imports, before any query (median): "
        + ", ".join(
            f"{r.rows:,} rows: baseline {r.baseline_idle_mib:.0f}, stats {r.stats_idle_mib:.0f}"
            for r in results
        )
    )
    if len(results) > 1:
        print(format_growth(results))
    return 0


if __name__ == "__main__":
    sys.exit(main())
