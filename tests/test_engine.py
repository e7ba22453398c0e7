"""The engine's working folder and memory limit (config keys engine.temp_dir, engine.memory_limit).

Constructed cases: a tiny CSV (as in test_cli), built through the command line.
"""

from __future__ import annotations

import errno
import gc
import json
import os
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import duckdb
import pandas as pd
import pytest
from test_cli import _write_case

from briefgen import document, workfolder
from briefgen import stats as stats_package
from briefgen.cli import main
from briefgen.config import EngineSpec
from briefgen.source import connect


def test_working_folder_is_made_in_temp_dir_and_removed(tmp_path, capsys):
    work = tmp_path / "work"
    work.mkdir()
    config = _write_case(tmp_path, config_extra="engine: {backend: duckdb, temp_dir: work}\n")
    assert main(["build", str(config)]) == 0
    gc.collect()
    # The private database file lived in work/briefgen-engine-*/ and went with the build.
    assert list(work.iterdir()) == []


HOLD_AN_ENGINE = """
import sys, time
from briefgen.config import EngineSpec
from briefgen.source import connect
engine = connect(EngineSpec(temp_dir=sys.argv[1]))
engine.raw_sql("CREATE TABLE rows AS SELECT range AS y FROM range(1000)")
print(engine.con.execute("SELECT current_setting('temp_directory')").fetchall()[0][0], flush=True)
time.sleep(600)
"""


def test_a_folder_left_by_a_killed_build_is_removed_by_the_next(tmp_path):
    # SIGKILL (or the out-of-memory killer) runs no cleanup: at 10M rows a killed build
    # left 232 MB in the temporary folder, every time. Its lock dies with it.
    work = tmp_path / "work"
    work.mkdir()
    holder = subprocess.Popen(
        [sys.executable, "-c", HOLD_AN_ENGINE, str(work)], stdout=subprocess.PIPE, text=True
    )
    killed = Path(holder.stdout.readline().strip()).parent
    assert killed.parent == work and (killed / "engine.duckdb").exists()
    older = work / "briefgen-engine-from-an-older-version"  # no owner.lock: left alone
    older.mkdir()
    live = connect(EngineSpec(temp_dir=str(work)))  # a build running now: left alone
    live_folder = _folder_of(live)
    assert killed.exists()  # its build is still alive

    holder.kill()
    holder.wait()
    holder.stdout.close()
    assert killed.exists()
    after = connect(EngineSpec(temp_dir=str(work)))
    assert not killed.exists()
    assert older.exists() and live_folder.exists() and _folder_of(after).exists()
    del live, after
    gc.collect()
    assert sorted(work.iterdir()) == [older]


def test_a_file_system_without_flock_still_gets_a_working_folder(tmp_path, monkeypatch):
    # Some network mounts refuse flock(2): the build still runs, its folder simply has no
    # owner.lock, so no other build's sweep can take it for abandoned.
    def refused(fd, operation):
        raise OSError(errno.ENOLCK, "No locks available")

    monkeypatch.setattr(workfolder.fcntl, "flock", refused)
    engine = connect(EngineSpec(temp_dir=str(tmp_path)))
    folder = _folder_of(engine)
    assert folder.exists() and sorted(p.name for p in folder.iterdir()) == ["engine.duckdb"]
    assert engine.raw_sql("SELECT 42").fetchall() == [(42,)]
    monkeypatch.undo()
    assert workfolder.remove_abandoned(tmp_path) == []  # unowned: left alone
    del engine
    gc.collect()
    assert list(tmp_path.iterdir()) == []


def _folder_of(engine) -> Path:
    return Path(
        engine.con.execute("SELECT current_setting('temp_directory')").fetchall()[0][0]
    ).parent


def test_engine_is_closed_before_the_document_is_drawn(tmp_path, monkeypatch):
    # DuckDB keeps cached rows (up to engine.memory_limit) until closed: at 10M rows
    # the figures and the PDF were drawn on top of them. The folder goes with the close.
    work = tmp_path / "work"
    work.mkdir()
    config = _write_case(tmp_path, config_extra="engine: {backend: duckdb, temp_dir: work}\n")
    seen = []
    drawing = document.build_document

    def spy(*args, **kwargs):
        seen.append(list(work.iterdir()))
        return drawing(*args, **kwargs)

    monkeypatch.setattr(document, "build_document", spy)
    assert main(["build", str(config)]) == 0
    assert seen == [[]]


def test_statistics_run_before_the_drawing_libraries_are_loaded(tmp_path):
    # matplotlib is ~30 MiB resident; loaded with the pipeline it sat under the engine's
    # memory for the whole statistics stage (the build's peak at 10M rows).
    config = _write_case(tmp_path)
    script = (
        "import sys\n"
        "from briefgen import pipeline, stats\n"
        "computed = stats.compute\n"
        "def spy(*a, **k):\n"
        "    result = computed(*a, **k)\n"
        "    print('loaded:', sorted(m for m in ('matplotlib', 'weasyprint') if m in sys.modules))\n"
        "    return result\n"
        "pipeline.compute = spy\n"
        "from briefgen.cli import main\n"
        f"raise SystemExit(main(['build', {str(config)!r}]))\n"
    )
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert "loaded: []" in done.stdout


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


def _published(folder):
    """The published brief's files and bytes (the stable names in the output folder)."""
    return {p.name: p.read_bytes() for p in sorted((folder / "out").glob("brief.*"))}


def test_a_full_engine_disk_is_a_sentence_and_leaves_the_previous_brief(
    tmp_path, capsys, small_disk
):
    # Constructed: 300,000 rows of text, more than the 1 MiB disk holds once the engine
    # stores them. The first build (default working folder) publishes; the second,
    # working on the small disk, must stop with exit 9 and leave that brief as it was.
    config = _write_case(tmp_path)
    frame = pd.DataFrame(
        {
            "site": [f"site {i % 50}" for i in range(300_000)],
            "distance": [float(i % 977) for i in range(300_000)],
            "minutes": [10.0 + (i * 7919 % 1009) / 7 for i in range(300_000)],
            "label": [f"row {i}" for i in range(300_000)],
        }
    )
    frame.to_csv(tmp_path / "data.csv", index=False)
    assert main(["build", str(config)]) == 0
    before = _published(tmp_path)
    capsys.readouterr()
    text = config.read_text() + f"engine: {{backend: duckdb, temp_dir: {small_disk}}}\n"
    config.write_text(text)
    assert main(["build", str(config)]) == 9
    err = " ".join(capsys.readouterr().err.split())
    assert "Traceback" not in err and "No space left on device" in err
    assert "engine.temp_dir" in err and "previous brief is unchanged" in err
    assert _published(tmp_path) == before


def _raising(error):
    def analysis(*args, **kwargs):
        raise error

    return analysis


def _client_error(name: str, module: str, text: str) -> Exception:
    """An exception of the engine client's class name and module, without the client."""
    return type(name, (Exception,), {"__module__": module})(text)


@pytest.mark.parametrize(
    ("error", "code"),
    [
        # Spark Connect's gRPC status when the server went away (message shape as PySpark
        # 4 prints it), a local Spark's JVM gone, PostgreSQL closing the connection.
        (
            _client_error(
                "SparkConnectGrpcException",
                "pyspark.errors.exceptions.connect",
                "<_MultiThreadedRendezvous of RPC that terminated with: status = "
                "StatusCode.UNAVAILABLE details = 'failed to connect to all addresses'>",
            ),
            9,
        ),
        (_client_error("Py4JNetworkError", "py4j.protocol", "Answer from Java side is empty"), 9),
        (ConnectionResetError(104, "Connection reset by peer"), 9),
        (
            _client_error(
                "OperationalError", "psycopg", "server closed the connection unexpectedly"
            ),
            9,
        ),
        # The data file gone between the schema and the statistics (DuckDB's message shape).
        (duckdb.IOException('IO Error: No files found that match the pattern "data.csv"'), 9),
        # A query the engine refuses is briefgen's fault: an internal error, not exit 9.
        (
            _client_error(
                "AnalysisException",
                "pyspark.errors.exceptions.connect",
                "[UNRESOLVED_COLUMN] A column cannot be resolved",
            ),
            70,
        ),
    ],
)
def test_an_engine_that_goes_away_mid_run_is_a_sentence(tmp_path, capsys, monkeypatch, error, code):
    config = _write_case(tmp_path)
    assert main(["build", str(config)]) == 0
    before = _published(tmp_path)
    capsys.readouterr()
    monkeypatch.setattr(stats_package, "_sample", _raising(error))
    assert main(["build", str(config)]) == code
    err = " ".join(capsys.readouterr().err.split())
    assert "Traceback" not in err
    if code == 9:
        assert "previous brief is unchanged" in err
        said = "could not read a file" if "No files found" in str(error) else "stopped answering"
        assert said in err
    assert _published(tmp_path) == before


def _stopped_by_sigterm(tmp_path, capsys, monkeypatch, during) -> None:
    config = _write_case(tmp_path)
    assert main(["build", str(config)]) == 0
    before = _published(tmp_path)
    capsys.readouterr()
    monkeypatch.setattr(stats_package, "_sample", during)
    assert main(["build", str(config)]) == 143
    err = " ".join(capsys.readouterr().err.split())
    assert "stopped (SIGTERM); the previous brief" in err and "unchanged" in err
    assert "internal error" not in err and "Traceback" not in err
    assert _published(tmp_path) == before
    # The next build is not taken for a stopped one.
    monkeypatch.undo()
    assert main(["build", str(config)]) == 0


def test_sigterm_that_an_engine_turns_into_its_own_error_is_a_stop(tmp_path, capsys, monkeypatch):
    # A scheduler's timeout sends SIGTERM while a query runs; DuckDB catches the handler's
    # exception, cancels the query and raises its own "Query interrupted" (seen at 10M
    # rows: "internal error ... report the traceback", exit 70). README: exit 143.
    def engine_query(*args, **kwargs):
        try:
            os.kill(os.getpid(), signal.SIGTERM)  # the handler runs here, in this thread
            time.sleep(5)
        except BaseException:
            raise RuntimeError("Query interrupted") from None

    _stopped_by_sigterm(tmp_path, capsys, monkeypatch, engine_query)


def test_sigterm_during_a_real_duckdb_query_is_a_stop(tmp_path, capsys, monkeypatch):
    # The same with DuckDB itself. Most times it cancels the query at once and raises its
    # own error; now and then it finishes the query first (1 run in 5 here), and the stop
    # surfaces after it: either way exit 143. The query is a few seconds long for that.
    engine = duckdb.connect()

    def engine_query(*args, **kwargs):
        threading.Timer(0.3, os.kill, (os.getpid(), signal.SIGTERM)).start()
        engine.execute("SELECT sum(hash(i) % 7) FROM range(300000000) t(i)").fetchall()

    _stopped_by_sigterm(tmp_path, capsys, monkeypatch, engine_query)


# Run as the command runs: under pytest DuckDB starts with its bar off anyway.
PROGRESS_BARS = """
import json, sys
import duckdb
from briefgen import database
from briefgen.config import EngineSpec, load_spec
from briefgen.source import connect, open_source

def bar(connection):
    return connection.execute("SELECT current_setting('enable_progress_bar')").fetchall()[0][0]

engine = connect(EngineSpec())
seen = {"default": bar(duckdb.connect()), "engine": bar(engine.con)}
table = open_source(load_spec(sys.argv[1])).table
seen["duckdb file"] = bar(table.get_backend().con)
quieted = database.quiet
def spy(connection):
    seen.setdefault("query", []).append(bar(quieted(connection)))
    return connection
database.quiet = spy
open_source(load_spec(sys.argv[2]))
print(json.dumps(seen))
"""


def test_duckdb_draws_no_progress_bar_of_its_own(tmp_path):
    # DuckDB's default draws a bar on stdout for any query over two seconds, terminal or
    # not (seen at 10M rows: bar characters in a nightly job's log). The engine and both
    # ways of reading a duckdb:// file turn it off for their session.
    case = _write_case(tmp_path)
    with duckdb.connect(str(tmp_path / "rows.duckdb")) as con:
        con.execute(f"CREATE TABLE rows AS SELECT * FROM read_csv('{tmp_path / 'data.csv'}')")
    by_table = tmp_path / "table.yaml"
    by_table.write_text(
        case.read_text().replace("path: data.csv", "url: duckdb:///rows.duckdb\n  table: rows")
    )
    by_query = tmp_path / "query.yaml"
    by_query.write_text(by_table.read_text().replace("table: rows", "query: select * from rows"))
    run = subprocess.run(
        [sys.executable, "-c", PROGRESS_BARS, str(by_table), str(by_query)],
        capture_output=True,
        text=True,
        check=True,
    )
    assert json.loads(run.stdout) == {
        "default": True,  # what this guards against
        "engine": False,
        "duckdb file": False,
        "query": [False],  # the file's own client, which runs data.query
    }
