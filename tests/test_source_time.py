"""The time column: dates, timestamps, text and whole-number years read; nothing else guessed."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from briefgen.cli import main


def write_case(folder, when) -> str:
    """A small seeded data file with the given time column, and a JSON-only config."""
    rng = np.random.default_rng(17)
    frame = pd.DataFrame({"when": when, "minutes": rng.normal(30, 4, len(when))})
    frame.to_csv(folder / "data.csv", index=False)
    config = folder / "brief.yaml"
    config.write_text(
        "title: Time check\ndata:\n  path: data.csv\ntarget: minutes\ntime: when\n"
        "output:\n  dir: out\n  formats: [json]\n"
    )
    return str(config)


def test_numeric_year_column_builds_a_yearly_trend(tmp_path):
    years = np.repeat(np.arange(1990, 2011), 6)
    assert main(["build", write_case(tmp_path, years)]) == 0
    trend = json.loads((tmp_path / "out" / "stats.json").read_text())["stats"]["trend"]
    assert (trend["period"], trend["resolution"], trend["partial_periods"]) == (
        "year",
        "year",
        "none",
    )
    assert len(trend["periods"]) == 21 and trend["periods"][0]["start"] == "1990-01-01"
    assert trend["rows_without_time"] == 0


@pytest.mark.parametrize(
    ("when", "shown"),
    [(["mid March", "late March"] * 10, "'late March'"), (list(range(1, 21)), "'1'")],
)
def test_no_value_reads_as_a_date(tmp_path, capsys, when, shown):
    assert main(["build", write_case(tmp_path, when)]) == 3
    err = " ".join(capsys.readouterr().err.split())
    assert "column 'when' named by 'time' has no value that reads as a date" in err
    assert f"one value is {shown}" in err and "2024-03-31" in err and "1000 to 9999" in err
    assert "Traceback" not in err
