"""The rendered brief: page size, fonts, text, tagging, self-containment and repeatability.

Built once from the packaged demo (invented data) and inspected with pypdf and the
standard library's HTML parser.
"""

from __future__ import annotations

import json
import re
from html.parser import HTMLParser

import pypdf
import pytest

from briefgen.cli import demo_config_path
from briefgen.config import load_spec
from briefgen.pipeline import build_brief

BUILT_ON = "2026-12-02"
# ISO 216: A4 is 210 mm × 297 mm; at 72 points per inch that is 595.28 × 841.89 pt.
A4_POINTS = (210 / 25.4 * 72, 297 / 25.4 * 72)
# ANSI/ASME Y14.1: US Letter is 8.5 in × 11 in = 612 × 792 pt.
LETTER_POINTS = (612.0, 792.0)


@pytest.fixture(scope="module")
def demo_build(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    spec = load_spec(demo_config_path())
    build_brief(spec, out, built_on=BUILT_ON)
    return out


class _Collector(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.images: list[dict] = []
        self.links: list[str] = []
        self.scripts = 0

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "img":
            self.images.append(attrs)
        if tag == "script":
            self.scripts += 1
        for key in ("href", "src"):
            if key in attrs:
                self.links.append(attrs[key])


def test_pdf_is_a4_with_extractable_text(demo_build):
    reader = pypdf.PdfReader(demo_build / "brief.pdf")
    assert len(reader.pages) >= 2
    for page in reader.pages:
        width, height = float(page.mediabox.width), float(page.mediabox.height)
        assert width == pytest.approx(A4_POINTS[0], abs=0.5)
        assert height == pytest.approx(A4_POINTS[1], abs=0.5)
    text = reader.pages[0].extract_text()
    assert "Courier deliveries, third quarter" in text
    assert "What the numbers show" in text
    # Title and date on every page (running head) and a page number.
    for number, page in enumerate(reader.pages, start=1):
        page_text = page.extract_text()
        assert "Courier deliveries, third quarter" in page_text
        assert BUILT_ON in page_text
        assert f"Page {number} of {len(reader.pages)}" in page_text


def _fonts(reader: pypdf.PdfReader):
    for page in reader.pages:
        resources = page.get("/Resources") or {}
        fonts = resources.get("/Font") or {}
        for ref in fonts.values():
            yield ref.get_object()


def test_pdf_fonts_are_embedded(demo_build):
    # PDF 32000-1:2008 §9.8: an embedded font program sits in FontFile, FontFile2 or FontFile3.
    reader = pypdf.PdfReader(demo_build / "brief.pdf")
    seen = 0
    for font in _fonts(reader):
        descendants = font.get("/DescendantFonts")
        targets = [d.get_object() for d in descendants] if descendants else [font]
        for target in targets:
            descriptor = target["/FontDescriptor"].get_object()
            assert any(key in descriptor for key in ("/FontFile", "/FontFile2", "/FontFile3"))
            seen += 1
    assert seen > 0


def test_pdf_is_tagged_with_figure_alt_text(demo_build):
    # ISO 14289-1 (PDF/UA-1): a tagged structure tree, and figures carry alternate text.
    reader = pypdf.PdfReader(demo_build / "brief.pdf")
    root = reader.trailer["/Root"]
    assert root["/MarkInfo"]["/Marked"]
    assert "/StructTreeRoot" in root
    alts = _figure_alt_texts(root["/StructTreeRoot"])
    assert len(alts) >= 3
    assert all(alt and len(str(alt)) > 20 for alt in alts)


def _figure_alt_texts(node) -> list:
    """Walk the structure tree and collect /Alt of every /Figure element."""
    node = node.get_object()
    found = []
    if isinstance(node, dict):
        if node.get("/S") == "/Figure":
            found.append(node.get("/Alt"))
        kids = node.get("/K")
        if kids is not None:
            for kid in kids if isinstance(kids, list) else [kids]:
                found += _figure_alt_texts(kid)
    return found


def test_letter_paper(tmp_path):
    spec = load_spec(demo_config_path())
    spec = spec.model_copy(
        update={"output": spec.output.model_copy(update={"paper": "letter", "formats": ["pdf"]})}
    )
    build_brief(spec, tmp_path, built_on=BUILT_ON)
    page = pypdf.PdfReader(tmp_path / "brief.pdf").pages[0]
    assert (float(page.mediabox.width), float(page.mediabox.height)) == pytest.approx(
        LETTER_POINTS, abs=0.5
    )


def test_html_is_self_contained_and_accessible(demo_build):
    html = (demo_build / "brief.html").read_text(encoding="utf-8")
    collector = _Collector()
    collector.feed(html)
    assert collector.scripts == 0
    external = [link for link in collector.links if re.match(r"^(https?:)?//", link)]
    assert external == []
    assert "@import" not in html and "url(http" not in html
    assert len(collector.images) >= 3
    for image in collector.images:
        assert image["src"].startswith("data:image/svg+xml;base64,")
        assert len(image.get("alt", "")) > 20


def test_html_escapes_config_text(tmp_path):
    spec = load_spec(demo_config_path())
    spec = spec.model_copy(
        update={
            "title": "<script>alert(1)</script> & co",
            "output": spec.output.model_copy(update={"formats": ["html"]}),
        }
    )
    build_brief(spec, tmp_path, built_on=BUILT_ON)
    html = (tmp_path / "brief.html").read_text(encoding="utf-8")
    assert "<script>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &amp; co" in html


def test_builds_are_byte_identical(demo_build, tmp_path):
    spec = load_spec(demo_config_path())
    build_brief(spec, tmp_path, built_on=BUILT_ON)
    for name in ("brief.html", "brief.pdf", "stats.json"):
        assert (tmp_path / name).read_bytes() == (demo_build / name).read_bytes(), name


def test_stats_json_is_plain_json(demo_build):
    payload = json.loads((demo_build / "stats.json").read_text(encoding="utf-8"))
    assert payload["target"] == "delivery_minutes"
    assert payload["built_on"] == BUILT_ON
    assert payload["stats"]["overall"]["n"] > 0


def test_example_output_is_current(demo_build):
    """example_output/ must be rebuilt (make example) whenever the brief's numbers or words change.

    Figures are compared by presence only: their bytes depend on the matplotlib release;
    likewise stats.json's ``made_from.built_with``, which names the Python and DuckDB releases.
    """
    from pathlib import Path

    def stats(folder: Path) -> dict:
        payload = json.loads((folder / "stats.json").read_text(encoding="utf-8"))
        payload["made_from"].pop("built_with")
        return payload

    example = Path(__file__).parents[1] / "example_output"
    assert stats(example) == stats(demo_build)

    def words(path: Path) -> str:
        return re.sub(
            r"data:image/svg\+xml;base64,[A-Za-z0-9+/=]+", "", path.read_text(encoding="utf-8")
        )

    assert words(example / "brief.html") == words(demo_build / "brief.html")
    assert (example / "brief.pdf").stat().st_size > 0
