"""Pages that survive long names, paper sizes and a phone: measured, not looked at.

The margin check reads where every run of text ends in the PDF (tests/pdf_text.py,
pypdf) and compares it with the page box less the stylesheet's 20 mm right margin.
The phone check loads the HTML in headless Chromium inside a 390 px and a 1280 px
frame and reads the document's scroll width. The data are constructed (seeded) with
60-character level names, one of them without a space to break at.
"""

from __future__ import annotations

import html
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pandas as pd
import pypdf
import pytest
import yaml
from pdf_text import text_runs

from briefgen.cli import demo_config_path
from briefgen.config import load_spec
from briefgen.figures.theme import short_label
from briefgen.pipeline import build_brief
from briefgen.table_fit import fits_across
from briefgen.tables import Table

BUILT_ON = "2026-12-02"
RIGHT_MARGIN_PT = 20 / 25.4 * 72  # brief.css: @page margin 22mm 20mm 20mm 20mm
NAME_LENGTH = 60
WORDS = [
    "northern",
    "regional",
    "distribution",
    "centre",
    "household",
    "appliances",
    "refurbished",
    "equipment",
    "temporary",
    "overflow",
    "storage",
    "warehouse",
    "southern",
    "maintenance",
]


def _long_names(rng: np.random.Generator, count: int, prefix: str) -> list[str]:
    """``count`` names of exactly 60 characters; the first has no space to break at."""
    code = "".join(rng.choice(list("ABCDEFGHJKLMNPQRSTUVWXYZ23456789"), NAME_LENGTH))
    names = [f"{prefix}_site_code_{code}"[:NAME_LENGTH]]
    for i in range(1, count):
        words = " ".join(rng.choice(WORDS, 12))
        names.append(f"{prefix} {i} {words}"[:NAME_LENGTH].rstrip().ljust(NAME_LENGTH, "x"))
    return names


def long_name_frame(seed: int = 20261202, n: int = 900) -> pd.DataFrame:
    """Two groups of 60-character levels (4 × 5, crossed), one predictor, a clear signal."""
    rng = np.random.default_rng(seed)
    depots, routes = _long_names(rng, 4, "Depot"), _long_names(rng, 5, "Route")
    a, b = rng.integers(0, len(depots), n), rng.integers(0, len(routes), n)
    distance = rng.uniform(0, 10, n)
    hours = 20 + 2 * a + 1.5 * b + 0.8 * distance + rng.normal(0, 3, n)
    return pd.DataFrame(
        {
            "hours": hours,
            "depot": np.array(depots)[a],
            "route": np.array(routes)[b],
            "distance": distance,
        }
    )


def _config(folder: Path, paper: str) -> Path:
    settings = {
        "title": "Long level names",
        "data": {"path": str(folder / "data.csv")},
        "target": "hours",
        "groups": ["depot", "route"],
        "predictors": ["distance"],
        "output": {"dir": str(folder / paper), "formats": ["html", "pdf"], "paper": paper},
    }
    path = folder / f"{paper}.yaml"
    path.write_text(yaml.safe_dump(settings), encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def long_briefs(tmp_path_factory) -> dict[str, Path]:
    """The long-name brief built on A4 and on US Letter: paper ─► output folder."""
    folder = tmp_path_factory.mktemp("long-names")
    long_name_frame().to_csv(folder / "data.csv", index=False)
    built = {}
    for paper in ("a4", "letter"):
        build_brief(load_spec(_config(folder, paper)), folder / paper, built_on=BUILT_ON)
        built[paper] = folder / paper
    return built


@pytest.fixture(scope="module")
def demo_brief(tmp_path_factory) -> Path:
    """The demo brief, HTML and PDF, in one build shared by this module."""
    out = tmp_path_factory.mktemp("demo")
    spec = load_spec(demo_config_path())
    spec = spec.model_copy(
        update={"output": spec.output.model_copy(update={"formats": ["html", "pdf"]})}
    )
    build_brief(spec, out, built_on=BUILT_ON)
    return out


def test_constructed_names_are_long():
    frame = long_name_frame()
    for column in ("depot", "route"):
        levels = frame[column].unique()
        assert {len(level) for level in levels} == {NAME_LENGTH}
        assert any(" " not in level for level in levels)


@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_every_text_run_ends_inside_the_right_margin(long_briefs, paper):
    path = long_briefs[paper] / "brief.pdf"
    width = float(pypdf.PdfReader(path).pages[0].mediabox.width)
    runs = text_runs(path)
    # The level names reach the tables: the check reads the cells it is about.
    assert any("site_code" in run.text for run in runs)
    limit = width - RIGHT_MARGIN_PT + 0.5  # half a point for rounding in the PDF
    outside = [(r.page, round(r.x_end, 1), r.text[:40]) for r in runs if r.x_end > limit]
    assert outside == []
    assert min(r.x_start for r in runs) >= RIGHT_MARGIN_PT - 0.5  # left margin is also 20 mm


def test_demo_text_stays_inside_the_margins(demo_brief):
    # The demo's two-way table once reached 591 of 595 pt; it now turns so fewer levels go across.
    path = demo_brief / "brief.pdf"
    width = float(pypdf.PdfReader(path).pages[0].mediabox.width)
    assert max(r.x_end for r in text_runs(path)) <= width - RIGHT_MARGIN_PT + 0.5
    assert 'id="table-cross-' in (demo_brief / "brief.html").read_text(encoding="utf-8")


def test_wide_two_way_table_goes_to_the_long_form(long_briefs):
    # Five 60-character names cannot stand side by side: the matrix gives way to the long form.
    page = (long_briefs["a4"] / "brief.html").read_text(encoding="utf-8")
    assert 'id="table-cross-' not in page
    assert 'id="table-cells-depot-route"' in page


def _last_body_lines(pdf: Path) -> dict[int, str]:
    """Per page, the lowest line of text above the foot margin (the page number sits below it)."""
    bottom = 20 / 25.4 * 72  # brief.css: 20 mm foot margin
    lines: dict[int, tuple[float, list]] = {}
    for run in text_runs(pdf):
        if run.y <= bottom:
            continue
        y, found = lines.get(run.page, (float("inf"), []))
        if run.y < y - 1:
            lines[run.page] = (run.y, [run])
        elif abs(run.y - y) <= 1:
            found.append(run)
    return {
        page: "".join(r.text for r in sorted(found, key=lambda r: r.x_start))
        for page, (_, found) in lines.items()
    }


def _captions(page: str) -> list[str]:
    return [html.unescape(c) for c in re.findall(r"<caption>(.*?)</caption>", page, re.S)]


@pytest.mark.parametrize("brief", ["demo", "a4", "letter"])
def test_no_page_ends_with_a_table_caption(brief, demo_brief, long_briefs):
    folder = demo_brief if brief == "demo" else long_briefs[brief]
    captions = [
        "".join(c.split()) for c in _captions((folder / "brief.html").read_text(encoding="utf-8"))
    ]
    assert captions
    for page, line in _last_body_lines(folder / "brief.pdf").items():
        squeezed = "".join(line.split())
        alone = len(squeezed) >= 8 and any(squeezed in caption for caption in captions)
        assert not alone, (page, line)


def test_fit_estimate_counts_number_columns_whole():
    # Seven columns of "17.6 (2,679)" (12 characters each, with padding 14) need 98 characters:
    # more than the 84 that fit across 170 mm at 8.5 pt, whatever the names are.
    wide = Table(
        "t", "c", ("Level", *"ABCDEFG"), (("x", *["17.6 (2,679)"] * 7),), (False, *[True] * 7)
    )
    narrow = Table(
        "t", "c", ("Level", *"ABC"), (("x", *["17.6 (2,679)"] * 3),), (False, *[True] * 3)
    )
    assert not fits_across(wide)
    assert fits_across(narrow)


def test_chart_labels_are_shortened_to_two_lines():
    label = short_label("Depot 3 overflow maintenance refurbished temporary household")
    lines = label.split("\n")
    assert len(lines) == 2 and label.endswith("…")
    assert max(len(line) for line in lines) <= 26
    assert short_label("Canal Row") == "Canal Row"


# --- HTML at phone and desktop widths (headless Chromium) ---

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
# Per frame: viewport width, document scroll width, the smallest chart scale (the rendered
# width of a chart image over its natural width, its print size in CSS px), and how many
# charts are cut: wider than their box, so part of them is hidden.
PROBE = """<script>
addEventListener('load', () => {
  const p = document.createElement('pre');
  p.id = 'measure';
  p.textContent = [...document.querySelectorAll('iframe')].map(f => {
    const root = f.contentDocument.documentElement;
    const charts = [...f.contentDocument.querySelectorAll('figure img')];
    const scale = Math.min(...charts.map(i => i.getBoundingClientRect().width / i.naturalWidth));
    const boxes = [...f.contentDocument.querySelectorAll('.figure-scroll')];
    const cut = boxes.filter(b => b.scrollWidth > b.clientWidth
      || b.querySelector('img').getBoundingClientRect().right > b.getBoundingClientRect().right + 0.5);
    return root.clientWidth + ' ' + root.scrollWidth + ' ' + Math.round(scale * 1000) + ' ' + cut.length;
  }).join(';');
  document.body.appendChild(p);
});
</script>"""


def scroll_widths(brief: Path, widths: tuple[int, ...], folder: Path) -> list[tuple[int, int]]:
    """(viewport width, document scroll width) of ``brief`` in frames of each width."""
    return [(viewport, scroll) for viewport, scroll, _scale, _cut in measure(brief, widths, folder)]


def measure(
    brief: Path, widths: tuple[int, ...], folder: Path
) -> list[tuple[int, int, float, int]]:
    """(viewport width, document scroll width, smallest chart scale, charts cut) per width.

    The brief goes into a srcdoc frame of a probe page, a copy: the real brief carries no
    script. A frame, not the window, sets the width, since Chromium keeps its window at
    least 500 px wide. The frames are tall enough that no vertical scroll bar takes width.
    """
    source = html.escape(brief.read_text(encoding="utf-8"), quote=True)
    frames = "".join(
        f'<iframe style="border:0;display:block;width:{w}px;height:200000px" srcdoc="{source}"></iframe>'
        for w in widths
    )
    probe = folder / "probe.html"
    probe.write_text(f"<!DOCTYPE html><html><body style='margin:0'>{frames}{PROBE}</body></html>")
    result = subprocess.run(
        [
            CHROMIUM,
            "--headless=new",
            "--no-sandbox",
            "--disable-gpu",
            "--window-size=1400,900",
            "--virtual-time-budget=5000",
            "--dump-dom",
            probe.as_uri(),
        ],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    found = re.search(r'<pre id="measure">([0-9 ;]+)</pre>', result.stdout)
    assert found, result.stderr[-2000:]
    rows = [[int(v) for v in row.split()] for row in found.group(1).split(";")]
    return [(viewport, scroll, scale / 1000, cut) for viewport, scroll, scale, cut in rows]


@pytest.mark.skipif(
    CHROMIUM is None, reason="chromium is not installed (make system-deps installs it)"
)
def test_html_does_not_scroll_sideways(long_briefs, demo_brief, tmp_path):
    for brief in (demo_brief / "brief.html", long_briefs["a4"] / "brief.html"):
        measured = scroll_widths(brief, (390, 1280), tmp_path)
        assert [viewport for viewport, _ in measured] == [390, 1280]
        for viewport, scroll in measured:
            assert scroll <= viewport, (brief.name, viewport, scroll)


@pytest.mark.skipif(
    CHROMIUM is None, reason="chromium is not installed (make system-deps installs it)"
)
def test_charts_show_whole_on_a_phone_and_at_print_size_on_a_desktop(demo_brief, tmp_path):
    """At 390 px every chart fits its box whole; at 1280 px its text is at least 10 CSS px.

    Before: a chart kept 160 mm and scrolled in its own box on a phone, and the part in view
    misled (an x axis cut at 42 of 60, the colour bar off screen). A whole chart at 390 px has
    small text (8 pt × 4/3 × about 0.56, some 6 px); the page allows zooming. 10 px: common
    practice for the smallest legible screen text, no published source.
    """
    from briefgen.figures.theme import MIN_FONT_PT

    measured = measure(demo_brief / "brief.html", (390, 1280), tmp_path)
    for viewport, scroll, _scale, cut in measured:
        assert cut == 0, (viewport, cut)  # no chart wider than its box
        assert scroll <= viewport, (viewport, scroll)
    (_, _, desktop_scale, _) = measured[1]
    assert MIN_FONT_PT * 4 / 3 * desktop_scale >= 10.0, desktop_scale
    viewport_meta = (demo_brief / "brief.html").read_text(encoding="utf-8")
    assert "user-scalable=no" not in viewport_meta and "maximum-scale=1" not in viewport_meta
