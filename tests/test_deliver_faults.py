"""Faults a nightly run meets: SIGKILL at any moment, a second run on the same folder.

The CLI runs as a subprocess. A small wrapper prints each publish step (from the
debug log publish.step writes) and, when asked, pauses there, so a kill can land
exactly between the final moves as well as at seeded random delays.
"""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd
import pytest
from folder_state import stray_entries, visible_brief

WRAPPER = """
import logging, os, sys, time
from briefgen.cli import main
pause = float(os.environ.get("STEP_PAUSE", "0"))
gate = os.environ.get("STEP_GATE")
class Steps(logging.Handler):
    def emit(self, record):
        if record.msg.startswith("publish step"):
            print("STEP", record.args[0], os.getpid(), flush=True)
            time.sleep(pause)
            # Hold at each step until the test opens the gate (a file), however slow the machine.
            deadline = time.monotonic() + 300
            while gate and not os.path.exists(gate) and time.monotonic() < deadline:
                time.sleep(0.05)
steps = logging.getLogger("briefgen.deliver.publish")
steps.setLevel(logging.DEBUG)
steps.addHandler(Steps())
steps.propagate = False
sys.exit(main(sys.argv[1:]))
"""
STEPS = [
    "write brief.html",
    "write stats.json",
    "rename staged folder",
    "switch current",
    "switched",
]


def _case(folder: Path, variant: int) -> Path:
    rows = 40
    pd.DataFrame(
        {
            "site": ["north", "south"] * (rows // 2),
            "minutes": [10.0 + variant + (i % 7) for i in range(rows)],
        }
    ).to_csv(folder / "data.csv", index=False)
    config = folder / "brief.yaml"
    config.write_text(
        f"title: Variant {variant}\ndata:\n  path: data.csv\ntarget: minutes\ngroups: [site]\n"
        "output:\n  dir: out\n  formats: [html, json]\n  keep: 3\n"
    )
    return config


def _start(
    config: Path, *extra: str, pause: float = 0.0, gate: Path | None = None
) -> subprocess.Popen:
    env = os.environ | {"SOURCE_DATE_EPOCH": "1796169600", "STEP_PAUSE": str(pause)}
    if gate is not None:
        env["STEP_GATE"] = str(gate)
    return subprocess.Popen(
        [sys.executable, "-c", WRAPPER, "--quiet", "build", str(config), *extra],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
    )


def _reference(tmp_path: Path, variant: int) -> dict[str, bytes]:
    folder = tmp_path / f"ref{variant}"
    folder.mkdir()
    process = _start(_case(folder, variant))
    assert process.wait() == 0, process.stderr.read()
    return visible_brief(folder / "out")


@pytest.mark.slow  # about 75 s: 22 complete or killed CLI runs
def test_sigkill_at_twenty_moments_leaves_one_whole_brief(tmp_path):
    references = {0: _reference(tmp_path, 0), 1: _reference(tmp_path, 1)}
    assert references[0] != references[1]
    work = tmp_path / "work"
    work.mkdir()
    config = _case(work, 0)
    assert _start(config).wait() == 0
    rng = random.Random(20261202)
    outcomes = {"previous": 0, "new": 0}
    for moment in range(20):
        before = visible_brief(work / "out")
        variant = 1 if before == references[0] else 0
        _case(work, variant)
        if moment % 2:  # at a publish step, the process paused there
            process = _start(config, pause=5.0)
            wanted = STEPS[(moment // 2) % len(STEPS)]
            for line in process.stdout:
                if line.startswith(f"STEP {wanted} "):
                    break
        else:  # at a seeded random moment of the whole run
            process = _start(config)
            time.sleep(rng.uniform(0.0, 2.5))
        process.send_signal(signal.SIGKILL)
        process.wait()
        after = visible_brief(work / "out")
        assert after in (before, references[variant])
        outcomes["previous" if after == before else "new"] += 1
        # What a killed run can leave is only ever hidden staging the next run sweeps.
        assert all(
            "/." in f"/{name}" or name.startswith("runs/") for name in stray_entries(work / "out")
        )
    assert _start(config).wait() == 0
    assert stray_entries(work / "out") == []
    assert len(os.listdir(work / "out" / "runs")) <= 3
    assert sum(outcomes.values()) == 20
    print("SIGKILL outcomes:", outcomes)


def test_a_second_run_exits_at_once_or_waits_and_never_interleaves(tmp_path):
    config = _case(tmp_path, 0)
    assert _start(config).wait() == 0
    # The first run holds at its first publish step until the gate file appears, so the
    # second run meets the lock however long its start-up takes on a loaded machine.
    gate = tmp_path / "gate"
    first = _start(config, gate=gate)
    assert next(iter(first.stdout)).startswith("STEP ")  # holding the lock, mid-publish
    second = _start(config)
    assert second.wait() == 5
    assert "is building into this folder" in " ".join(second.stderr.read().split())
    waiting = _start(config, "--wait", "300", pause=0.0)
    time.sleep(2.0)  # give the waiting run time to reach the lock (it passes either way)
    gate.touch()
    first_rest = first.stdout.read()
    assert first.wait() == 0
    waiting_steps = waiting.stdout.read()
    assert waiting.wait() == 0
    # The waiting run's first step comes after the first run's last: one run at a time.
    assert "switched" in first_rest and waiting_steps.startswith("STEP write")
    assert stray_entries(tmp_path / "out") == []
