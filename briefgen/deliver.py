"""Deliver stage: write the brief's files so a reader never sees half a brief.

Each file is written beside its final name and moved into place with an atomic
rename, and only after every format rendered; a failure leaves the previous
brief exactly as it was.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from briefgen.errors import RenderError


def write_outputs(directory: Path, files: dict[str, bytes]) -> list[Path]:
    """Write ``files`` (name ─► bytes) into ``directory`` atomically, file by file."""
    try:
        directory.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise RenderError(
            f"{directory}: cannot create the output folder ({exc.strerror}); check output.dir."
        ) from None
    staged: list[tuple[str, Path]] = []
    try:
        for name, content in files.items():
            handle, temp = tempfile.mkstemp(prefix=f".{name}.", dir=directory)
            with os.fdopen(handle, "wb") as stream:
                stream.write(content)
            os.chmod(temp, 0o644)
            staged.append((name, Path(temp)))
        written = []
        for name, temp in staged:
            os.replace(temp, directory / name)
            written.append(directory / name)
        return written
    except OSError as exc:
        for _, temp in staged:
            temp.unlink(missing_ok=True)
        raise RenderError(
            f"{directory}: cannot write the brief ({exc.strerror}); check space and permissions."
        ) from None
