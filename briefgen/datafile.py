"""Which files briefgen reads as data, told apart before the engine sees them.

Only regular files, inside ``BRIEFGEN_DATA_ROOTS`` when that is set, in a format
briefgen reads. A workbook or a JSON file handed to the CSV reader gives a message
about its header; its extension or first bytes say what it is, and the message
names the formats that work instead.
"""

from __future__ import annotations

import os
from pathlib import Path

from briefgen.errors import DataError

# Extensions of formats people export and briefgen does not read, with what to do instead.
_OTHER_FORMATS = {
    "xls": "an Excel 97-2003 workbook",
    "ods": "a spreadsheet",
}


def check_readable_file(path: Path, label: str, declared: str | None) -> None:
    """Only a regular file, inside BRIEFGEN_DATA_ROOTS when set, in a format briefgen reads."""
    # A device or FIFO would be read until memory runs out, a folder fails obscurely.
    if not path.is_file():
        raise DataError(
            f"{label}: is not a regular file (a folder, device or pipe); point data.path at a "
            "CSV or Parquet file."
        )
    roots = [r for r in os.environ.get("BRIEFGEN_DATA_ROOTS", "").split(os.pathsep) if r]
    real = path.resolve()
    if roots and not any(real.is_relative_to(Path(root).resolve()) for root in roots):
        raise DataError(
            f"{label}: is outside the data folders BRIEFGEN_DATA_ROOTS allows; move the file "
            "there or ask whoever set that variable."
        )
    kind = _OTHER_FORMATS.get(path.suffix.lower().lstrip("."))
    if kind and declared is None:
        raise DataError(
            f"{label}: looks like {kind}, which briefgen does not read; save it as .xlsx, or "
            "export it as CSV (.csv), Parquet (.parquet) or JSON (.json, .jsonl)."
        )


def check_not_other_format(path: Path, label: str) -> None:
    """Refuse a file read as CSV whose first bytes say it is something else.

    Read as CSV, a workbook or a Parquet file gives a message about a bad header, and
    JSON one about a repeated column name; the file's signature says what it is.
    """
    try:
        with open(path, "rb") as stream:
            head = stream.read(64)
    except OSError:
        return
    start = head.lstrip(b"\xef\xbb\xbf \t\r\n")
    if head.startswith(b"PK\x03\x04") or head.startswith(b"\xd0\xcf\x11\xe0"):
        found = "an Excel workbook (or another zip file)"
        advice = "set data.format: excel or name it .xlsx, or export it as CSV or Parquet"
    elif head.startswith(b"PAR1"):
        found, advice = "a Parquet file", "set data.format: parquet or name it .parquet"
    elif start.startswith((b'{"', b"[{", b"[]")) or start.strip() == b"[":
        found, advice = "JSON", "set data.format: json or name it .json or .jsonl"
    else:
        return
    raise DataError(f"{label}: is read as CSV but looks like {found}; {advice}.")
