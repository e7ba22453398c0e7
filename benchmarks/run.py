"""Speed and memory of ``briefgen build`` against a floor and a hand-written script.

For each row count and file format the invented pick jobs of ``data.py`` are
measured three ways, each in a fresh child process whose wall time and peak
resident memory (``ru_maxrss`` of that child, from ``os.wait4``) are recorded:

* build: ``briefgen build`` writing brief.html, brief.pdf and stats.json;
* floor: one DuckDB query computing the brief's per-group aggregates (``floor.py``);
* by hand: a careful pandas + matplotlib script drawing the same charts (``by_hand.py``).

The table gives seconds, MiB and the ratios build/floor and build/by hand, all from
the same run, so they mean something on a busy machine too. ``--rows 100000000
--format parquet`` makes 100M rows and runs build and floor only.

Run ``make bench`` or ``.venv/bin/python benchmarks/run.py --rows 1000000``.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

HERE = Path(__file__).resolve().parent
DEFAULT_ROWS = (1_000_000, 10_000_000)
# Above this many rows the hand-written script (which holds every row in pandas) is skipped.
BY_HAND_UP_TO = 20_000_000
BUILT_ON_EPOCH = "1796169600"  # a fixed build date: the same PDF bytes from run to run
MIB = 1024 * 1024

CONFIG = """\
title: Pick jobs (benchmark)
data:
  path: {path}
target: pick_minutes
groups: [site, shift, product_line]
predictors: [items, distance_m]
time: started_at
log_target: true
output:
  dir: {work}/out
  formats: [html, pdf, json]
"""


@dataclass(frozen=True, slots=True)
class Run:
    """One child process: wall seconds, CPU seconds, peak resident MiB, and what it printed."""

    seconds: float
    cpu_seconds: float
    peak_mib: float
    output: str


def run_child(command: list[str], env: dict[str, str] | None = None) -> Run:
    """Run ``command``, wait for it with ``os.wait4`` and return its time and peak memory.

    ``ru_maxrss`` from ``wait4`` belongs to that child alone. Linux carries the peak
    across ``exec`` from the parent's address space, so this parent imports nothing
    heavy (no pandas, no engine) and stays far below what it measures.
    """
    started = time.perf_counter()
    child = subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)
    output = child.stdout.read().decode()
    errors = child.stderr.read().decode()
    _, status, usage = os.wait4(child.pid, 0)
    seconds = time.perf_counter() - started
    child.returncode = os.waitstatus_to_exitcode(status)
    if child.returncode != 0:
        raise SystemExit(f"{' '.join(command)} failed ({child.returncode}):\n{errors[-2000:]}")
    return Run(seconds, usage.ru_utime + usage.ru_stime, usage.ru_maxrss * 1024 / MIB, output)


@dataclass(frozen=True, slots=True)
class Measured:
    """Everything measured for one row count and format (best time, highest peak)."""

    rows: int
    data_format: str
    file_mib: float
    build: tuple[Run, ...]
    before: tuple[Run, ...]
    floor: tuple[Run, ...]
    by_hand: tuple[Run, ...]
    outputs: dict[str, int]

    def best_run(self) -> Run:
        """The fastest build (for the fixed cost, where only its time is used)."""
        return min(self.build, key=lambda r: r.seconds)

    @staticmethod
    def best(runs: tuple[Run, ...]) -> tuple[float, float, float] | None:
        """(least wall seconds, least CPU seconds, highest peak MiB) over the repeats."""
        if not runs:
            return None
        return (
            min(r.seconds for r in runs),
            min(r.cpu_seconds for r in runs),
            max(r.peak_mib for r in runs),
        )


ENTRY = (
    "import sys, briefgen.cli as cli; cli.run() if hasattr(cli, 'run') else sys.exit(cli.main())"
)


def load() -> str:
    return " ".join(Path("/proc/loadavg").read_text().split()[:3])


def measure(
    rows: int,
    data_format: str,
    repeat: int,
    with_hand: bool,
    before: Path | None,
    extra: int = 0,
) -> Measured:
    python = sys.executable
    made = run_child(
        [python, str(HERE / "data.py"), "--rows", str(rows), "--format", data_format]
        + ["--extra", str(extra)]
    )
    path = Path(made.output.strip().splitlines()[-1])
    with path.open("rb") as stream:  # into the page cache, so no measurement pays the disk
        while stream.read(64 * MIB):
            pass
    work = Path(tempfile.mkdtemp(prefix="briefgen-bench-"))
    try:
        config = work / "brief.yaml"
        config.write_text(CONFIG.format(path=path, work=work), encoding="utf-8")
        env = dict(os.environ, SOURCE_DATE_EPOCH=BUILT_ON_EPOCH)
        # What the installed ``briefgen`` command runs, with the tree on PYTHONPATH: an older
        # tree (``--before``) has no ``run`` and exits through ``main``, as its command did.
        # -P: without it ``-c`` puts the working folder first on sys.path, and run from a
        # checkout that folder's package would shadow the ``--before`` tree.
        briefgen = [python, "-P", "-c", ENTRY]
        build, earlier, floor, hand = [], [], [], []
        for round_number in range(1, repeat + 1):
            log(f"{rows:,} {data_format}, round {round_number}/{repeat} (load {load()}): build")
            build.append(run_child([*briefgen, "--quiet", "build", str(config)], env))
            if before is not None:
                log(f"{rows:,} {data_format}: build with {before}")
                older = dict(env, PYTHONPATH=str(before))
                earlier.append(run_child([*briefgen, "--quiet", "build", str(config)], older))
            log(f"{rows:,} {data_format}: floor")
            floor.append(run_child([python, str(HERE / "floor.py"), str(path)]))
            if with_hand:
                log(f"{rows:,} {data_format}: by hand")
                hand.append(
                    run_child([python, str(HERE / "by_hand.py"), str(path), str(work / "hand")])
                )
        outputs = {
            name: (work / "out" / name).stat().st_size
            for name in ("brief.html", "brief.pdf", "stats.json")
        }
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return Measured(
        rows,
        data_format,
        path.stat().st_size / MIB,
        tuple(build),
        tuple(earlier),
        tuple(floor),
        tuple(hand),
        outputs,
    )


FIXED_ROWS = 10_000


def measure_fixed(repeat: int) -> Run:
    """The document's fixed cost: the same build over 10,000 rows, where reading and
    statistics take well under a second and start-up, figures and the PDF are the rest."""
    return measure(FIXED_ROWS, "parquet", repeat, with_hand=False, before=None).best_run()


def format_table(results: list[Measured], fixed: Run | None = None) -> str:
    """One line per row count and format: wall and CPU seconds, peak MiB, ratios, output sizes."""
    header = (
        f"{'rows':>11} {'format':>7} | {'build s':>7} {'cpu':>6} {'MiB':>5} | "
        f"{'floor s':>7} {'cpu':>5} {'MiB':>5} | {'hand s':>6} {'cpu':>5} {'MiB':>5} | "
        f"{'b/floor':>7} {'cpu':>5} {'b/hand':>6} {'b-2f s':>6} {'(b-fix)/f':>9} | "
        f"{'html B':>8} {'pdf B':>8} {'json B':>8}"
    )
    lines, befores = [header, "-" * len(header)], []
    for m in results:
        build_s, build_cpu, build_mib = m.best(m.build)
        floor_s, floor_cpu, floor_mib = m.best(m.floor)
        hand = m.best(m.by_hand)
        hand_cells = (
            f"{hand[0]:>6.1f} {hand[1]:>5.1f} {hand[2]:>5.0f}"
            if hand
            else f"{'-':>6} {'-':>5} {'-':>5}"
        )
        ratio_hand = f"{build_s / hand[0]:>6.2f}" if hand else f"{'-':>6}"
        beyond = f"{(build_s - fixed.seconds) / floor_s:>9.1f}" if fixed else f"{'-':>9}"
        lines.append(
            f"{m.rows:>11,} {m.data_format:>7} | {build_s:>7.1f} {build_cpu:>6.1f} {build_mib:>5.0f} | "
            f"{floor_s:>7.2f} {floor_cpu:>5.1f} {floor_mib:>5.0f} | {hand_cells} | "
            f"{build_s / floor_s:>7.1f} {build_cpu / floor_cpu:>5.1f} {ratio_hand} "
            f"{build_s - 2 * floor_s:>6.1f} {beyond} | {m.outputs['brief.html']:>8,} "
            f"{m.outputs['brief.pdf']:>8,} {m.outputs['stats.json']:>8,}"
        )
        if m.before:
            before_s, before_cpu, before_mib = m.best(m.before)
            befores.append(
                f"{m.rows:>11,} {m.data_format:>7}: before {before_s:.1f} s (cpu {before_cpu:.1f} s), "
                f"{before_mib:.0f} MiB; now {build_s:.1f} s (cpu {build_cpu:.1f} s), {build_mib:.0f} "
                f"MiB: {before_s / build_s:.2f}x faster (cpu {before_cpu / build_cpu:.2f}x), "
                f"{before_mib / build_mib:.2f}x less memory"
            )
    if fixed:
        lines.append(
            f"fixed cost: the same build over {FIXED_ROWS:,} rows took {fixed.seconds:.1f} s "
            f"(cpu {fixed.cpu_seconds:.1f} s, {fixed.peak_mib:.0f} MiB); (b-fix)/f is the build "
            "less that, over the floor"
        )
    return "\n".join(lines + ([""] + befores if befores else []))


def format_growth(results: list[Measured]) -> list[str]:
    """Per format, how peak memory and output sizes grew from the fewest rows to the most."""
    lines = []
    for data_format in sorted({m.data_format for m in results}):
        sized = sorted((m for m in results if m.data_format == data_format), key=lambda m: m.rows)
        if len(sized) < 2:
            continue
        small, large = sized[0], sized[-1]
        grow = [f"build peak {large.best(large.build)[2] / small.best(small.build)[2]:.2f}x"]
        grow += [
            f"{name} {large.outputs[name] / small.outputs[name]:.3f}x" for name in small.outputs
        ]
        lines.append(
            f"{data_format}: from {small.rows:,} to {large.rows:,} rows "
            f"({large.rows / small.rows:g}x): " + ", ".join(grow)
        )
    return lines


def log(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


def parse_args(argv: list[str] | None = None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--rows",
        default=",".join(str(n) for n in DEFAULT_ROWS),
        help="comma-separated row counts (default 1000000,10000000)",
    )
    parser.add_argument(
        "--format", default="csv,parquet", help="csv, parquet or both (default csv,parquet)"
    )
    parser.add_argument(
        "--repeat", type=int, default=1, help="runs per measurement; best time kept"
    )
    parser.add_argument(
        "--before",
        type=Path,
        help="also build with the briefgen package in this folder (for example "
        "`git archive main briefgen | tar -x -C DIR`), for before/after in one run",
    )
    parser.add_argument(
        "--extra",
        type=int,
        default=0,
        help="add this many columns the config does not name, as a wide export has",
    )
    return parser.parse_args(argv)


def main(argv: list[str] | None = None) -> int:
    args = parse_args(argv)
    sizes = sorted({int(n.replace("_", "")) for n in args.rows.split(",") if n.strip()})
    formats = [f.strip() for f in args.format.split(",") if f.strip()]
    if not sizes or sizes[0] <= 0 or args.repeat < 1 or not set(formats) <= {"csv", "parquet"}:
        raise SystemExit("--rows needs positive counts, --format csv and/or parquet, --repeat ≥ 1")
    if args.extra < 0:
        raise SystemExit("--extra needs a count of columns, 0 or more")
    started_load = load()
    log(f"fixed cost: {FIXED_ROWS:,} rows (load {load()})")
    fixed = measure_fixed(args.repeat)
    results = []
    for rows in sizes:
        for data_format in formats:
            results.append(
                measure(
                    rows,
                    data_format,
                    args.repeat,
                    rows <= BY_HAND_UP_TO,
                    args.before,
                    args.extra,
                )
            )
            log(format_table(results, fixed))  # so far, in case a later size fails
    wide = f"; {args.extra} extra columns no config names" if args.extra else ""
    print(f"{os.cpu_count()} cores; load average at start {started_load}, at end {load()}{wide}")
    print(format_table(results, fixed))
    for line in format_growth(results):
        print(line)
    return 0


if __name__ == "__main__":
    sys.exit(main())
