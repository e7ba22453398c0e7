"""What an output folder holds, as comparable data: the tests' idea of "the brief" and "stray"."""

from __future__ import annotations

import os
from pathlib import Path

BRIEF_NAMES = ("brief.html", "brief.pdf", "stats.json")
LOCK_NAME = ".briefgen.lock"


def tree(folder: Path) -> dict[str, object]:
    """Every entry under ``folder``: file bytes, link targets, and folders as None."""
    entries: dict[str, object] = {}
    for root, dirs, files in os.walk(folder):
        for name in dirs + files:
            path = Path(root, name)
            key = str(path.relative_to(folder))
            if path.is_symlink():
                entries[key] = ("link", os.readlink(path))
            elif path.is_dir():
                entries[key] = None
            elif key == LOCK_NAME:
                entries[key] = "lock"  # holds the last holder's pid and time, not brief bytes
            else:
                entries[key] = path.read_bytes()
    return entries


def visible_brief(folder: Path) -> dict[str, bytes]:
    """The files a reader opening ``folder/brief.*`` and ``folder/stats.json`` gets."""
    return {name: (folder / name).read_bytes() for name in BRIEF_NAMES if (folder / name).exists()}


def stray_entries(folder: Path) -> list[str]:
    """Entries that belong to no published run: temp files, staging folders, dead links."""
    allowed = {LOCK_NAME, "current", "runs", *BRIEF_NAMES}
    current = os.readlink(folder / "current") if (folder / "current").is_symlink() else None
    stray = [name for name in os.listdir(folder) if name not in allowed]
    stray += [
        name
        for name in BRIEF_NAMES
        if (folder / name).is_symlink() and not (folder / name).exists()
    ]
    runs = folder / "runs"
    for name in os.listdir(runs) if runs.is_dir() else []:
        # A run folder newer than `current` was never published; older ones are history.
        if name.startswith(".") or current is None or name > Path(current).name:
            stray.append(f"runs/{name}")
    return sorted(stray)
