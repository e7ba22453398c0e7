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

from briefgen.assets import Logo, load_logo
from briefgen.config import BriefSpec
from briefgen.deliver import write_outputs
from briefgen.deliver.gate import GateResult, run_checks
from briefgen.deliver.publish import hold_outputs
from briefgen.errors import ConfigError, FigureReviewError
from briefgen.history.change import SinceLastTime, compare_runs
from briefgen.history.previous import find_previous
from briefgen.history.record import RunRecord, record_run
from briefgen.source import open_source, reading, release
from briefgen.stats import BriefStats, compute

log = logging.getLogger(__name__)
# One line per stage, for the console (progress on a terminal, timestamped lines in logs).
stage = logging.getLogger("briefgen.stage")


@dataclass(frozen=True, slots=True)
class BuildResult:
    """What a build made: its results, the files written, and the gate's verdict.

    ``files`` are the published paths, or the held ones when the gate held the brief.
    """

    stats: BriefStats
    files: tuple[Path, ...]
    gate: GateResult | None = None
    since: SinceLastTime | None = None

    @property
    def held(self) -> bool:
        return self.gate is not None and not self.gate.passed


def build_date() -> str:
    """Today, or SOURCE_DATE_EPOCH when set, so scheduled and repeated builds can match byte for byte."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if not epoch:
        return dt.date.today().isoformat()
    # reproducible-builds.org's SOURCE_DATE_EPOCH spec: an integer count of seconds since
    # 1970-01-01 UTC; a malformed value should stop the build with an error.
    try:
        return dt.datetime.fromtimestamp(int(epoch), tz=dt.UTC).date().isoformat()
    except (ValueError, OverflowError, OSError):
        shown = epoch if len(epoch) <= 24 else epoch[:24] + "…"
        raise ConfigError(
            f"SOURCE_DATE_EPOCH={shown!r} is not a date briefgen can use; set it to whole "
            "seconds since 1970-01-01 UTC up to the year 9999 (e.g. 1796169600), or unset it."
        ) from None


def _rendered(
    stats: BriefStats,
    spec: BriefSpec,
    built_on: str,
    logo: Logo | None,
    record: RunRecord | None,
    since: SinceLastTime | None,
    gate: GateResult | None,
) -> dict[str, bytes]:
    """The configured files' bytes: findings and figures drawn and reviewed, then rendered.

    The drawing and rendering libraries are imported here, after the statistics, not
    with this module: matplotlib's ~30 MiB would otherwise sit under the engine's
    memory while the statistics run (measured at 10M rows: the build's peak).
    """
    from briefgen.document import build_document
    from briefgen.figures import review
    from briefgen.render import render_html, render_json, render_pdf

    formats = spec.output.formats
    files: dict[str, bytes] = {}
    with review.recording() as reviews:
        doc = build_document(
            stats, spec, built_on, rows_label=_rows_label(spec), since=since, gate=gate
        )
    for note in review.unseen(doc.charts, reviews):
        log.info("not reviewed: %s", note)
    _check_figures(review.failures(doc.charts, reviews), spec)
    if "html" in formats or "pdf" in formats:
        stage.info("rendering HTML")
        html = render_html(doc, spec, logo)
        if "html" in formats:
            files["brief.html"] = html.encode("utf-8")
        if "pdf" in formats:
            stage.info("rendering PDF")
            files["brief.pdf"] = render_pdf(html, built_on, spec.base_dir)
    if "json" in formats:
        stage.info("writing stats.json")
        charts = [s.chart for s in doc.sections if s.chart is not None]
        files["stats.json"] = render_json(
            stats, spec, built_on, doc.findings, doc.family, record, since, gate, charts=charts
        ).encode("utf-8")
    return files


def _check_figures(problems: list[str], spec: BriefSpec) -> None:
    """Stop the build on a figure that breaks a review rule, or warn when the config says so."""
    if not problems:
        return
    if spec.figures.review == "warn":
        for problem in problems:
            log.warning("%s", problem)
        return
    more = f" ({len(problems) - 1} more problems in the log)" if len(problems) > 1 else ""
    for problem in problems[1:]:
        log.info("%s", problem)
    raise FigureReviewError(
        f"{problems[0][:1].upper()}{problems[0][1:]}{more}; nothing was written.",
        "Fix the theme or the figure, or set figures.review: warn in the config to build anyway.",
    )


def _rows_label(spec: BriefSpec) -> str:
    """The source as page 1's subtitle names it: the file's name, or the table's."""
    data = spec.data
    if data.path is not None:
        return Path(data.path).name
    return data.table if data.table is not None else "a database query"


def build_brief(
    spec: BriefSpec,
    out_dir: Path | None = None,
    built_on: str | None = None,
    compare: Path | None = None,
    skip_checks: bool = False,
) -> BuildResult:
    """Build every configured format, then publish them all at once (or hold them).

    ``compare`` is a stats.json to compare with (``--compare``), over ``compare_with``.
    When the config's ``checks`` fail (and ``skip_checks`` is off) the brief is written
    as the folder's held brief instead of being published.
    """
    built_on = built_on or build_date()
    folder = spec.output_dir(out_dir, built_on)
    logo = load_logo(spec)  # checked before any work, like the rest of the config
    stage.info("reading %s", spec.data.label)
    source = open_source(spec, built_on)
    formats = spec.output.formats
    comparing = compare is not None or spec.compare_with is not None
    checks = None if skip_checks else spec.checks
    record = None
    with reading(source.label):
        stats = compute(source, spec)
        if "json" in formats or comparing:
            stage.info("hashing %s", spec.data.label)
            record = record_run(spec, source.columns, stats.accounting.rows_read)
    release(source.table)
    previous = find_previous(spec, folder, compare) if comparing or checks else None
    since = compare_runs(stats, record, previous) if comparing and record else None
    gate = run_checks(checks, stats, previous) if checks and previous else None
    # Announced before the drawing libraries load (half a second), so the stage shows it.
    stage.info("writing the findings")
    files = _rendered(stats, spec, built_on, logo, record, since, gate)
    if gate is not None and not gate.passed:
        stage.info("holding the brief: %d checks failed", len(gate.failures))
        written = hold_outputs(folder, files)
    else:
        stage.info("publishing")
        written = write_outputs(folder, files, keep=spec.output.keep)
    log.info("wrote %s", ", ".join(str(p) for p in written))
    return BuildResult(stats=stats, files=tuple(written), gate=gate, since=since)
