"""The PDF as assistive technology reads it: structure tree, alt text, header cells,
language and title, and running heads and page numbers kept out of the content.

Checked with pypdf against PDF/UA-1 (ISO 14289-1): 7.1 (content is tagged or an
artifact; running heads and page numbers are artifacts, 7.8), 7.2 (/Lang), 7.3 (figures
carry /Alt), 7.5 (tables have TH cells), and the document title shown from /Title
(ViewerPreferences /DisplayDocTitle true).
"""

from __future__ import annotations

import re
from html.parser import HTMLParser

import pypdf
import pytest
from pypdf.generic import ArrayObject, DictionaryObject, IndirectObject

from briefgen.cli import demo_config_path
from briefgen.config import load_spec
from briefgen.pipeline import build_brief

BUILT_ON = "2026-12-02"


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("access")
    spec = load_spec(demo_config_path())
    build_brief(spec, out, built_on=BUILT_ON)
    reader = pypdf.PdfReader(out / "brief.pdf")
    html = (out / "brief.html").read_text(encoding="utf-8")
    return spec, reader, html


def _elements(reader: pypdf.PdfReader) -> list[DictionaryObject]:
    """Every structure element reachable from the StructTreeRoot, depth first."""
    root = reader.trailer["/Root"]["/StructTreeRoot"].get_object()
    found, stack = [], list(reversed(root["/K"]))
    while stack:
        kid = stack.pop()
        element = kid.get_object() if isinstance(kid, IndirectObject) else kid
        if not isinstance(element, DictionaryObject) or element.get("/Type") == "/OBJR":
            continue
        found.append(element)
        kids = element.get("/K", [])
        kids = kids if isinstance(kids, ArrayObject) else [kids]
        stack.extend(reversed(list(kids)))
    return found


class _Images(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.alts: list[str] = []
        self.header_cells = 0

    def handle_starttag(self, tag, attrs):
        if tag == "img":
            self.alts.append(dict(attrs)["alt"])
        if tag == "th":
            self.header_cells += 1


def _tagged_text(page: pypdf.PageObject) -> str:
    """Page text as a tag-following reader gets it: content inside /Artifact left out."""
    artifact_depth: list[bool] = []
    parts: list[str] = []

    def before(operator, operands, cm, tm):
        if operator in (b"BDC", b"BMC"):
            artifact_depth.append(operands[0] == "/Artifact" or any(artifact_depth))
        elif operator == b"EMC" and artifact_depth:
            artifact_depth.pop()

    def text(value, cm, tm, font, size):
        if not any(artifact_depth):
            parts.append(value)

    page.extract_text(visitor_operand_before=before, visitor_text=text)
    return "".join(parts)


def test_language_title_and_displayed_title(demo):
    spec, reader, _html = demo
    catalog = reader.trailer["/Root"]
    assert catalog["/Lang"] == "en"  # PDF/UA-1 7.2; the HTML's <html lang="en">
    assert reader.metadata.title == spec.title
    assert catalog["/ViewerPreferences"]["/DisplayDocTitle"] in (True, "true")
    assert catalog["/MarkInfo"]["/Marked"] in (True, "true")


def test_every_figure_has_alt_text_written_from_the_statistics(demo):
    _spec, reader, html = demo
    images = _Images()
    images.feed(html)
    figures = [e for e in _elements(reader) if e["/S"] == "/Figure"]
    assert len(figures) == len(images.alts) > 0
    assert [str(f["/Alt"]) for f in figures] == images.alts
    for alt in images.alts:
        # Each states a number from the results (a median, a slope, a count, a range).
        assert re.search(r"\d", alt), alt


def test_tables_have_header_cells(demo):
    _spec, reader, html = demo
    images = _Images()
    images.feed(html)
    elements = _elements(reader)
    tables = [e for e in elements if e["/S"] == "/Table"]
    headers = [e for e in elements if e["/S"] == "/TH"]
    assert tables and len(headers) >= images.header_cells // 2
    # Data cells name their headers (WeasyPrint links TD to TH through /Headers ids).
    cells = [e for e in elements if e["/S"] == "/TD"]
    assert cells and all(len(c["/A"]["/Headers"]) >= 1 for c in cells)


def test_running_heads_and_page_numbers_are_artifacts(demo):
    spec, reader, _html = demo
    total = len(reader.pages)
    for number, page in enumerate(reader.pages, start=1):
        tagged = _tagged_text(page)
        assert f"Page {number} of {total}" not in tagged
        assert f"Built {BUILT_ON}" not in tagged
        content = page.get_contents().get_data()
        assert b"/Artifact\n<</Type /Pagination>>\nBDC" in content
    # The title is content once, in the masthead on page 1, and never a running head after.
    assert spec.title in _tagged_text(reader.pages[0])
    assert spec.title not in _tagged_text(reader.pages[1])


def test_plain_extraction_does_not_glue_the_running_head_to_the_body(demo):
    spec, reader, _html = demo
    for page in reader.pages:
        text = page.extract_text()
        # Before: a hidden copy of title and date was drawn in the body and extracted as
        # "…third quarter2026-12-02" glued to the text that followed.
        assert not re.search(re.escape(spec.title) + r"\S", text)
        assert not re.search(r"\S" + re.escape(f"Built {BUILT_ON}"), text)


def test_every_marked_content_id_belongs_to_the_tree(demo):
    # PDF/UA-1 7.1: content is either real content in the tree or an artifact. Every MCID
    # left in a page's content maps, through the parent tree, to a reachable element.
    _spec, reader, _html = demo
    reachable = {id(e) for e in _elements(reader)}
    root = reader.trailer["/Root"]["/StructTreeRoot"].get_object()
    numbers = root["/ParentTree"].get_object()["/Nums"]
    parents = {int(numbers[i]): numbers[i + 1] for i in range(0, len(numbers), 2)}
    reachable_refs = set()
    for element in _elements(reader):
        reachable_refs.add(element.indirect_reference.idnum if element.indirect_reference else None)
    assert reachable
    for index, page in enumerate(reader.pages):
        mcids = [int(m) for m in re.findall(rb"/MCID (\d+)", page.get_contents().get_data())]
        elements = parents[page["/StructParents"]]
        for mcid in mcids:
            assert elements[mcid].idnum in reachable_refs, (index, mcid)
