"""The command line: exit codes, one clear sentence per bad input, and no damage to the last brief."""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path

import pandas as pd
import pytest
from folder_state import tree
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from briefgen.cli import main

ROWS = 40


def _write_case(folder: Path, config_extra: str = "", **overrides) -> Path:
    """A tiny data file and config; reference data for these tests is generated, not real."""
    frame = pd.DataFrame(
        {
            "site": ["north", "south"] * (ROWS // 2),
            "distance": [float(i % 7) for i in range(ROWS)],
            "minutes": [10.0 + (i % 7) * 2 + (i % 3) for i in range(ROWS)],
            "label": ["x"] * ROWS,
        }
    )
    frame.to_csv(folder / "data.csv", index=False)
    text = {
        "title": "CLI check",
        "path": "data.csv",
        "target": "minutes",
        "groups": "[site]",
        "predictors": "[distance]",
        "formats": "[html, json]",
    } | overrides
    config = folder / "brief.yaml"
    config.write_text(
        f"title: {text['title']}\n"
        f"data:\n  path: {text['path']}\n"
        f"target: {text['target']}\n"
        f"groups: {text['groups']}\n"
        f"predictors: {text['predictors']}\n"
        f"output:\n  dir: out\n  formats: {text['formats']}\n" + config_extra
    )
    return config


def test_build_writes_the_brief(tmp_path, capsys):
    config = _write_case(tmp_path)
    assert main(["build", str(config)]) == 0
    assert (tmp_path / "out" / "brief.html").stat().st_size > 0
    assert (tmp_path / "out" / "stats.json").stat().st_size > 0
    assert not (tmp_path / "out" / "brief.pdf").exists()


@pytest.mark.parametrize(
    ("overrides", "expected", "code"),
    [
        (
            {"target": "minuts"},
            "column 'minuts' named by 'target' is not in the data; did you mean 'minutes'?",
            3,
        ),
        (
            {"target": "label"},
            "column 'label' named by 'target' holds text, not numbers (one value is 'x')",
            3,
        ),
        ({"groups": "[sitee]"}, "named by 'groups[0]' is not in the data; did you mean 'site'?", 3),
        ({"path": "missing.csv"}, "missing.csv: data file not found", 3),
        ({"formats": "[html, docx]"}, "key 'output.formats.1' is invalid", 2),
    ],
)
def test_bad_input_gets_one_sentence_and_nonzero_exit(tmp_path, capsys, overrides, expected, code):
    config = _write_case(tmp_path, **overrides)
    assert main(["build", str(config)]) == code
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert expected in " ".join(err.split())


def test_unknown_key_names_the_line(tmp_path, capsys):
    config = _write_case(tmp_path, config_extra="predictor: [x]\n")
    assert main(["build", str(config)]) == 2
    err = " ".join(capsys.readouterr().err.split())
    assert "brief.yaml line 10: unknown key 'predictor'; did you mean 'predictors'?" in err


def test_failed_build_leaves_the_previous_brief_untouched(tmp_path, capsys):
    config = _write_case(tmp_path)
    assert main(["build", str(config)]) == 0
    before = tree(tmp_path / "out")
    shutil.copy(tmp_path / "data.csv", tmp_path / "good.csv")
    (tmp_path / "data.csv").write_text("site,distance,minutes,label\nnorth,1,not-a-number,x\n")
    assert main(["build", str(config)]) != 0
    assert tree(tmp_path / "out") == before


def test_empty_target_is_reported(tmp_path, capsys):
    config = _write_case(tmp_path)
    (tmp_path / "data.csv").write_text("site,distance,minutes,label\nnorth,1,,x\nsouth,2,,x\n")
    assert main(["build", str(config)]) != 0
    err = " ".join(capsys.readouterr().err.split())
    assert "Traceback" not in err and "minutes" in err


def test_check_validates_without_building(tmp_path, capsys):
    config = _write_case(tmp_path)
    assert main(["check", str(config)]) == 0
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        ("site,distance,minutes,label\n", "has no data rows"),
        (
            "site,distance,minutes,label\nnorth,1,2,x,9,9\nsouth\n",
            "header could not be split into columns",
        ),
    ],
)
def test_malformed_files_get_a_sentence(tmp_path, capsys, content, expected):
    config = _write_case(tmp_path)
    (tmp_path / "data.csv").write_text(content)
    assert main(["build", str(config)]) == 3
    err = " ".join(capsys.readouterr().err.split())
    assert expected in err and "Traceback" not in err


def test_unparseable_dates_are_counted_not_fatal(tmp_path, capsys):
    config = _write_case(tmp_path, config_extra="time: when\n")
    frame = pd.read_csv(tmp_path / "data.csv")
    frame["when"] = [
        "2026-01-0" + str(1 + i % 9) if i % 5 else "not a date" for i in range(len(frame))
    ]
    frame.to_csv(tmp_path / "data.csv", index=False)
    assert main(["build", str(config)]) == 0
    stats = json.loads((tmp_path / "out" / "stats.json").read_text())["stats"]
    assert stats["trend"]["rows_without_time"] == ROWS // 5
    assert any(
        d["reason"] == "no usable date" and d["rows"] == ROWS // 5
        for d in stats["accounting"]["dropped"]
    )


@settings(
    max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    values=st.lists(
        st.one_of(st.none(), st.floats(allow_nan=True, allow_infinity=True, width=32)),
        min_size=1,
        max_size=8,
    ),
    levels=st.lists(st.sampled_from(["a", "b", "c", None]), min_size=8, max_size=8),
    offset=st.sampled_from([0.0, 1e9, 1e12]),
)
def test_tiny_and_odd_data_never_crash(tmp_path_factory, values, levels, offset):
    """Whatever the rows hold, the answer is a brief or one sentence, never an internal error."""
    folder = tmp_path_factory.mktemp("odd")
    n = len(values)
    frame = pd.DataFrame(
        {
            "site": levels[:n],
            "distance": [float(i) for i in range(n)],
            "minutes": [None if v is None else offset + v for v in values],
            "when": [f"2026-03-{1 + i:02d}" for i in range(n)],
        }
    )
    frame.to_parquet(folder / "data.parquet", index=False)
    (folder / "brief.yaml").write_text(
        "title: odd\ndata:\n  path: data.parquet\ntarget: minutes\ngroups: [site]\n"
        "predictors: [distance]\ntime: when\nlog_target: true\noutput:\n  dir: out\n  formats: [html, json]\n"
    )
    assert main(["build", str(folder / "brief.yaml")]) in (0, 3)


def test_values_too_large_to_square_get_a_sentence(tmp_path, capsys):
    config = _write_case(tmp_path)
    frame = pd.read_csv(tmp_path / "data.csv")
    frame["minutes"] = frame["minutes"] * 1e300
    frame.to_csv(tmp_path / "data.csv", index=False)
    assert main(["build", str(config)]) == 3
    err = " ".join(capsys.readouterr().err.split())
    assert "too large to square" in err and "'minutes'" in err


def test_repeated_header_name_is_refused(tmp_path, capsys):
    config = _write_case(tmp_path)
    (tmp_path / "data.csv").write_text("site,distance,minutes,minutes\nnorth,1,2,3\nsouth,2,3,4\n")
    assert main(["build", str(config)]) == 3
    err = " ".join(capsys.readouterr().err.split())
    assert "repeats the column name 'minutes'" in err


def test_console_flags_go_before_or_after_the_command(tmp_path, capsys):
    config = _write_case(tmp_path)
    assert main(["build", str(config), "--quiet"]) == 0
    assert capsys.readouterr().out == ""
    assert main(["--verbose", "check", str(config)]) == 0
    assert main(["check", str(config), "--verbose"]) == 0


def test_a_usage_error_has_its_own_exit_code(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["build"])
    assert stop.value.code == 64  # sysexits.h EX_USAGE, apart from config errors (2)


def test_console_markup_in_a_column_name_is_printed_as_text(tmp_path, capsys):
    config = _write_case(tmp_path, target="'[bold]x[/bold][/]'")
    assert main(["build", str(config)]) == 3
    err = capsys.readouterr().err
    assert "[bold]x[/bold][/]" in err and "Traceback" not in err


@pytest.mark.parametrize("epoch", ["99999999999999999", "yesterday"])
def test_a_bad_source_date_epoch_is_a_config_error(tmp_path, capsys, monkeypatch, epoch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", epoch)
    config = _write_case(tmp_path)
    assert main(["build", str(config)]) == 2
    assert "SOURCE_DATE_EPOCH" in capsys.readouterr().err


def test_output_dir_takes_date_tokens(tmp_path, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1796169600")  # 2026-12-02 00:00 UTC
    config = _write_case(tmp_path)
    config.write_text(config.read_text().replace("dir: out", "dir: briefs/{date}"))
    assert main(["build", str(config)]) == 0
    assert (tmp_path / "briefs" / "2026-12-02" / "stats.json").is_file()
    config.write_text(config.read_text().replace("{date}", "{weekday}"))
    assert main(["check", str(config)]) == 2


@pytest.mark.parametrize(
    ("path", "expected"),
    [
        ("/dev/zero", "is not a regular file"),
        (".", "is not a regular file"),
        ("book.xls", "looks like an Excel 97-2003 workbook"),
        ("rows.txt", "is read as CSV but looks like JSON"),
    ],
)
def test_only_regular_files_in_known_formats_are_read(tmp_path, capsys, path, expected):
    (tmp_path / "book.xls").write_bytes(b"\xd0\xcf\x11\xe0")
    (tmp_path / "rows.txt").write_text('{"a": 1}\n')
    config = _write_case(tmp_path, path=path)
    assert main(["build", str(config)]) == 3
    err = " ".join(capsys.readouterr().err.split())
    assert expected in err and "Traceback" not in err


def test_data_roots_are_enforced_when_set(tmp_path, capsys, monkeypatch):
    config = _write_case(tmp_path)
    monkeypatch.setenv("BRIEFGEN_DATA_ROOTS", str(tmp_path / "elsewhere"))
    assert main(["check", str(config)]) == 3
    assert "BRIEFGEN_DATA_ROOTS" in capsys.readouterr().err
    monkeypatch.setenv("BRIEFGEN_DATA_ROOTS", os.pathsep.join(["/nonexistent", str(tmp_path)]))
    assert main(["check", str(config)]) == 0


@pytest.mark.parametrize("good, pool", [(True, False), (False, False), (True, True)])
def test_the_command_runs_exit_handlers_and_keeps_its_exit_code(tmp_path, good, pool):
    """``briefgen`` skips the interpreter's module teardown, never the exit handlers.

    A handler registered before the command runs must still run (temporary folders,
    Spark sessions and logging close through them), output must reach the pipe, and
    the exit code must be the command's: 0 for a build, 2 for a missing config. With
    a thread pool still alive (as a Spark Connect client leaves one) the command must
    still end: joining its idle worker without telling the pool to stop hung.
    """
    import subprocess
    import sys

    config = _write_case(tmp_path) if good else tmp_path / "missing.yaml"
    script = (
        "import atexit, sys, concurrent.futures\n"
        + (
            "pool = concurrent.futures.ThreadPoolExecutor(1)\npool.submit(int).result()\n"
            if pool
            else ""
        )
        + "atexit.register(lambda: print('handler ran', flush=True))\n"
        + "sys.argv = ['briefgen', 'build', sys.argv[1]]\n"
        + "from briefgen.cli import run\n"
        + "run()\n"
    )
    scratch = tmp_path / "scratch"
    scratch.mkdir()
    done = subprocess.run(
        [sys.executable, "-c", script, str(config)],
        capture_output=True,
        text=True,
        timeout=300,
        env=dict(os.environ, TMPDIR=str(scratch)),
    )
    assert not list(scratch.iterdir())  # the engine's working folder went with the process
    assert done.returncode == (0 if good else 2)
    assert done.stdout.rstrip().endswith("handler ran")
    if good:
        assert "brief built" in done.stdout
        assert any(tmp_path.rglob("brief.html"))
    else:
        assert "config file not found" in done.stderr
