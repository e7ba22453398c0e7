"""Text that comes from the data, made safe to print, draw and typeset.

A level name or a column header is written by whoever made the file. Control
characters in it break SVG (not well-formed XML, so the PDF silently drops the
figure), put NUL bytes into the HTML and move the cursor of a terminal; the
Unicode bidirectional controls reorder the numbers printed after the name in a
finding. Both are removed here, once: in the engine for level names
(``engine_clean``), in Python for messages and labels (``clean``).
"""

from __future__ import annotations

import re

import ibis
import ibis.expr.types as ir

from briefgen.dialect import backend_name

# C0 controls, DEL and the C1 controls (which no text editor shows either).
_CONTROL = "\\x{00}-\\x{1f}\\x{7f}-\\x{9f}"
# Unicode bidirectional formatting characters (UAX #9): LRM and RLM, the embeddings and
# overrides LRE, RLE, PDF, LRO, RLO, and the isolates LRI, RLI, FSI, PDI.
_BIDI = "\\x{200e}\\x{200f}\\x{202a}-\\x{202e}\\x{2066}-\\x{2069}"

# The same classes for PostgreSQL, whose regular expressions spell characters \xNN and
# \uNNNN; its text cannot hold NUL, so the class starts at \x01.
_PG_CONTROL = "\\x01-\\x1f\\x7f-\\x9f"
_PG_BIDI = "\\u200e\\u200f\\u202a-\\u202e\\u2066-\\u2069"

_PY_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f]+")
_PY_BIDI = re.compile("[\u200e\u200f\u202a-\u202e\u2066-\u2069]")
_PY_EDGES = re.compile("^[\x00-\x1f\x7f-\x9f]+|[\x00-\x1f\x7f-\x9f]+$")


def clean(text: str) -> str:
    """``text`` without bidi controls, its control characters (tab, newline too) as one space."""
    text = _PY_EDGES.sub("", _PY_BIDI.sub("", text))
    return _PY_CONTROL.sub(" ", text)


def needs_cleaning(text: str) -> bool:
    """True when ``text`` holds a character ``clean`` and ``engine_clean`` change."""
    return clean(text) != text


def engine_clean(column: ir.StringColumn) -> ir.StringColumn:
    """``clean`` as an engine expression, applied to the group columns that need it.

    The analysis frame (``stats.core.frame.build_frame``) finds them by
    ``needs_cleaning`` on their counted levels: the expression costs a copy of every
    string, so a column without such a character is left as it is.

    Controls at either end are dropped and runs inside become one space; bidi controls
    are dropped wherever they are.
    """
    control, bidi = (
        (_PG_CONTROL, _PG_BIDI) if backend_name(column) == "postgres" else (_CONTROL, _BIDI)
    )
    without_bidi = column.re_replace(f"[{bidi}]", "")
    trimmed = without_bidi.re_replace(f"^[{control}]+|[{control}]+$", "")
    cleaned = trimmed.re_replace(f"[{control}]+", " ")
    # One search per row; the three replacements only where there is something to clean.
    return ibis.ifelse(column.re_search(f"[{control}{bidi}]"), cleaned, column)


def excerpt(text: object, limit: int = 40) -> str:
    """A short, cleaned quote of data text for a message: at most ``limit`` characters."""
    shown = clean(str(text))
    return shown if len(shown) <= limit else shown[: limit - 1] + "…"


def first_line(exc: BaseException, limit: int = 160, hide: str | None = None) -> str:
    """The first line of a library's exception, quoted for a message (its class name if empty).

    ``hide`` (a password) is masked before the line is cut, so no part of it shows.
    """
    text = str(exc).strip()
    line = text.splitlines()[0] if text else type(exc).__name__
    if hide:
        line = line.replace(hide, "***")
    return excerpt(line, limit)
