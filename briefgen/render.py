"""Render stage: Jinja2 ─► brief.html, WeasyPrint ─► brief.pdf, results ─► stats.json.

Returns bytes; writing them to disk is deliver's job, so a failed render never
touches the previous brief.
"""

from __future__ import annotations

import contextlib
import dataclasses
import datetime as dt
import json
import logging
import math
import os
from collections.abc import Sequence
from importlib import resources
from pathlib import Path

import jinja2
from markupsafe import Markup

from briefgen import __version__
from briefgen.assets import Logo
from briefgen.config import BriefSpec
from briefgen.deliver.gate import GateResult
from briefgen.document import Document
from briefgen.errors import RenderError
from briefgen.figures.theme import Chart
from briefgen.history.change import SinceLastTime
from briefgen.history.record import RunRecord
from briefgen.pdf_artifacts import mark_margin_artifacts
from briefgen.present.bounds import interval_floor
from briefgen.present.family import Family
from briefgen.present.finding import Finding
from briefgen.stats import BriefStats

log = logging.getLogger(__name__)


def _environment() -> jinja2.Environment:
    return jinja2.Environment(
        loader=jinja2.PackageLoader("briefgen", "templates"),
        autoescape=jinja2.select_autoescape(["html", "j2"], default=True),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )


def render_html(doc: Document, spec: BriefSpec, logo: Logo | None = None) -> str:
    """The self-contained HTML brief: inline CSS, figures and logo as data URIs."""
    css = resources.files("briefgen").joinpath("templates/brief.css").read_text(encoding="utf-8")
    template = _environment().get_template("brief.html.j2")
    # The stylesheet ships with the package and is trusted; autoescaping stays on for all data.
    return template.render(
        doc=doc,
        css=Markup(css),
        description=spec.description,
        version=__version__,
        accent=spec.brand.accent,
        logo=logo,
    )


@contextlib.contextmanager
def _fixed_font_timestamp(built_on: str):
    """Pin font-subset timestamps to the build date.

    Without HarfBuzz's subsetter WeasyPrint falls back to fontTools, which stamps
    each subset with the current time unless SOURCE_DATE_EPOCH is set.
    """
    previous = os.environ.get("SOURCE_DATE_EPOCH")
    day = dt.datetime.fromisoformat(built_on).replace(tzinfo=dt.UTC)
    os.environ["SOURCE_DATE_EPOCH"] = str(int(day.timestamp()))
    try:
        yield
    finally:
        if previous is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)
        else:
            os.environ["SOURCE_DATE_EPOCH"] = previous


def render_pdf(html: str, built_on: str, folder: Path | None = None) -> bytes:
    """Tagged PDF (PDF/UA-1) with embedded fonts; figure alt text becomes /Alt.

    WeasyPrint may read only inlined data and files under ``folder`` (the config's):
    fetcher.LocalOnlyFetcher.
    """
    try:
        import weasyprint

        from briefgen.fetcher import LocalOnlyFetcher
    except OSError as exc:  # missing Pango or another system library
        raise RenderError(
            f"the PDF engine could not start ({exc}).",
            "Install the system libraries WeasyPrint needs (see README), or drop 'pdf' from output.formats.",
        ) from None
    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    logging.getLogger("fontTools").setLevel(logging.ERROR)
    with _fixed_font_timestamp(built_on):
        fetcher = LocalOnlyFetcher(folder)
        return weasyprint.HTML(string=html, base_url=None, url_fetcher=fetcher).write_pdf(
            pdf_variant="pdf/ua-1", finisher=mark_margin_artifacts
        )


def _plain(value):
    """Dataclasses ─► JSON-ready values; NaN and infinities become null."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: _plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dt.date):  # datetime is a date too
        return value.isoformat()
    if hasattr(value, "item"):  # numpy scalars
        return _plain(value.item())
    return value


# Finding fields stats.json carries, in this order (README, "Finding — findings[]").
FINDING_FIELDS = (
    "key",
    "kind",
    "claim",
    "variables",
    "levels",
    "estimate",
    "ci_low",
    "ci_high",
    "test",
    "p_value",
    "p_adjusted",
    "headline",
    "text",
    "certainty",
)


def render_json(
    stats: BriefStats,
    spec: BriefSpec,
    built_on: str,
    findings: Sequence[Finding] = (),
    family: Family | None = None,
    made_from: RunRecord | None = None,
    since: SinceLastTime | None = None,
    checks: GateResult | None = None,
    charts: Sequence[Chart] = (),
) -> str:
    """Every number the brief shows, at full precision, with documented names (README).

    ``findings`` are the brief's findings in page order, as data for downstream
    readers (the email body, a dashboard, a test) that should not parse the HTML;
    ``family`` the questions behind them with their adjusted p-values; ``made_from``
    what the brief was built from, ``since`` the comparison with the last brief and
    ``checks`` the publish gate's verdict (None when not asked for); ``charts`` the section
    charts, each with the chart-choice rules that shaped it (``figures.rules``).
    """
    payload = {
        "briefgen_version": __version__,
        "title": spec.title,
        "built_on": built_on,
        "data": spec.data.label,
        "target": spec.target,
        "groups": list(spec.groups),
        "predictors": list(spec.predictors),
        # Where the brief cut mean intervals (present.bounds); the Student t bounds in "stats"
        # and "findings" stay as computed.
        "interval_floor": interval_floor(stats),
        "findings": [
            {name: _plain(getattr(finding, name)) for name in FINDING_FIELDS}
            for finding in findings
        ],
        "family": _plain(family),
        "made_from": _plain(made_from),
        "since": _plain(since),
        "checks": _plain(checks),
        "figures": [
            {"key": chart.key, "title": chart.title, "rules": list(chart.rules)}
            | ({"values_past_edge": chart.past_edge} if chart.past_edge is not None else {})
            for chart in charts
        ],
        "stats": _plain(stats),
    }
    # The sampled rows themselves stay out of the JSON; how many were drawn goes in.
    sample = stats.sample
    payload["stats"]["sample"] = {
        "size": sample.size,
        "rows_available": sample.rows_available,
        "points_drawn": {name: sample.points(name) for name in sample.x},
    }
    return json.dumps(payload, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
