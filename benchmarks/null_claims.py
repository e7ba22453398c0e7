"""How often a brief claims an effect on pure noise, and how often it finds a planted one.

Each brief here is built from a seeded data set whose target is independent of
every column the config names (the null), or carries three modest planted
effects (the power runs). The brief "claims a real effect" when any finding in
its stats.json has claim ``difference``, ``rise`` or ``fall`` (README, stats.json
reference). On the null the share of such briefs is the brief's false-claim
rate, the family-wise error rate of page 1; DESIGN.md's target is at most 5%.

Run ``.venv/bin/python benchmarks/null_claims.py`` (see benchmarks/README.md);
``tests/test_null_claims.py`` imports this module for a small and a large check.
"""

from __future__ import annotations

import argparse
import concurrent.futures
import datetime as dt
import json
import math
import sys
import tempfile
import time
from collections import Counter
from collections.abc import Callable, Iterable, Sequence
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import yaml

SHAPES = ("normal", "lognormal")
DEFAULT_SIZES = (200, 2_000, 20_000)
# Briefs per shape and size: fewer at 20,000 rows, where one brief takes longest.
DEFAULT_SEEDS = {200: 40, 2_000: 40, 20_000: 20}
CLAIMS = frozenset({"difference", "rise", "fall"})
GROUP_LEVELS = {"g2": 2, "g4": 4, "g8": 8}
PREDICTORS = ("x1", "x2")
SPAN_DAYS = 90
START = dt.date(2026, 7, 1)
BUILT_ON = "2026-10-01"
# z for a two-sided 95% interval.
Z95 = 1.959963984540054
# The text the fit finding appends when a slope-by-group F test passes. It is said
# without changing the finding's claim, so it is counted apart (text match, fragile).
SLOPE_SENTENCE = "The slope is not the same everywhere"


@dataclass(frozen=True, slots=True)
class Effects:
    """Planted effects on the latent normal scale, in units of the noise's sd.

    ``group_shift``: level ``B`` of the 4-level group ``g4`` is shifted up.
    ``slope``: the latent target rises by this much per sd of ``x1``
    (r = slope / sqrt(1 + slope²) when nothing else is planted).
    ``trend``: the latent target rises by this much from the first day to the last.
    For the lognormal shape the latent value is exponentiated, so each effect is a
    multiplicative one on the target.
    """

    name: str
    group_shift: float = 0.0
    slope: float = 0.0
    trend: float = 0.0

    def planted(self) -> dict[str, str]:
        """Finding key ─► the claim that detects the planted effect there."""
        keys = {}
        if self.group_shift:
            keys["group-g4"] = "difference"
        if self.slope:
            keys["fit-x1"] = "rise" if self.slope > 0 else "fall"
        if self.trend:
            keys["trend"] = "rise" if self.trend > 0 else "fall"
        return keys


NULL = Effects("null")
# r ≈ 0.15 for x1: 0.1517 / sqrt(1 + 0.1517²) = 0.150.
MODEST = Effects("modest", group_shift=0.3, slope=0.1517, trend=0.3)


@dataclass(frozen=True, slots=True)
class Task:
    """One brief to build: the data's shape, rows, seed and planted effects."""

    shape: str
    n: int
    seed: int
    effects: Effects = NULL


@dataclass(frozen=True, slots=True)
class Outcome:
    """What one brief's stats.json said: each finding's key, kind and claim."""

    task: Task
    findings: tuple[tuple[str, str, str], ...]
    slope_sentence: bool
    seconds: float

    @property
    def claimed(self) -> tuple[tuple[str, str, str], ...]:
        """Findings that claim a real effect."""
        return tuple(f for f in self.findings if f[2] in CLAIMS)

    @property
    def claims_effect(self) -> bool:
        return bool(self.claimed)

    @property
    def claims_in_words(self) -> bool:
        """A claimed effect, or the slope-differs sentence, which claims one without a claim field."""
        return self.claims_effect or self.slope_sentence

    def detected(self, key: str, claim: str) -> bool:
        return any(k == key and c == claim for k, _, c in self.findings)

    def claims_elsewhere(self) -> bool:
        """A claim at a key where nothing was planted: a false claim beside real ones."""
        planted = self.task.effects.planted()
        return any(k not in planted for k, _, _ in self.claimed)


def generate(task: Task) -> pd.DataFrame:
    """A seeded data set: three groups, two predictors, a date over 90 days, one target.

    Groups get equal sizes in a random order, so they are independent of the
    target and of each other; predictors are standard normal. The target is
    ``50 + 10·z`` (normal) or ``exp(z)`` (lognormal, skewness about 6), where z is
    standard normal noise plus the planted effects.
    """
    rng = np.random.default_rng([task.seed, task.n, SHAPES.index(task.shape)])
    n = task.n
    frame = {}
    for name, levels in GROUP_LEVELS.items():
        codes = rng.permutation(np.arange(n) % levels)
        frame[name] = np.array([chr(ord("A") + c) for c in range(levels)])[codes]
    for name in PREDICTORS:
        frame[name] = rng.standard_normal(n)
    days = rng.integers(0, SPAN_DAYS, n)
    frame["day"] = pd.to_datetime(START) + pd.to_timedelta(days, unit="D")
    effects = task.effects
    z = rng.standard_normal(n)
    z = z + effects.group_shift * (frame["g4"] == "B")
    z = z + effects.slope * frame["x1"]
    z = z + effects.trend * (days / (SPAN_DAYS - 1) - 0.5)
    frame["y"] = 50 + 10 * z if task.shape == "normal" else np.exp(z)
    return pd.DataFrame(frame)


def config_for(task: Task, data_path: Path, out_dir: Path) -> dict:
    """A config naming every group, two cross pairs, both predictors and the date.

    The pairs cross g2 with the others: g4 × g8 has 32 cells, about 6 rows each at
    n = 200, under `min_cell`, so its standout test would not run there.
    """
    return {
        "title": f"Null simulation {task.shape} n={task.n} seed={task.seed}",
        "data": {"path": str(data_path)},
        "target": "y",
        "groups": list(GROUP_LEVELS),
        "predictors": list(PREDICTORS),
        "time": "day",
        "cross": [["g2", "g4"], ["g2", "g8"]],
        # The log-scale fits run where the target is positive and skewed, as a user would ask.
        "log_target": task.shape == "lognormal",
        "output": {"dir": str(out_dir), "formats": ["json"]},
    }


def run_brief(task: Task) -> Outcome:
    """Write the data and config into a temporary folder, build stats.json, read its findings."""
    import logging

    from briefgen.config import load_spec
    from briefgen.pipeline import build_brief

    logging.getLogger("briefgen").setLevel(logging.WARNING)
    started = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="briefgen-null-") as folder:
        root = Path(folder)
        data_path = root / "data.csv"
        generate(task).to_csv(data_path, index=False, date_format="%Y-%m-%d")
        config_path = root / "brief.yaml"
        config_path.write_text(yaml.safe_dump(config_for(task, data_path, root / "out")))
        result = build_brief(load_spec(config_path), built_on=BUILT_ON)
        [stats_path] = [p for p in result.files if p.name == "stats.json"]
        payload = json.loads(stats_path.read_text(encoding="utf-8"))
    findings = tuple((f["key"], f["kind"], f["claim"]) for f in payload["findings"])
    sentence = any(SLOPE_SENTENCE in (f.get("text") or "") for f in payload["findings"])
    return Outcome(task, findings, sentence, time.perf_counter() - started)


def simulate(
    tasks: Sequence[Task],
    workers: int = 1,
    progress: Callable[[int, int, Outcome], None] | None = None,
) -> list[Outcome]:
    """Build every task's brief, in ``workers`` processes; outcomes in task order."""
    outcomes: dict[Task, Outcome] = {}
    if workers <= 1:
        for task in tasks:
            outcomes[task] = run_brief(task)
            if progress:
                progress(len(outcomes), len(tasks), outcomes[task])
    else:
        with concurrent.futures.ProcessPoolExecutor(max_workers=workers) as pool:
            futures = [pool.submit(run_brief, task) for task in tasks]
            for future in concurrent.futures.as_completed(futures):
                outcome = future.result()
                outcomes[outcome.task] = outcome
                if progress:
                    progress(len(outcomes), len(tasks), outcome)
    return [outcomes[task] for task in tasks]


def tasks_for(
    shapes: Iterable[str], sizes: Iterable[int], seeds: dict[int, int], effects: Effects
) -> list[Task]:
    return [
        Task(shape, n, seed, effects) for shape in shapes for n in sizes for seed in range(seeds[n])
    ]


def wilson(successes: int, trials: int, z: float = Z95) -> tuple[float, float]:
    """Wilson (1927) score interval for a binomial proportion."""
    if trials == 0:
        return (math.nan, math.nan)
    share = successes / trials
    denominator = 1 + z * z / trials
    centre = (share + z * z / (2 * trials)) / denominator
    half = z * math.sqrt(share * (1 - share) / trials + z * z / (4 * trials * trials)) / denominator
    return (max(0.0, centre - half), min(1.0, centre + half))


def fired(outcomes: Iterable[Outcome]) -> Counter[str]:
    """How many briefs claimed at each finding key (``kind:key``), plus the slope sentence."""
    counts: Counter[str] = Counter()
    for outcome in outcomes:
        for key, kind, _ in set(outcome.claimed):
            counts[f"{kind}:{key}"] += 1
        if outcome.slope_sentence:
            counts["text:slope-differs"] += 1
    return counts


def _cells(outcomes: Sequence[Outcome]) -> dict[tuple[str, int], list[Outcome]]:
    cells: dict[tuple[str, int], list[Outcome]] = {}
    for outcome in outcomes:
        cells.setdefault((outcome.task.shape, outcome.task.n), []).append(outcome)
    return cells


def _share(k: int, n: int) -> str:
    low, high = wilson(k, n)
    return f"{k / n:6.1%} [{low:5.1%}, {high:5.1%}]"


def null_table(outcomes: Sequence[Outcome]) -> str:
    """Shape × n ─► briefs, share claiming any effect with its Wilson interval, what fired."""
    lines = [
        f"{'shape':<10}{'n':>7}{'briefs':>7}  {'any claim [95% Wilson]':<26}"
        f"{'or slope sentence':<26}fired (briefs claiming, by kind:key)",
        "-" * 150,
    ]
    for (shape, n), cell in _cells(outcomes).items():
        k = sum(o.claims_effect for o in cell)
        words = sum(o.claims_in_words for o in cell)
        kinds = ", ".join(f"{name} {count}" for name, count in sorted(fired(cell).items()))
        lines.append(
            f"{shape:<10}{n:>7,}{len(cell):>7}  {_share(k, len(cell)):<26}"
            f"{_share(words, len(cell)):<26}{kinds or '-'}"
        )
    return "\n".join(lines)


def power_table(outcomes: Sequence[Outcome]) -> str:
    """Shape × n ─► share detecting each planted effect, and share claiming anything else."""
    if not outcomes:
        return ""
    planted = outcomes[0].task.effects.planted()
    heads = [f"{key} {claim}" for key, claim in planted.items()]
    lines = [
        f"{'shape':<10}{'n':>7}{'briefs':>7}  "
        + "".join(f"{h:<26}" for h in heads)
        + f"{'other claim':<26}fired elsewhere",
        "-" * 150,
    ]
    for (shape, n), cell in _cells(outcomes).items():
        shares = [sum(o.detected(key, c) for o in cell) for key, c in planted.items()]
        other = sum(o.claims_elsewhere() for o in cell)
        elsewhere = {
            name: count
            for name, count in fired(cell).items()
            if name.split(":", 1)[1] not in planted
        }
        kinds = ", ".join(f"{name} {count}" for name, count in sorted(elsewhere.items()))
        lines.append(
            f"{shape:<10}{n:>7,}{len(cell):>7}  "
            + "".join(f"{_share(k, len(cell)):<26}" for k in shares)
            + f"{_share(other, len(cell)):<26}{kinds or '-'}"
        )
    return "\n".join(lines)


def load(path: Path) -> list[Outcome]:
    """Outcomes saved by ``--json``, to print the tables again without building."""
    outcomes = []
    for row in json.loads(path.read_text(encoding="utf-8")):
        task = row["task"]
        effects = Effects(**task.pop("effects"))
        findings = tuple(tuple(f) for f in row["findings"])
        outcomes.append(
            Outcome(Task(**task, effects=effects), findings, row["slope_sentence"], row["seconds"])
        )
    return outcomes


def print_tables(outcomes: Sequence[Outcome]) -> None:
    null = [o for o in outcomes if o.task.effects == NULL]
    power = [o for o in outcomes if o.task.effects == MODEST]
    print("False claims on pure noise (share of briefs claiming any effect)")
    print(null_table(null))
    if power:
        print()
        print(
            f"Power: group g4 level B +{MODEST.group_shift} sd, x1 slope {MODEST.slope} sd/sd "
            f"(r ≈ 0.15), trend +{MODEST.trend} sd over {SPAN_DAYS} days"
        )
        print(power_table(power))


def _parse_seeds(text: str | None, sizes: Sequence[int]) -> dict[int, int]:
    """``40`` for every size, or ``200:40,2000:40,20000:20``; default DEFAULT_SEEDS."""
    if text is None:
        return {n: DEFAULT_SEEDS.get(n, 20) for n in sizes}
    if ":" not in text:
        return dict.fromkeys(sizes, int(text))
    given = {int(n): int(k) for n, k in (part.split(":") for part in text.split(","))}
    return {n: given.get(n, DEFAULT_SEEDS.get(n, 20)) for n in sizes}


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", help="briefs per shape and size: 40, or 200:40,20000:10")
    parser.add_argument("--sizes", default=",".join(map(str, DEFAULT_SIZES)))
    parser.add_argument("--shapes", default=",".join(SHAPES))
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--no-power", action="store_true", help="run the null briefs only")
    parser.add_argument("--json", type=Path, help="write every brief's outcome here")
    parser.add_argument("--from-json", type=Path, help="print the tables of a saved run")
    args = parser.parse_args(argv)
    if args.from_json:
        print_tables(load(args.from_json))
        return 0
    sizes = [int(s) for s in args.sizes.split(",")]
    shapes = [s for s in args.shapes.split(",") if s]
    unknown = set(shapes) - set(SHAPES)
    if unknown:
        parser.error(f"unknown shape {sorted(unknown)[0]!r}; use {', '.join(SHAPES)}")
    seeds = _parse_seeds(args.seeds, sizes)
    tasks = tasks_for(shapes, sizes, seeds, NULL)
    if not args.no_power:
        tasks += tasks_for(shapes, sizes, seeds, MODEST)
    started = time.perf_counter()

    def progress(done: int, total: int, outcome: Outcome) -> None:
        task = outcome.task
        print(
            f"[{done}/{total} {time.perf_counter() - started:6.0f} s] {task.effects.name} "
            f"{task.shape} n={task.n} seed={task.seed}: {len(outcome.claimed)} claims "
            f"({outcome.seconds:.1f} s)",
            file=sys.stderr,
            flush=True,
        )

    outcomes = simulate(tasks, args.workers, progress)
    print_tables(outcomes)
    print(f"\n{len(outcomes)} briefs in {time.perf_counter() - started:.0f} s", file=sys.stderr)
    if args.json:
        rows = [asdict(o) | {"claims_effect": o.claims_effect} for o in outcomes]
        args.json.write_text(json.dumps(rows, indent=1) + "\n", encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
