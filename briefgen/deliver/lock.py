"""One run at a time per output folder: an flock(2) on ``<output folder>/.briefgen.lock``.

The kernel releases an flock when its holder dies, however it dies, so a lock file
left by a killed run is never mistaken for a live one: the next run simply gets the
lock. The file itself stays (removing it would race with a waiting run) and holds the
holder's pid and start time, for the message a second run prints.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import errno
import fcntl
import logging
import os
import time
from collections.abc import Iterator
from pathlib import Path

from briefgen.errors import OutputBusyError, RenderError

log = logging.getLogger(__name__)
stage = logging.getLogger("briefgen.stage")

LOCK_NAME = ".briefgen.lock"
POLL_SECONDS = 0.2


def _holder(fd: int) -> str:
    try:
        text = os.pread(fd, 200, 0).decode("utf-8", "replace").split()
    except OSError:
        return "another briefgen run"
    if len(text) >= 2 and text[0].isdigit():
        return f"another briefgen run (pid {text[0]}, started {text[1]})"
    return "another briefgen run"


@contextlib.contextmanager
def output_lock(directory: Path, wait: float = 0.0) -> Iterator[None]:
    """Hold the output folder's lock for the block; wait up to ``wait`` seconds for it."""
    try:
        directory.mkdir(parents=True, exist_ok=True)
        fd = os.open(directory / LOCK_NAME, os.O_RDWR | os.O_CREAT | os.O_CLOEXEC, 0o644)
    except OSError as exc:
        raise RenderError(
            f"{directory}: cannot create the output folder or its lock file ({exc.strerror}); "
            "check output.dir and its permissions."
        ) from None
    try:
        deadline = time.monotonic() + max(wait, 0.0)
        announced = False
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                break
            except OSError as exc:
                if exc.errno not in (errno.EWOULDBLOCK, errno.EAGAIN):
                    raise RenderError(
                        f"{directory}: cannot lock the output folder ({exc.strerror})."
                    ) from None
                if time.monotonic() >= deadline:
                    waited = f" after waiting {wait:g} s" if wait > 0 else ""
                    raise OutputBusyError(
                        f"{directory}: {_holder(fd)} is building into this folder{waited}; "
                        "try again later, or pass --wait SECONDS to wait for it."
                    ) from None
                if not announced:
                    stage.info("waiting up to %g s for %s", wait, _holder(fd))
                    announced = True
                time.sleep(POLL_SECONDS)
        started = dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
        os.ftruncate(fd, 0)
        os.pwrite(fd, f"{os.getpid()} {started}\n".encode(), 0)
        log.info("locked %s", directory)
        yield
    finally:
        os.close(fd)  # closing the last descriptor releases the flock
