"""What a build says while it runs (issue 9 item 8, issue 8 item 6).

The pipeline only logs stage events; the command line draws them: a live list of
stages with elapsed seconds on a terminal (checked through a real pseudo-terminal and
through rich's forced-terminal console), plain UTC-timestamped lines otherwise (cron,
systemd), nothing with --quiet. Data text in a stage is printed as text, never markup.
"""

from __future__ import annotations

import io
import logging
import os
import pty
import re
import select
import subprocess
import sys
from pathlib import Path

import pandas as pd
from rich.console import Console

from briefgen.cli import _Stages, main

STAMP = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ briefgen: (.+)$")


def _case(folder: Path) -> Path:
    pd.DataFrame(
        {
            "site": ["north", "south", "east"] * 20,
            "distance": [float(i % 9) for i in range(60)],
            "minutes": [10.0 + (i % 9) * 2 + (i % 4) for i in range(60)],
        }
    ).to_csv(folder / "data.csv", index=False)
    config = folder / "brief.yaml"
    config.write_text(
        "title: Progress\ndata:\n  path: data.csv\ntarget: minutes\ngroups: [site]\n"
        "predictors: [distance]\noutput:\n  dir: out\n  formats: [html, json]\n"
    )
    return config


def test_under_a_scheduler_each_stage_is_one_timestamped_line(tmp_path, capsys):
    assert main(["build", str(_case(tmp_path))]) == 0
    lines = [line for line in capsys.readouterr().err.splitlines() if line.strip()]
    stages = [STAMP.match(line).group(1) for line in lines]  # every line is stamped
    assert stages[0] == "reading data.csv"
    for expected in (
        "statistics: group comparisons",
        "statistics: relationships with predictors",
        "rendering HTML",
        "writing stats.json",
        "publishing",
    ):
        assert expected in stages
    assert "rendering PDF" not in stages  # not configured
    assert stages[-1].startswith("done in ") and "reading data.csv " in stages[-1]


def test_quiet_prints_nothing_on_success(tmp_path, capsys):
    assert main(["--quiet", "build", str(_case(tmp_path))]) == 0
    captured = capsys.readouterr()
    assert captured.err == "" and captured.out == ""


def _stage_logger(console: Console) -> tuple[logging.Logger, _Stages]:
    logger = logging.getLogger("briefgen.stage.test")
    logger.propagate = False
    handler = _Stages(console)
    logger.handlers = [handler]
    logger.setLevel(logging.INFO)
    return logger, handler


def test_on_a_terminal_stages_show_their_time_and_data_text_stays_text():
    out = io.StringIO()
    logger, handler = _stage_logger(Console(file=out, force_terminal=True, width=100))
    logger.info("reading %s", "[bold]odd[/bold] \x1b[31mname.csv")
    logger.info("statistics: group comparisons")
    handler.finish(succeeded=True)
    shown = out.getvalue()
    assert "[bold]odd[/bold]" in shown  # markup in data is printed as typed
    assert "\x1b[31mname" not in shown  # an escape sequence from data never reaches the terminal
    assert "statistics: group comparisons" in shown
    assert shown.count("✓") >= 2 and re.search(r"\d+\.\d s", shown)
    assert "briefgen: reading" not in shown  # no log lines on a terminal


def test_a_failed_stage_is_not_marked_done():
    out = io.StringIO()
    logger, handler = _stage_logger(Console(file=out, force_terminal=True, width=100))
    logger.info("reading data.csv")
    handler.finish(succeeded=False)
    last_frame = out.getvalue().rsplit("\r", 1)[-1]
    assert "✓" not in last_frame


def test_through_a_pseudo_terminal_the_real_command_draws_stages(tmp_path):
    config = _case(tmp_path)
    leader, follower = pty.openpty()
    env = dict(os.environ, COLUMNS="100", TERM="xterm")
    process = subprocess.Popen(
        [sys.executable, "-m", "briefgen.cli", "build", str(config)],
        stdin=subprocess.DEVNULL,
        stdout=subprocess.DEVNULL,
        stderr=follower,
        env=env,
    )
    os.close(follower)
    chunks = []
    while True:
        ready, _, _ = select.select([leader], [], [], 120)
        if not ready:
            break
        try:
            chunk = os.read(leader, 65536)
        except OSError:  # the pty closes when the process ends
            break
        if not chunk:
            break
        chunks.append(chunk)
    os.close(leader)
    assert process.wait(timeout=120) == 0
    screen = b"".join(chunks).decode("utf-8", "replace")
    assert "statistics: group comparisons" in screen and "rendering HTML" in screen
    assert "✓" in screen and re.search(r"\d+\.\d s", screen)
    assert not re.search(r"Z briefgen: reading", screen)
