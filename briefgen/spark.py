"""Apache Spark as the engine, through Ibis's PySpark backend.

Only ``source`` calls this module: the statistics are the same Ibis expressions on
every engine. A local session runs in a JVM that PySpark starts; ``engine.connect``
names a Spark Connect server instead, which runs the queries on its cluster, so
only aggregates and the bounded scatter sample travel back over the wire.
"""

from __future__ import annotations

import os
import shutil
import socket
import sys
import warnings
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from urllib.parse import urlsplit

import ibis
from ibis.backends import BaseBackend

from briefgen.config import EngineSpec
from briefgen.datatext import first_line
from briefgen.errors import ConfigError

# Settings of the local session: no web UI, no network beyond loopback, a shuffle
# sized for a few cores instead of Spark's 200 partitions, and quiet logs (only
# cli.py speaks to the console). UTC is what Ibis sets too.
LOCAL_SETTINGS = {
    "spark.ui.enabled": "false",
    "spark.ui.showConsoleProgress": "false",
    "spark.driver.host": "127.0.0.1",
    "spark.driver.bindAddress": "127.0.0.1",
    "spark.sql.shuffle.partitions": str(os.cpu_count() or 2),
    "spark.sql.session.timeZone": "UTC",
    "spark.sql.execution.arrow.pyspark.enabled": "true",
}
# Seconds to wait for a Spark Connect server's port before saying it is unreachable.
CONNECT_TIMEOUT = 10.0
INSTALL_HINT = "install it with pip install 'briefgen[spark]'"

# Ibis passes verifySchema when it registers a small result table; Spark Connect says it
# ignores it, on the console, once per table.
warnings.filterwarnings("ignore", message="'verifySchema' is ignored")


def spark_backend(engine: EngineSpec) -> BaseBackend:
    """An Ibis connection on a Spark session: local, or remote with ``engine.connect``."""
    try:
        from pyspark.sql import SparkSession
    except ImportError:
        raise ConfigError(
            f"engine: pyspark needs PySpark, which is not installed; {INSTALL_HINT}, "
            "or set engine: duckdb."
        ) from None
    if engine.connect:
        session = _remote_session(SparkSession, engine.connect)
    else:
        session = _local_session(SparkSession, engine.threads)
    try:
        return ibis.pyspark.connect(session)
    except Exception as exc:  # Spark's own exception types differ between local and Connect
        raise ConfigError(
            f"engine: the Spark session did not answer ({first_line(exc)}); "
            "check the engine settings, or set engine: duckdb."
        ) from None


def _local_session(builder_owner, threads: int | None):
    """The process's local Spark session (started once, reused by later connections).

    It runs ``threads`` task threads, or one per core; a session already running keeps
    the number it started with.
    """
    if not _java_found():
        raise ConfigError(
            "engine: pyspark runs Spark on Java, and no java was found on PATH or in JAVA_HOME; "
            "install Java 17 (on Debian: apt-get install openjdk-17-jre-headless), "
            "or set engine: duckdb."
        )
    # Spark picks the machine's outward address unless told; keep the driver on loopback.
    os.environ.setdefault("SPARK_LOCAL_IP", "127.0.0.1")
    builder = builder_owner.builder.master(f"local[{threads or '*'}]").appName("briefgen")
    for key, value in LOCAL_SETTINGS.items():
        builder = builder.config(key, value)
    log_config = Path(__file__).with_name("spark-log4j2.properties")
    builder = builder.config(
        "spark.driver.extraJavaOptions", f"-Dlog4j2.configurationFile=file:{log_config}"
    )
    try:
        with _jvm_stderr_silenced():
            session = builder.getOrCreate()
    except Exception as exc:  # the JVM failed to start: PySparkRuntimeError, RuntimeError
        raise ConfigError(
            f"engine: the local Spark session did not start ({first_line(exc)}); "
            "check that Java 17 or later is installed (java -version), or set engine: duckdb."
        ) from None
    session.sparkContext.setLogLevel("ERROR")
    return session


def _remote_session(builder_owner, address: str):
    """A session on the Spark Connect server at ``address``, checked to answer first.

    The Connect client retries an unreachable server for minutes; one plain TCP
    connection with a timeout tells the person at once.
    """
    parts = urlsplit(address.split("/;", 1)[0].replace("sc://", "http://", 1))
    host, port = parts.hostname or "", parts.port or 15002
    try:
        with socket.create_connection((host, port), timeout=CONNECT_TIMEOUT):
            pass
    except OSError as exc:
        raise ConfigError(
            f"engine.connect: no Spark Connect server answered at {host}:{port} ({exc.strerror or exc}); "
            "start the server (sbin/start-connect-server.sh on the cluster), check the host and "
            "port, or set engine: duckdb."
        ) from None
    try:
        import grpc  # noqa: F401  (the Connect client's transport)
    except ImportError:
        raise ConfigError(
            f"engine.connect needs the Spark Connect client, which is not installed; {INSTALL_HINT}."
        ) from None
    try:
        return builder_owner.builder.remote(address).getOrCreate()
    except Exception as exc:  # grpc and PySpark errors
        raise ConfigError(
            f"engine.connect: the Spark Connect server at {host}:{port} refused the session "
            f"({first_line(exc)}); check the address and its settings."
        ) from None


@contextmanager
def _jvm_stderr_silenced() -> Iterator[None]:
    """Start the JVM with its standard error on /dev/null.

    The JVM prints start-up notes there that no log setting reaches (the incubator
    module warning, the default log level); only cli.py writes to the console, and
    Spark's errors still reach Python as exceptions.
    """
    sys.stderr.flush()
    saved = os.dup(2)
    try:
        with open(os.devnull, "wb") as null:
            os.dup2(null.fileno(), 2)
        yield
    finally:
        os.dup2(saved, 2)
        os.close(saved)


def _java_found() -> bool:
    home = os.environ.get("JAVA_HOME")
    if home and (Path(home) / "bin" / "java").exists():
        return True
    return shutil.which("java") is not None
