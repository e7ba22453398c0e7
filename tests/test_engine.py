"""The engine's working folder and memory limit (config keys engine.temp_dir, engine.memory_limit).

Constructed cases: a tiny CSV (as in test_cli), built through the command line.
"""

from __future__ import annotations

import gc

import pytest
from test_cli import _write_case

from briefgen import pipeline
from briefgen.cli import main


def test_working_folder_is_made_in_temp_dir_and_removed(tmp_path, capsys):
    work = tmp_path / "work"
    work.mkdir()
    config = _write_case(tmp_path, config_extra="engine: {backend: duckdb, temp_dir: work}\n")
    assert main(["build", str(config)]) == 0
    gc.collect()
    # The private database file lived in work/briefgen-engine-*/ and went with the build.
    assert list(work.iterdir()) == []


def test_engine_is_closed_before_the_document_is_drawn(tmp_path, monkeypatch):
    # DuckDB keeps cached rows (up to engine.memory_limit) until closed: at 10M rows
    # the figures and the PDF were drawn on top of them. The folder goes with the close.
    work = tmp_path / "work"
    work.mkdir()
    config = _write_case(tmp_path, config_extra="engine: {backend: duckdb, temp_dir: work}\n")
    seen = []
    drawing = pipeline.build_document

    def spy(*args, **kwargs):
        seen.append(list(work.iterdir()))
        return drawing(*args, **kwargs)

    monkeypatch.setattr(pipeline, "build_document", spy)
    assert main(["build", str(config)]) == 0
    assert seen == [[]]


@pytest.mark.parametrize(
    ("engine", "expected"),
    [
        ("{backend: duckdb, memory_limit: lots}", "engine.memory_limit"),
        ("{backend: duckdb, temp_dir: no/such/folder}", "engine.temp_dir: cannot make a working"),
        # DuckDB cannot hold even the file's rows in 1 MB and cannot spill them all.
        ("{backend: duckdb, memory_limit: 1MB}", "raise engine.memory_limit"),
    ],
)
def test_engine_settings_that_cannot_work_get_a_sentence(tmp_path, capsys, engine, expected):
    config = _write_case(tmp_path, config_extra=f"engine: {engine}\n")
    assert main(["build", str(config)]) == 2
    err = " ".join(capsys.readouterr().err.split())
    assert "Traceback" not in err
    assert expected in err
