"""The configured logo, checked and inlined: the only file the brief's look reads.

The logo is read once, here, from under the config's folder (after resolving ``..`` and
symbolic links), checked by its first bytes to be PNG, JPEG or SVG, limited in size, and
inlined as a data URI. WeasyPrint then draws with fetcher.LocalOnlyFetcher, which serves
only ``data:`` URLs and files under that same folder. Browsers show an SVG in ``<img>``
without scripts or external loads, so an inlined SVG logo cannot reach out from the HTML.
"""

from __future__ import annotations

import base64
import re
from dataclasses import dataclass
from pathlib import Path

from briefgen.config import BriefSpec
from briefgen.errors import ConfigError

LOGO_MAX_BYTES = 512 * 1024  # a masthead logo; larger files only bloat every emailed PDF
_SCHEME = re.compile(r"^[A-Za-z][A-Za-z0-9+.-]*:")
_KINDS = {".png": "image/png", ".jpg": "image/jpeg", ".jpeg": "image/jpeg", ".svg": "image/svg+xml"}


@dataclass(frozen=True, slots=True)
class Logo:
    """The logo as the brief carries it: inlined, never a path."""

    data_uri: str
    media_type: str


def _refuse(where: str, problem: str) -> ConfigError:
    return ConfigError(
        f"{where}: key 'brand.logo' is invalid: {problem}.",
        "Put a PNG, JPEG or SVG file of at most 512 kB in the config's folder (or below it) "
        "and name it by a relative path.",
    )


def _media_type(head: bytes) -> str | None:
    """The logo's type from its first bytes, not its name."""
    if head.startswith(b"\x89PNG\r\n\x1a\n"):
        return "image/png"
    if head.startswith(b"\xff\xd8\xff"):
        return "image/jpeg"
    text = head.lstrip(b"\xef\xbb\xbf").lstrip()
    if (text.startswith((b"<?xml", b"<svg", b"<!--"))) and b"<svg" in head:
        return "image/svg+xml"
    return None


def load_logo(spec: BriefSpec) -> Logo | None:
    """The configured logo, checked and inlined; None when the config names none."""
    name = spec.brand.logo if spec.brand else None
    if not name:
        return None
    where = spec.source_file or "config"
    if _SCHEME.match(name):
        raise _refuse(where, f"it is a {name.split(':', 1)[0]}: address; only a file is read")
    if Path(name).is_absolute() or name.startswith("~"):
        raise _refuse(where, "it is an absolute path; give a path relative to the config's folder")
    folder = spec.base_dir.resolve()
    try:
        path = (folder / name).resolve(strict=True)
    except (OSError, RuntimeError):
        raise _refuse(where, f"'{name}' was not found next to the config") from None
    if not path.is_relative_to(folder):
        raise _refuse(where, "it resolves outside the config's folder (through '..' or a link)")
    if not path.is_file():
        raise _refuse(where, f"'{name}' is not a regular file")
    size = path.stat().st_size
    if size > LOGO_MAX_BYTES:
        raise _refuse(where, f"'{name}' has {size:,} bytes, more than {LOGO_MAX_BYTES:,}")
    data = path.read_bytes()
    media_type = _media_type(data[:512])
    if media_type is None or _KINDS.get(path.suffix.lower()) != media_type:
        raise _refuse(where, f"'{name}' is not a PNG, JPEG or SVG file its name says it is")
    encoded = base64.b64encode(data).decode("ascii")
    return Logo(f"data:{media_type};base64,{encoded}", media_type)
