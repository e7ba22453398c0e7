"""A plain, non-editable install carries its templates and demo: `briefgen demo` works without the repo."""

from __future__ import annotations

import os
import subprocess
import sys
import zipfile
from pathlib import Path

ROOT = Path(__file__).parents[1]


def test_wheel_installs_and_builds_the_demo(tmp_path):
    wheels = tmp_path / "wheels"
    subprocess.run(
        [
            sys.executable,
            "-m",
            "pip",
            "wheel",
            str(ROOT),
            "--no-deps",
            "--no-build-isolation",
            "-q",
            "-w",
            str(wheels),
        ],
        check=True,
        capture_output=True,
    )
    (wheel,) = wheels.glob("briefgen-*.whl")
    names = set(zipfile.ZipFile(wheel).namelist())
    for packaged in (
        "briefgen/templates/brief.html.j2",
        "briefgen/templates/brief.css",
        "briefgen/demo/deliveries.csv",
        "briefgen/demo/demo.yaml",
    ):
        assert packaged in names

    site = tmp_path / "site"
    subprocess.run(
        [
            sys.executable,
            "-m",
            "pip",
            "install",
            "--no-deps",
            "-q",
            "--target",
            str(site),
            str(wheel),
        ],
        check=True,
        capture_output=True,
    )
    env = os.environ | {"PYTHONPATH": str(site), "SOURCE_DATE_EPOCH": "1796169600"}
    where = subprocess.run(
        [sys.executable, "-c", "import briefgen; print(briefgen.__file__)"],
        cwd=tmp_path,
        env=env,
        check=True,
        capture_output=True,
        text=True,
    )
    assert where.stdout.strip().startswith(str(site))
    out = tmp_path / "out"
    subprocess.run(
        [sys.executable, "-m", "briefgen.cli", "demo", "--out", str(out)],
        cwd=tmp_path,
        env=env,
        check=True,
        capture_output=True,
    )
    # The stable names are links through `current` to the published run (deliver/publish.py).
    briefs = {"brief.html", "brief.pdf", "stats.json"}
    assert {p.name for p in out.iterdir()} == briefs | {"current", "runs", ".briefgen.lock"}
    assert all((out / name).stat().st_size > 0 for name in briefs)
