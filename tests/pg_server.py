"""A throwaway PostgreSQL server on loopback for the database tests.

``initdb`` a cluster in a temporary folder, start it with ``pg_ctl`` on a free port of
127.0.0.1 only, and stop it at the end. PostgreSQL refuses to run as root, so under
root (CI) the cluster belongs to the ``postgres`` user Debian's package creates.
``make system-deps`` installs the server; without it the tests are skipped, saying why.
"""

from __future__ import annotations

import glob
import os
import shutil
import socket
import subprocess
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

import pytest

USER = "briefs"
PASSWORD = "loopback-only-test-password"


@dataclass(frozen=True)
class Server:
    port: int
    user: str
    password: str

    def url(self, database: str = "postgres") -> str:
        return f"postgresql://{self.user}@127.0.0.1:{self.port}/{database}"


def _binaries() -> Path | None:
    found = shutil.which("pg_ctl")
    if found:
        return Path(found).resolve().parent
    candidates = sorted(glob.glob("/usr/lib/postgresql/*/bin/pg_ctl"))
    return Path(candidates[-1]).parent if candidates else None


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


@contextmanager
def postgres_server() -> Iterator[Server]:
    """Start a cluster, yield how to reach it, stop it; skip when it cannot start."""
    binaries = _binaries()
    if binaries is None:
        pytest.skip("PostgreSQL is not installed (initdb, pg_ctl); `make system-deps` installs it")
    as_user: list[str] = []
    folder = Path(tempfile.mkdtemp(prefix="briefgen-pg-"))
    if os.geteuid() == 0:
        try:
            import pwd

            owner = pwd.getpwnam("postgres")
        except KeyError:
            shutil.rmtree(folder)
            pytest.skip("running as root and there is no 'postgres' user to own the cluster")
        os.chown(folder, owner.pw_uid, owner.pw_gid)
        as_user = ["runuser", "-u", "postgres", "--"]
    data = folder / "data"
    secret = folder / "password"
    secret.write_text(PASSWORD + "\n")
    if as_user:
        os.chown(secret, owner.pw_uid, owner.pw_gid)
    port = _free_port()
    run = {"cwd": folder, "capture_output": True, "text": True, "timeout": 120}
    try:
        made = subprocess.run(
            [*as_user, str(binaries / "initdb"), "-D", str(data), "-U", USER,
             f"--pwfile={secret}", "--auth-local=trust", "--auth-host=scram-sha-256",
             "-E", "UTF8", "--locale=C", "--no-sync"],
            **run,
        )  # fmt: skip
        if made.returncode != 0:
            pytest.skip(f"initdb could not make a cluster: {made.stderr.strip()[:200]}")
        options = f"-c listen_addresses=127.0.0.1 -p {port} -k {folder} -c fsync=off"
        started = subprocess.run(
            [*as_user, str(binaries / "pg_ctl"), "-D", str(data), "-o", options,
             "-l", str(folder / "log"), "-w", "-t", "60", "start"],
            **run,
        )  # fmt: skip
        if started.returncode != 0:
            log = (folder / "log").read_text() if (folder / "log").exists() else ""
            pytest.skip(f"the PostgreSQL server did not start: {log.strip()[-200:]}")
        try:
            yield Server(port=port, user=USER, password=PASSWORD)
        finally:
            subprocess.run(
                [*as_user, str(binaries / "pg_ctl"), "-D", str(data), "-m", "fast", "-w", "stop"],
                **run,
            )
    finally:
        shutil.rmtree(folder, ignore_errors=True)
