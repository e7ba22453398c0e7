"""Publish: switch a complete new brief into the output folder in one atomic step.

Layout of an output folder::

    out/
      runs/20261202T081900.123456Z-4242/   one folder per published run (the last ``keep``)
        brief.html  brief.pdf  stats.json
      current -> runs/20261202T081900.123456Z-4242
      brief.html -> current/brief.html    stable names readers and scripts open
      brief.pdf  -> current/brief.pdf
      stats.json -> current/stats.json
      .briefgen.lock                      held while a run builds (see lock.py)
      held -> runs/held-20261203T081900.123456Z-4243   the last brief the publish gate held

A brief the publish gate holds (``hold_outputs``) is written the same way into
``runs/held-<id>/`` and linked as ``held``; ``current`` and the stable names keep the
previous brief, so readers, scripts and the next run's comparison never see it. The
next brief that is published removes it.

A run writes its files into ``runs/.staging-<id>/``, renames that folder to
``runs/<id>`` and then replaces the ``current`` link with one rename(2), which
POSIX defines as atomic when the new name already exists. Readers therefore see
the previous brief or the new one, never a mix. The stable names are links
through ``current``, so they change with that same rename.

Every path out of ``publish`` other than SIGKILL removes what it made; leftovers
of a killed run carry names only this module gives (``runs/.staging-*``,
``.<name>.link-*``, run folders newer than ``current``) and the next run removes them
while it holds the output folder's lock, before it writes anything.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import logging
import os
import re
import shutil
import signal
from collections.abc import Iterator
from pathlib import Path

from briefgen.errors import RenderError

log = logging.getLogger(__name__)

RUNS = "runs"
CURRENT = "current"
HELD = "held"
HELD_PREFIX = "held-"
STAGING_PREFIX = ".staging-"
# The names a brief can hold; only these are linked from the top of the output folder.
BRIEF_NAMES = ("brief.html", "brief.pdf", "stats.json")
RUN_NAME = re.compile(r"^\d{8}T\d{6}\.\d{6}Z-\d+$")
DEFAULT_KEEP = 7


def step(name: str) -> None:
    """Mark a publish step in the debug log (the fault tests stop runs at these marks)."""
    log.debug("publish step: %s", name)


@contextlib.contextmanager
def signals_deferred() -> Iterator[None]:
    """Hold SIGINT and SIGTERM until the block ends, so the switch and its record stay together.

    A held signal is delivered when the block ends (pthread_sigmask(3)); its handler then
    runs with the folder in a known state, so the message it leads to can be true.
    """
    held = {signal.SIGINT, signal.SIGTERM}
    previous = signal.pthread_sigmask(signal.SIG_BLOCK, held)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, previous)


def current_run(directory: Path) -> str | None:
    """Name of the run folder ``current`` points at, or None when nothing is published."""
    try:
        target = os.readlink(directory / CURRENT)
    except OSError:
        return None
    name = Path(target).name
    return name if RUN_NAME.match(name) else None


def _fsync_dir(directory: Path) -> None:
    # A rename is on disk only once its folder is synced (fsync(2), "NOTES").
    fd = os.open(directory, os.O_RDONLY | os.O_DIRECTORY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _new_run_name(runs: Path, previous: str | None) -> str:
    """A folder name that sorts after every earlier run, even if the clock stepped back."""
    stamp = dt.datetime.now(dt.UTC)
    if previous:
        last = dt.datetime.strptime(previous.split("-")[0], "%Y%m%dT%H%M%S.%fZ")
        stamp = max(stamp, last.replace(tzinfo=dt.UTC) + dt.timedelta(microseconds=1))
    while True:
        name = f"{stamp:%Y%m%dT%H%M%S.%f}Z-{os.getpid()}"
        if not (runs / name).exists():
            return name
        stamp += dt.timedelta(microseconds=1)


def _remove(path: Path) -> None:
    if path.is_symlink() or path.is_file():
        path.unlink(missing_ok=True)
    elif path.is_dir():
        shutil.rmtree(path, ignore_errors=True)


def sweep_leftovers(directory: Path) -> list[Path]:
    """Remove what killed runs left behind; call only while holding the folder's lock."""
    removed: list[Path] = []
    current = current_run(directory)
    runs = directory / RUNS
    for entry in sorted(runs.iterdir()) if runs.is_dir() else []:
        staged = entry.name.startswith(STAGING_PREFIX)
        # A complete run folder newer than `current` was never switched in: its run died
        # between the two renames. Older ones are the kept history.
        unpublished = RUN_NAME.match(entry.name) and (current is None or entry.name > current)
        if staged or unpublished:
            _remove(entry)
            removed.append(entry)
    for entry in directory.glob(".*.link-*"):
        _remove(entry)
        removed.append(entry)
    if removed:
        log.info("removed %d leftovers of an interrupted run in %s", len(removed), directory)
    return removed


def _check_names_are_free(directory: Path) -> None:
    """Refuse before writing anything when a stable name is taken by something not ours."""
    for name in (CURRENT, *BRIEF_NAMES):
        path = directory / name
        if path.is_symlink() or not path.exists():
            continue
        if name == CURRENT or not path.is_file():
            kind = "folder" if path.is_dir() else "special file"
            raise RenderError(
                f"{path}: is a {kind}, where briefgen keeps a link to the brief; "
                "move it away or choose another output.dir."
            )


def _link(directory: Path, name: str, target: str) -> None:
    """Point ``directory/name`` at ``target`` with one rename, replacing what was there."""
    temp = directory / f".{name}.link-{os.getpid()}"
    temp.unlink(missing_ok=True)
    os.symlink(target, temp)
    os.replace(temp, directory / name)


def _adopt_flat_brief(directory: Path, runs: Path) -> None:
    """Turn a brief written by older versions (plain files) into the first run folder.

    The old files are hard-linked into a run folder and each is then replaced by a link
    to the same bytes, so a reader sees the old brief at every moment.
    """
    flat = [name for name in BRIEF_NAMES if (directory / name).is_file()]
    flat = [name for name in flat if not (directory / name).is_symlink()]
    if not flat or current_run(directory) is not None:
        return
    name = _new_run_name(runs, None)
    staging = runs / f"{STAGING_PREFIX}{name}"
    staging.mkdir()
    for file in flat:
        os.link(directory / file, staging / file)
    os.rename(staging, runs / name)
    _link(directory, CURRENT, f"{RUNS}/{name}")
    for file in flat:
        _link(directory, file, f"{CURRENT}/{file}")
    _fsync_dir(directory)
    log.info("kept the brief already in %s as run %s", directory, name)


def _write_staged(staging: Path, files: dict[str, bytes]) -> None:
    staging.mkdir()
    for name, content in files.items():
        step(f"write {name}")
        fd = os.open(staging / name, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
        try:
            view = memoryview(content)
            while view:
                view = view[os.write(fd, view) :]
            os.fsync(fd)
        finally:
            os.close(fd)
    _fsync_dir(staging)


def _switch(directory: Path, runs: Path, staging: Path, name: str, names: list[str]) -> None:
    """The commit: rename the staged folder into place, then swap ``current`` to it."""
    step("rename staged folder")
    os.rename(staging, runs / name)
    _fsync_dir(runs)
    step("switch current")
    _link(directory, CURRENT, f"{RUNS}/{name}")
    _fsync_dir(directory)
    step("switched")
    for file in BRIEF_NAMES:
        path = directory / file
        wanted = f"{CURRENT}/{file}"
        if file in names:
            # Normally the link is already there and the rename above was the whole switch.
            if not (path.is_symlink() and os.readlink(path) == wanted):
                _link(directory, file, wanted)
        elif path.is_symlink():
            path.unlink()  # the new brief has no such format
    step("linked")


def prune(directory: Path, keep: int) -> list[Path]:
    """Delete run folders beyond the newest ``keep``; ``current`` is always kept."""
    current = current_run(directory)
    runs = directory / RUNS
    names = sorted(
        (e.name for e in runs.iterdir() if RUN_NAME.match(e.name) and e.is_dir()), reverse=True
    )
    kept = [n for n in names if n != current][: max(keep - 1, 0)]
    removed = []
    for name in names:
        if name != current and name not in kept:
            shutil.rmtree(runs / name, ignore_errors=True)
            removed.append(runs / name)
    return removed


def write_outputs(directory: Path, files: dict[str, bytes], keep: int = DEFAULT_KEEP) -> list[Path]:
    """Publish ``files`` (name ─► bytes) as the folder's new brief, all at once.

    Returns the stable paths (``directory/brief.pdf`` …). Raises RenderError, with the
    previous brief untouched, when the folder cannot take the new brief.
    """
    runs = directory / RUNS
    name = ""
    try:
        runs.mkdir(parents=True, exist_ok=True)
        _check_names_are_free(directory)
        sweep_leftovers(directory)
        _adopt_flat_brief(directory, runs)
        name = _new_run_name(runs, current_run(directory))
        _write_staged(runs / f"{STAGING_PREFIX}{name}", files)
        with signals_deferred():
            _switch(directory, runs, runs / f"{STAGING_PREFIX}{name}", name, list(files))
        prune(directory, keep)
        drop_held(directory)
    except OSError as exc:
        what = (
            "the new brief is published"
            if name and current_run(directory) == name
            else "the previous brief is unchanged"
        )
        raise RenderError(
            f"{directory}: cannot write the brief ({exc.strerror or exc}); {what}. "
            "Check free space and permissions."
        ) from None
    finally:
        if name and current_run(directory) != name:
            with signals_deferred():
                _remove(runs / f"{STAGING_PREFIX}{name}")
                _remove(runs / name)
    return [directory / file for file in files]


def drop_held(directory: Path) -> None:
    """Remove the held brief: a brief published after it makes it stale."""
    (directory / HELD).unlink(missing_ok=True)
    runs = directory / RUNS
    for entry in runs.iterdir() if runs.is_dir() else []:
        if entry.name.startswith(HELD_PREFIX):
            _remove(entry)


def hold_outputs(directory: Path, files: dict[str, bytes]) -> list[Path]:
    """Write ``files`` as the folder's held brief; ``current`` and the stable names stay as they are.

    Returns the held paths (``directory/held/brief.pdf`` …). Raises RenderError when the
    folder cannot take them; the published brief is untouched either way.
    """
    runs = directory / RUNS
    name = ""
    try:
        runs.mkdir(parents=True, exist_ok=True)
        _check_names_are_free(directory)
        sweep_leftovers(directory)
        name = HELD_PREFIX + _new_run_name(runs, None)
        _write_staged(runs / f"{STAGING_PREFIX}{name}", files)
        with signals_deferred():
            os.rename(runs / f"{STAGING_PREFIX}{name}", runs / name)
            _link(directory, HELD, f"{RUNS}/{name}")
            _fsync_dir(directory)
        for entry in runs.iterdir():
            if entry.name.startswith(HELD_PREFIX) and entry.name != name:
                _remove(entry)
    except OSError as exc:
        raise RenderError(
            f"{directory}: cannot write the held brief ({exc.strerror or exc}); "
            "the published brief is unchanged. Check free space and permissions."
        ) from None
    finally:
        if name:
            _remove(runs / f"{STAGING_PREFIX}{name}")
    return [directory / HELD / file for file in files]
