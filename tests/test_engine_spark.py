"""Apache Spark (Ibis's PySpark backend) runs the same statistics as DuckDB.

Whole briefs' statistics are computed on both engines from the same file, read by
each engine's own reader, and compared field by field: counts exactly, every other
number to 1e-9 relative, quantiles exactly where both engines return an order
statistic. DuckDB's numbers are themselves checked against scipy, statsmodels and
NIST elsewhere in the suite; the data are Palmer penguins (palmerpenguins, Gorman,
Williams & Fraser 2014) and constructed cases.

Quantiles: DuckDB's ``quantile_cont`` and Spark's ``percentile`` (what Ibis compiles
``quantile`` to) are both exact Hyndman & Fan type 7: the same order statistics,
interpolated at h = (n − 1)p. Where h is whole both return that data value, equal to
the bit. Between two values they interpolate with different formulas (DuckDB
lo + (hi − lo)·f, Spark (1 − f)·lo + f·hi, both from the engines' sources), which
may differ in the last bits: bounded here by 4 ulps of the largest |value|.
"""

from __future__ import annotations

import dataclasses
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from palmerpenguins import load_penguins

from briefgen.config import EngineSpec, parse_spec
from briefgen.errors import ConfigError
from briefgen.history.record import config_as_used
from briefgen.source import connect, open_source
from briefgen.stats import compute
from briefgen.stats.regression import EXACT_DISTINCT_UP_TO
from briefgen.stats.sample import draw_sample

QUANTILES = {"q1": 0.25, "median": 0.5, "q3": 0.75}
RELATIVE = 1e-9


def _brief_config(path: Path, body: str, engine: str) -> str:
    return f"title: t\ndata: {{path: {path}}}\n{body}\nengine: {engine}\n"


def _both_engines(path: Path, body: str, spark_connection):
    """The brief's statistics from ``path`` on DuckDB and on the test run's Spark session."""
    results = {}
    for engine in ("duckdb", "pyspark"):
        spec = parse_spec(_brief_config(path, body, engine))
        source = open_source(spec)
        results[engine] = compute(source, spec)
    return results["duckdb"], results["pyspark"]


def _compare(duck, spark, path: str, largest: float, worst: dict) -> None:
    """Every field equal: ints and text exactly, floats to 1e-9, quantiles as stated above."""
    if dataclasses.is_dataclass(duck):
        assert type(duck) is type(spark), path
        for field in dataclasses.fields(duck):
            a, b = getattr(duck, field.name), getattr(spark, field.name)
            where = f"{path}.{field.name}"
            if field.name in QUANTILES and a is not None and isinstance(a, float):
                n = getattr(duck, "n", None)
                h = None if n is None else (n - 1) * QUANTILES[field.name]
                if h is not None and h == int(h):
                    assert a == b, f"{where}: an order statistic differs: {a!r} vs {b!r}"
                else:
                    assert abs(a - b) <= 4 * math.ulp(largest), f"{where}: {a!r} vs {b!r}"
                _note(worst, field.name, a, b)
            elif field.name == "x_distinct" and a is not None and a > EXACT_DISTINCT_UP_TO:
                # Above 32 both are HyperLogLog estimates of different make (Spark's
                # approx_count_distinct has a 5% relative standard deviation by default);
                # the penguins test checks both against the exact count.
                assert abs(a - b) <= 0.2 * max(a, b), f"{where}: {a} vs {b}"
            else:
                _compare(a, b, where, largest, worst)
    elif isinstance(duck, dict):
        assert list(duck) == list(spark), path
        for key in duck:
            _compare(duck[key], spark[key], f"{path}[{key!r}]", largest, worst)
    elif isinstance(duck, tuple | list):
        assert len(duck) == len(spark), path
        for i, (a, b) in enumerate(zip(duck, spark, strict=True)):
            _compare(a, b, f"{path}[{i}]", largest, worst)
    elif isinstance(duck, float) and not isinstance(spark, bool):
        assert isinstance(spark, float | int), f"{path}: {spark!r}"
        if math.isnan(duck):
            assert math.isnan(spark), path
            return
        assert math.isclose(duck, spark, rel_tol=RELATIVE, abs_tol=1e-300), (
            f"{path}: {duck!r} vs {spark!r}"
        )
        _note(worst, path.rsplit(".", 1)[-1], duck, spark)
    else:
        assert duck == spark, f"{path}: {duck!r} vs {spark!r}"


def _note(worst: dict, name: str, a: float, b: float) -> None:
    name = name.split("[")[0]
    gap = 0.0 if a == b else abs(a - b) / max(abs(a), abs(b))
    worst[name] = max(worst.get(name, 0.0), gap)


def test_penguins_brief_is_the_same_on_spark(tmp_path, spark_connection):
    # Palmer penguins as a CSV (missing values as empty cells), read by each engine's reader.
    path = tmp_path / "penguins.csv"
    load_penguins().to_csv(path, index=False)
    body = (
        "target: body_mass_g\ngroups: [species, island, sex]\n"
        "predictors: [flipper_length_mm, bill_length_mm, year]\nlog_target: true"
    )
    duck, spark = _both_engines(path, body, spark_connection)
    worst: dict[str, float] = {}
    _compare(duck, spark, "stats", 6300.0, worst)
    # The scatter sample is the same rows in the same order (compared exactly above too).
    assert spark.sample == duck.sample and spark.sample.size == 342
    # 55 distinct flipper lengths among the 342 rows used (pandas on the same file):
    # measured DuckDB 50, Spark 56; both within 10% of it.
    rows = pd.read_csv(path).dropna(subset=["body_mass_g", "flipper_length_mm"])
    exact = rows.flipper_length_mm.nunique()
    for stats in (duck, spark):
        assert abs(stats.fits[0].x_distinct - exact) <= 0.1 * exact
    assert max(worst.values()) <= RELATIVE


def test_offset_time_and_codes_are_the_same_on_spark(tmp_path, spark_connection):
    # Constructed: a target near 1e9 with spread 0.1 (where naive sums of squares lose every
    # digit), a daily time column, a group and a predictor of codes (exact distinct count).
    rng = np.random.default_rng(7)
    n = 3000
    level = rng.choice(["north", "south", "east"], n)
    code = rng.integers(1, 5, n).astype(float)
    x = rng.normal(10, 2, n)
    y = 1e9 + 0.01 * x + 0.02 * (level == "south") + rng.normal(0, 0.1, n)
    y[::97] = np.nan
    time = pd.Timestamp("2025-01-06") + pd.to_timedelta(rng.uniform(0, 200, n), unit="D")
    frame = pd.DataFrame({"y": y, "x": x, "code": code, "level": level, "t": time.floor("s")})
    path = tmp_path / "offset.parquet"
    frame.to_parquet(path, index=False, coerce_timestamps="us")
    body = "target: y\ngroups: [level]\npredictors: [x, code]\ntime: t"
    duck, spark = _both_engines(path, body, spark_connection)
    _compare(duck, spark, "stats", 1e9 + 1, {})
    assert duck.trend is not None and duck.fits[1].x_distinct == 4


def test_binary_target_from_json_lines_is_the_same_on_spark(tmp_path, spark_connection):
    # Constructed 0/1 outcome by two groups, written as JSON Lines (Spark's default JSON).
    rng = np.random.default_rng(11)
    n = 2000
    channel = rng.choice(["web", "phone", "shop"], n)
    region = rng.choice(["a", "b"], n)
    done = (rng.uniform(size=n) < np.where(channel == "web", 0.6, 0.4)).astype(int)
    path = tmp_path / "outcome.jsonl"
    pd.DataFrame({"done": done, "channel": channel, "region": region}).to_json(
        path, orient="records", lines=True
    )
    duck, spark = _both_engines(path, "target: done\ngroups: [channel, region]", spark_connection)
    _compare(duck, spark, "stats", 1.0, {})
    assert duck.target_kind is not None and duck.target_kind.kind == "binary"


def test_sample_hash_is_the_same_on_both_engines(tmp_path, spark_connection):
    # Values where engines' text and hash functions would disagree: powers of two (where
    # log2 may round either way), ±0, tiny and huge magnitudes, subnormals, offsets, gaps.
    tricky = [0.0, -0.0, 1.0, 2.0, 4.0, 0.5, 2.0**-30, 2.0**52, 2.0**53 + 2, 1e-300, 5e-324]
    tricky += [1e300, -1e300, 1e12 + 0.1, 1e12 + 0.2, 1e9 + 1e-6, -3.75, math.pi, 0.1, 0.3]
    rng = np.random.default_rng(3)
    scale = 10.0 ** rng.integers(-20, 20, 3000)
    y = np.concatenate([tricky, rng.normal(0, 1, 3000) * scale])
    x = rng.normal(0, 1, len(y))
    x[::5] = np.nan
    frame = pd.DataFrame({"y": np.concatenate([y, y[:50]]), "x0": np.concatenate([x, x[:50]])})
    drawn = {}
    for name, engine in (("duckdb", connect(EngineSpec())), ("pyspark", spark_connection)):
        frame.to_parquet(tmp_path / f"{name}.parquet", index=False)
        table = engine.read_parquet(tmp_path / f"{name}.parquet")
        drawn[name] = draw_sample(table, ["x0"], size=500)
    assert drawn["pyspark"] == drawn["duckdb"]
    assert drawn["duckdb"].size == 500


def test_engine_connect_is_checked_in_the_config():
    spec = parse_spec("title: t\ndata: {path: d.csv}\ntarget: y\nengine: pyspark\n")
    assert spec.engine == EngineSpec(backend="pyspark")
    remote = "engine: {backend: pyspark, connect: 'sc://spark.example.org:15002'}"
    spec = parse_spec(f"title: t\ndata: {{path: d.csv}}\ntarget: y\n{remote}\n")
    assert spec.engine.connect == "sc://spark.example.org:15002"
    # Settings after "/;" may hold a token: stats.json records only the server's address.
    with_token = remote.replace(":15002'", ":15002/;token=abc123'")
    spec = parse_spec(f"title: t\ndata: {{path: d.csv}}\ntarget: y\n{with_token}\n")
    assert spec.engine.connect.endswith("/;token=abc123")
    assert config_as_used(spec)["engine"]["connect"] == "sc://spark.example.org:15002"
    for engine, needle in [
        ("{backend: duckdb, connect: 'sc://h:15002'}", "use it with backend: pyspark"),
        ("{backend: pyspark, connect: 'http://h:15002'}", "sc://host:port"),
        ("{backend: pyspark, connect: 'sc://'}", "sc://host:port"),
        ("spark", "engine"),
    ]:
        with pytest.raises(ConfigError, match="engine") as error:
            parse_spec(f"title: t\ndata: {{path: d.csv}}\ntarget: y\nengine: {engine}\n")
        assert needle in str(error.value)


def _free_loopback_port() -> int:
    import socket

    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def _cli(
    args: list[str], env: dict | None = None, timeout: float = 120
) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "briefgen.cli", *args],
        capture_output=True,
        text=True,
        timeout=timeout,
        env=env,
    )


def test_unreachable_spark_connect_server_is_one_sentence(tmp_path):
    # Nothing listens on a just-freed loopback port: the TCP check answers at once.
    (tmp_path / "d.csv").write_text("y,g\n1,a\n2,b\n")
    port = _free_loopback_port()
    config = tmp_path / "brief.yaml"
    config.write_text(
        "title: t\ndata: {path: d.csv}\ntarget: y\n"
        f"engine: {{backend: pyspark, connect: 'sc://127.0.0.1:{port}'}}\n"
    )
    run = _cli(["build", str(config), "--out", str(tmp_path / "out")])
    assert run.returncode == ConfigError.exit_code, run.stderr
    assert f"engine.connect: no Spark Connect server answered at 127.0.0.1:{port}" in run.stderr
    assert "Traceback" not in run.stderr and not list((tmp_path / "out").glob("brief.*"))


def test_missing_java_is_one_sentence(tmp_path):
    import os

    (tmp_path / "d.csv").write_text("y,g\n1,a\n2,b\n")
    config = tmp_path / "brief.yaml"
    config.write_text("title: t\ndata: {path: d.csv}\ntarget: y\nengine: pyspark\n")
    # A PATH with Python's folder only, and no JAVA_HOME: no java to be found.
    env = {k: v for k, v in os.environ.items() if k != "JAVA_HOME"}
    env["PATH"] = str(Path(sys.executable).parent)
    run = _cli(["build", str(config), "--out", str(tmp_path / "out")], env)
    assert run.returncode == ConfigError.exit_code, run.stderr
    assert "engine: pyspark runs Spark on Java" in run.stderr
    assert "openjdk-17-jre-headless" in run.stderr and "Traceback" not in run.stderr


def test_missing_pyspark_is_one_sentence(monkeypatch):
    # An import of pyspark that fails, as on an install without the spark extra.
    monkeypatch.setitem(sys.modules, "pyspark.sql", None)
    with pytest.raises(ConfigError, match=r"engine: pyspark needs PySpark.*briefgen\[spark\]"):
        connect(EngineSpec(backend="pyspark"))


@pytest.fixture(scope="module")
def spark_connect_server(tmp_path_factory):
    """A Spark Connect server on a loopback port, started from PySpark's own jars.

    PySpark 4.0 ships the server (jars/spark-connect_*.jar); it starts offline in
    about 15 s on 2 cores. Stopped, and its process waited for, after the module.
    """
    import os
    import socket
    import time

    import pyspark

    home = Path(pyspark.__file__).parent
    port = _free_loopback_port()
    log = tmp_path_factory.mktemp("spark-connect") / "server.log"
    env = dict(os.environ, SPARK_HOME=str(home), SPARK_LOCAL_IP="127.0.0.1")
    command = [str(home / "bin" / "spark-submit"), "--master", "local[2]"]
    command += ["--class", "org.apache.spark.sql.connect.service.SparkConnectServer"]
    for setting in (
        "spark.connect.grpc.binding.address=127.0.0.1",
        f"spark.connect.grpc.binding.port={port}",
        "spark.ui.enabled=false",
        "spark.sql.shuffle.partitions=2",
        "spark.driver.host=127.0.0.1",
    ):
        command += ["--conf", setting]
    with open(log, "wb") as output:
        server = subprocess.Popen(
            [*command, "spark-internal"], stdout=output, stderr=output, env=env
        )
    try:
        deadline = time.monotonic() + 180
        while time.monotonic() < deadline:
            assert server.poll() is None, log.read_text(errors="replace")[-2000:]
            try:
                socket.create_connection(("127.0.0.1", port), timeout=1).close()
                break
            except OSError:
                time.sleep(0.5)
        else:
            pytest.fail(f"the Spark Connect server did not listen within 180 s: {log}")
        yield f"sc://127.0.0.1:{port}"
    finally:
        server.terminate()
        try:
            server.wait(timeout=60)
        except subprocess.TimeoutExpired:
            server.kill()
            server.wait()


def _json_numbers(a, b, path: str = "") -> None:
    """stats.json from two engines: the same keys and text, numbers to 1e-9 relative."""
    if isinstance(a, dict):
        assert list(a) == list(b), path
        for key in a:
            if key != "x_distinct":  # HyperLogLog estimates above 32 (see _compare)
                _json_numbers(a[key], b[key], f"{path}.{key}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (u, v) in enumerate(zip(a, b, strict=True)):
            _json_numbers(u, v, f"{path}[{i}]")
    elif isinstance(a, float):
        assert math.isclose(a, b, rel_tol=RELATIVE, abs_tol=1e-300), f"{path}: {a} vs {b}"
    else:
        assert a == b, f"{path}: {a!r} vs {b!r}"


def test_brief_through_spark_connect_is_the_same(tmp_path, spark_connect_server):
    # Constructed: a measure by a group with one predictor, as a CSV the server reads from
    # the same path (a shared folder on a real cluster). Built by the command line in its
    # own process, as a user would: PySpark allows no Connect session in a process that
    # already runs a local one (this test run's).
    import json

    rng = np.random.default_rng(5)
    n = 1500
    shift = rng.choice(["early", "late", "night"], n)
    x = rng.uniform(1, 20, n)
    y = 12 + 1.5 * x + 4 * (shift == "night") + rng.gamma(2, 2, n)
    pd.DataFrame({"minutes": y, "km": x, "shift": shift}).to_csv(tmp_path / "runs.csv", index=False)
    stats = {}
    for name, engine in (
        ("duckdb", "duckdb"),
        ("connect", f"{{backend: pyspark, connect: '{spark_connect_server}'}}"),
    ):
        config = tmp_path / f"{name}.yaml"
        config.write_text(
            "title: t\ndata: {path: runs.csv}\ntarget: minutes\ngroups: [shift]\n"
            f"predictors: [km]\nengine: {engine}\noutput: {{formats: [json]}}\n"
        )
        run = _cli(["build", str(config), "--out", str(tmp_path / name)], timeout=600)
        assert run.returncode == 0, run.stderr
        stats[name] = json.loads((tmp_path / name / "stats.json").read_text())["stats"]
    assert stats["connect"]["sample"]["size"] == n
    _json_numbers(stats["duckdb"], stats["connect"], "stats")
