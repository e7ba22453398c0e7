"""The whole pipeline in one call: spec ─► source ─► stats ─► document ─► files.

The command line and tests call ``build_brief``; every stage is also usable on
its own.
"""

from __future__ import annotations

import datetime as dt
import logging
import os
from dataclasses import dataclass
from pathlib import Path

from briefgen.config import BriefSpec
from briefgen.deliver import write_outputs
from briefgen.document import build_document
from briefgen.render import render_html, render_json, render_pdf
from briefgen.source import open_source
from briefgen.stats import BriefStats, compute

log = logging.getLogger(__name__)


@dataclass(frozen=True, slots=True)
class BuildResult:
    stats: BriefStats
    files: tuple[Path, ...]


def build_date() -> str:
    """Today, or SOURCE_DATE_EPOCH when set, so scheduled and repeated builds can match byte for byte."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch and epoch.isdigit():
        return dt.datetime.fromtimestamp(int(epoch), tz=dt.UTC).date().isoformat()
    return dt.date.today().isoformat()


def build_brief(
    spec: BriefSpec, out_dir: Path | None = None, built_on: str | None = None
) -> BuildResult:
    """Build every configured format, then write them all at once."""
    built_on = built_on or build_date()
    source = open_source(spec)
    stats = compute(source, spec)
    files: dict[str, bytes] = {}
    formats = spec.output.formats
    doc = build_document(stats, spec, built_on, rows_label=Path(spec.data.path).name)
    if "html" in formats or "pdf" in formats:
        html = render_html(doc, spec)
        if "html" in formats:
            files["brief.html"] = html.encode("utf-8")
        if "pdf" in formats:
            files["brief.pdf"] = render_pdf(html, built_on)
    if "json" in formats:
        files["stats.json"] = render_json(stats, spec, built_on, doc.findings).encode("utf-8")
    written = write_outputs(spec.output_dir(out_dir), files)
    log.info("wrote %s", ", ".join(str(p) for p in written))
    return BuildResult(stats=stats, files=tuple(written))
