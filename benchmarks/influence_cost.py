"""Cost of the Cook's distance query beside the fits' own sums (a measurement, not a test).

On the benchmark's picks file (``make bench`` writes it; predictors items and distance_m,
target pick_minutes, groups as in ``run.py``), the frame is typed as a brief types it,
then three things are timed, interleaved, min of ``REPEATS``: the whole relationships
stage (``RelationshipAnalysis``, which now includes the influence query), the
fits' and correlations' exact-sums query (``centred_sums``) and the influence query
alone (``most_influential``). Run:
``.venv/bin/python benchmarks/influence_cost.py [path.parquet]``.
"""

from __future__ import annotations

import sys
import time
from dataclasses import replace
from pathlib import Path

from briefgen.config import parse_spec
from briefgen.source import open_source
from briefgen.stats.core.frame import build_frame
from briefgen.stats.core.references import shift_references
from briefgen.stats.correlation import centred_sums
from briefgen.stats.influence import most_influential
from briefgen.stats.regression import _centred, reference_scales
from briefgen.stats.relationships import RelationshipAnalysis
from briefgen.stats.target_kind import target_kind

HERE = Path(__file__).resolve().parent
DEFAULT = HERE / ".data" / "picks_1000000.parquet"
REPEATS = 5
CONFIG = """\
title: influence cost
data: {{path: {path}}}
target: pick_minutes
groups: [site, shift, product_line]
predictors: [items, distance_m]
"""


def main(path: Path) -> None:
    spec = parse_spec(CONFIG.format(path=path))
    source = open_source(spec)
    frame = build_frame(source.table, spec, label=source.label)
    frame = replace(frame, kind=target_kind(frame, spec.target_kind, spec.scale))
    table, columns = frame.table, list(frame.predictors)
    refs = shift_references(table, columns)
    sums = centred_sums(table, columns, refs)
    lines = {}
    for i in range(len(columns)):
        centred = _centred(sums, refs, i)
        lines[i] = {
            "slope": centred["sxy"] / centred["sxx"],
            "sxx": centred["sxx"],
            "sse": centred["sse"],
            "scales": reference_scales(refs, i),
        }
    (analysis,) = RelationshipAnalysis.plan(spec, frame)
    jobs = {
        "relationships stage": lambda: analysis(frame),
        "exact sums query": lambda: centred_sums(table, columns, refs),
        "influence query": lambda: most_influential(table, columns, refs, sums, lines),
    }
    best = dict.fromkeys(jobs, float("inf"))
    for _ in range(REPEATS):
        for name, job in jobs.items():
            start = time.perf_counter()
            job()
            best[name] = min(best[name], time.perf_counter() - start)
    for name, seconds in best.items():
        print(f"{name:>20}: {seconds:.3f} s")
    share = best["influence query"] / best["relationships stage"]
    print(f"influence / stage: {share:.1%}")
    print(most_influential(table, columns, refs, sums, lines))


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else DEFAULT)
