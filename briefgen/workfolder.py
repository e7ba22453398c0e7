"""The engine's private working folder: made per build, removed after it, even after a kill.

A build removes its folder when it ends, but a build killed outright (SIGKILL, the
kernel's out-of-memory killer, a power cut) cannot: at 10M rows it left 232 MB of
database and spill files in the temporary folder, and a nightly job killed every night
would fill the disk. So each folder holds an flock(2) on its ``owner.lock`` for as long
as its build lives (the kernel releases it when the holder dies, however it dies, as
the output folder's lock in ``deliver.lock``), and each new build removes the folders
whose lock it can take.
"""

from __future__ import annotations

import errno
import fcntl
import logging
import os
import shutil
import tempfile
from pathlib import Path

log = logging.getLogger(__name__)

PREFIX = "briefgen-engine-"
OWNER = "owner.lock"


def make_work_folder(parent: Path | None) -> tuple[Path, int | None]:
    """A new working folder under ``parent`` (default: the system's temporary folder),
    and the descriptor that holds its lock; left-over folders there are removed first.

    On a file system without flock (some network mounts) the folder has no lock and no
    ``owner.lock``, so no sweep takes it for abandoned; the descriptor is then None.
    Raises OSError when the folder cannot be made.
    """
    where = parent if parent is not None else Path(tempfile.gettempdir())
    remove_abandoned(where)
    folder = Path(tempfile.mkdtemp(prefix=PREFIX, dir=where))
    # Locked under another name, then renamed: a folder's owner.lock is never seen unlocked
    # while its build lives, so a sweep running at the same moment cannot take it.
    claiming = folder / f".{OWNER}"
    fd = os.open(claiming, os.O_RDWR | os.O_CREAT | os.O_CLOEXEC, 0o600)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError as exc:
        os.close(fd)
        claiming.unlink(missing_ok=True)
        log.info("cannot lock %s (%s): a killed build would leave it", folder, exc.strerror)
        return folder, None
    os.rename(claiming, folder / OWNER)
    return folder, fd


def remove_work_folder(folder: Path, fd: int | None) -> None:
    """Remove the folder, then release its lock."""
    shutil.rmtree(folder, ignore_errors=True)
    if fd is not None:
        os.close(fd)


def remove_abandoned(where: Path) -> list[Path]:
    """Remove the working folders under ``where`` whose build is gone; return them.

    A folder without ``owner.lock`` is left alone: it is being made, or an older
    version of briefgen left it, and neither can be told from a live build. Folders of
    other users cannot be opened and are left alone too.
    """
    removed = []
    for folder in where.glob(f"{PREFIX}*"):
        try:
            fd = os.open(folder / OWNER, os.O_RDWR | os.O_CLOEXEC)
        except OSError:
            continue
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as exc:
            if exc.errno not in (errno.EWOULDBLOCK, errno.EAGAIN):
                log.debug("cannot lock %s: %s", folder, exc)
            os.close(fd)
            continue
        shutil.rmtree(folder, ignore_errors=True)
        os.close(fd)
        log.info("removed %s, left by a build that was killed", folder)
        removed.append(folder)
    return removed
