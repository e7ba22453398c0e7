"""Find and read the previous run's stats.json, the baseline for "since last time" and the gate.

The previous run is the brief the output folder's ``current`` link points at. When
``output.dir`` carries date tokens (``briefs/{date}``) every day has its own folder,
so the folders the template matches are searched too and the most recently
published run among them is taken (run names are UTC timestamps, so they order
across folders). A missing or unreadable previous run is a reason, never an error:
the brief says it in one line.
"""

from __future__ import annotations

import fnmatch
import glob
import json
import os
from dataclasses import dataclass
from pathlib import Path

from briefgen.config import _TOKEN, BriefSpec
from briefgen.deliver.publish import RUNS, current_run


@dataclass(frozen=True, slots=True)
class PreviousRun:
    """The previous run's stats.json as parsed, or why there is none.

    ``source`` says where it was looked for or found (a path, for the brief's line);
    exactly one of ``stats`` and ``reason`` is set.
    """

    source: str
    stats: dict | None
    reason: str | None


def value_at(value: object, *path: str | int) -> object:
    """A nested value of a parsed stats.json, or None where the path does not exist."""
    for step in path:
        if isinstance(step, int):
            if not isinstance(value, list) or not -len(value) <= step < len(value):
                return None
        elif not isinstance(value, dict):
            return None
        value = value[step] if isinstance(step, int) else value.get(step)
    return value


def _candidate_folders(spec: BriefSpec, folder: Path) -> list[Path]:
    """``folder``, and when it is one of output.dir's dated folders, every other one."""
    folders = [folder]
    if _TOKEN.search(spec.output.dir):
        template = Path(spec.output.dir).expanduser()
        template = template if template.is_absolute() else spec.base_dir / template
        pattern = _TOKEN.sub("*", glob.escape(os.path.normpath(template)))
        if fnmatch.fnmatchcase(os.path.normpath(folder), pattern):  # not an --out folder
            found = sorted(Path(match) for match in glob.glob(pattern))
            folders += [match for match in found if match != folder]
    return folders


def latest_published(spec: BriefSpec, folder: Path) -> Path | None:
    """stats.json of the most recently published run this config wrote, or None."""
    runs = [
        (name, candidate)
        for candidate in _candidate_folders(spec, folder)
        if (name := current_run(candidate)) is not None
    ]
    if not runs:
        return None
    name, newest = max(runs)
    return newest / RUNS / name / "stats.json"  # the run itself: `current` moves on publish


def read_previous(path: Path) -> PreviousRun:
    """Parse a stats.json written by briefgen; any problem becomes a reason."""
    shown = os.path.normpath(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return PreviousRun(shown, None, f"{shown} does not exist")
    except (OSError, UnicodeDecodeError) as exc:
        why = getattr(exc, "strerror", None) or type(exc).__name__
        return PreviousRun(shown, None, f"{shown} could not be read ({why})")
    try:
        stats = json.loads(text)
    except ValueError:
        return PreviousRun(shown, None, f"{shown} is not valid JSON")
    if not (
        isinstance(stats, dict)
        and isinstance(stats.get("stats"), dict)
        and isinstance(stats.get("target"), str)
    ):
        return PreviousRun(shown, None, f"{shown} is not a stats.json written by briefgen")
    return PreviousRun(shown, stats, None)


def find_previous(spec: BriefSpec, folder: Path, explicit: Path | None = None) -> PreviousRun:
    """The baseline: ``explicit`` (``--compare``), ``compare_with``'s file, or the last run."""
    chosen = explicit or spec.compare_path()
    if chosen is not None:
        return read_previous(chosen)
    path = latest_published(spec, folder)
    if path is None:
        shown = os.path.normpath(folder)
        return PreviousRun(shown, None, f"no earlier brief has been published in {shown}")
    if not path.exists():
        return PreviousRun(
            os.path.normpath(path), None, "the last published brief has no stats.json"
        )
    return read_previous(path)
