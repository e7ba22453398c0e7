"""Running heads and page numbers marked as artifacts in the tagged PDF.

WeasyPrint (70) tags the text of page-margin boxes as marked content with MCIDs and
builds structure elements for it that it leaves out of the document's tree ("it could be
included in tree as Artifact, but that's only allowed in PDF 2.0", weasyprint/pdf/tags.py;
Kozea/WeasyPrint#1836 is open on it). PDF/UA-1 (ISO 14289-1, 7.8) wants running heads and
page numbers as artifacts instead, which PDF 1.7 allows as marked content (ISO 32000-1,
14.8.2.2). WeasyPrint's public ``finisher`` hook sees the PDF before it is written, so
this turns exactly that content into ``/Artifact`` sequences: the content whose structure
element cannot be reached from the structure tree's root. Body text is never touched, and
a reader that follows the tags skips the margins.
"""

from __future__ import annotations

import pydyf

_PAGINATION = pydyf.Dictionary({"Type": "/Pagination"})


def _number(reference) -> int:
    """Object number of a pydyf reference (``b'12 0 R'``)."""
    text = reference.decode() if isinstance(reference, bytes) else str(reference)
    return int(text.split()[0])


def _reachable(pdf: pydyf.PDF, root: pydyf.Dictionary) -> set[int]:
    """Object numbers of every structure element under the tree's root."""
    seen: set[int] = set()
    stack = [kid for kid in root["K"] if not isinstance(kid, int)]
    while stack:
        number = _number(stack.pop())
        if number in seen:
            continue
        seen.add(number)
        element = pdf.objects[number]
        kids = element.get("K", ()) if isinstance(element, dict) else ()
        stack.extend(kid for kid in kids if isinstance(kid, bytes))  # references; ints are MCIDs
    return seen


def _page_stream(pdf: pydyf.PDF, index: int) -> pydyf.Stream:
    page = pdf.objects[_number(pdf.page_references[index])]
    return pdf.objects[_number(page["Contents"])]


def mark_margin_artifacts(_document, pdf: pydyf.PDF) -> None:
    """WeasyPrint finisher: margin-box text becomes ``/Artifact <</Type /Pagination>>`` content."""
    if "StructTreeRoot" not in pdf.catalog:  # an untagged PDF has nothing to fix
        return
    root = pdf.objects[_number(pdf.catalog["StructTreeRoot"])]
    reachable = _reachable(pdf, root)
    numbers = pdf.objects[_number(root["ParentTree"])]["Nums"]
    pages = len(pdf.page_references)
    for position in range(0, 2 * pages, 2):
        page_index, elements = numbers[position], numbers[position + 1]
        orphans = {mcid for mcid, ref in enumerate(elements) if _number(ref) not in reachable}
        if not orphans:
            continue
        operations = _page_stream(pdf, page_index).stream
        for i in range(len(operations) - 2):
            properties = operations[i + 1]
            if (
                operations[i + 2] == b"BDC"
                and isinstance(properties, dict)
                and properties.get("MCID") in orphans
            ):
                operations[i] = "/Artifact"
                operations[i + 1] = _PAGINATION
        # The parent tree maps only tagged content; an artifact has no structure parent.
        for mcid in orphans:
            elements[mcid] = b"null"
