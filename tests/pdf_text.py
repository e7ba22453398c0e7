"""Where each run of text ends on a PDF page, read from the content stream with pypdf.

pypdf's text visitor reports where a run starts, not where it ends; a table that
runs past the margin is seen at the end of its last cell. So this walks the page's
operators (and the form XObjects that hold the figures), keeps the graphics and text
matrices, and advances each run by its glyph widths from the font's /W or /Widths
array and the TJ adjustments (PDF 32000-1:2008, 9.4.4 text space to device space,
9.7.4.3 glyph metrics in CIDFonts).
"""

from __future__ import annotations

from dataclasses import dataclass

import pypdf
from pypdf.generic import ContentStream

Matrix = tuple[float, float, float, float, float, float]
IDENTITY: Matrix = (1.0, 0.0, 0.0, 1.0, 0.0, 0.0)


@dataclass(frozen=True, slots=True)
class TextRun:
    """One text-showing operator: its start and end x and its baseline y on the page (pt)."""

    page: int
    x_start: float
    x_end: float
    y: float  # from the foot of the page, as PDF counts
    text: str


def _times(m: Matrix, n: Matrix) -> Matrix:
    """m then n, in PDF's row-vector convention."""
    a, b, c, d, e, f = m
    p, q, r, s, t, u = n
    return (
        a * p + b * r,
        a * q + b * s,
        c * p + d * r,
        c * q + d * s,
        e * p + f * r + t,
        e * q + f * s + u,
    )


class _Font:
    """Glyph widths (thousandths of text space) and a best-effort text for messages."""

    def __init__(self, font: dict) -> None:
        self.composite = font.get("/Subtype") == "/Type0"
        self.widths: dict[int, float] = {}
        self.default = 1000.0 if self.composite else 0.0
        if self.composite:
            descendant = font["/DescendantFonts"][0].get_object()
            self.default = float(descendant.get("/DW", 1000))
            entries = list(descendant.get("/W", []))
            i = 0
            while i < len(entries):
                first = int(entries[i])
                following = entries[i + 1].get_object()
                if isinstance(following, list):
                    for k, w in enumerate(following):
                        self.widths[first + k] = float(w)
                    i += 2
                else:
                    for code in range(first, int(following) + 1):
                        self.widths[code] = float(entries[i + 2])
                    i += 3
        else:
            first = int(font.get("/FirstChar", 0))
            for k, w in enumerate(font.get("/Widths", [])):
                self.widths[first + k] = float(w)
        self.unicode = pypdf.generic._font.Font.from_font_resource(font).character_map

    def codes(self, raw: bytes) -> list[int]:
        if self.composite:  # Identity-H: two bytes per glyph
            return [int.from_bytes(raw[i : i + 2], "big") for i in range(0, len(raw), 2)]
        return list(raw)

    def text(self, codes: list[int]) -> str:
        return "".join(str(self.unicode.get(chr(c), "?")) for c in codes)


def text_runs(path) -> list[TextRun]:
    """Every text-showing operator of every page, with where it starts and ends."""
    reader = pypdf.PdfReader(path)
    runs: list[TextRun] = []
    for number, page in enumerate(reader.pages, start=1):
        _walk(reader, page.get_contents(), page.get("/Resources") or {}, IDENTITY, number, runs)
    return runs


def _walk(reader, contents, resources, ctm: Matrix, page: int, runs: list[TextRun]) -> None:
    fonts = {name: ref.get_object() for name, ref in (resources.get("/Font") or {}).items()}
    xobjects = resources.get("/XObject") or {}
    known: dict[str, _Font] = {}
    stack: list[Matrix] = []
    tm: Matrix = IDENTITY
    font: _Font | None = None
    size = 0.0
    for operands, operator in ContentStream(contents, reader).operations:
        op = operator.decode("latin-1") if isinstance(operator, bytes) else operator
        if op == "q":
            stack.append(ctm)
        elif op == "Q":
            ctm = stack.pop()
        elif op == "cm":
            ctm = _times(tuple(float(v) for v in operands), ctm)
        elif op == "BT":
            tm = IDENTITY
        elif op == "Tm":
            tm = tuple(float(v) for v in operands)
        elif op == "Td":
            tm = _times((1, 0, 0, 1, float(operands[0]), float(operands[1])), tm)
        elif op == "Tf":
            name = operands[0]
            known.setdefault(name, _Font(fonts[name]))
            font, size = known[name], float(operands[1])
        elif op in ("Tj", "TJ") and font is not None:
            parts = operands[0] if op == "TJ" else [operands[0]]
            advance, codes = 0.0, []
            for part in parts:
                if isinstance(part, (int, float)):
                    advance -= float(part)
                else:
                    glyphs = font.codes(bytes(part.original_bytes))
                    codes += glyphs
                    advance += sum(font.widths.get(g, font.default) for g in glyphs)
            start = _times(tm, ctm)
            end = _times((1, 0, 0, 1, advance / 1000 * size, 0), start)
            runs.append(TextRun(page, start[4], end[4], start[5], font.text(codes)))
            tm = _times((1, 0, 0, 1, advance / 1000 * size, 0), tm)
        elif op == "Do":
            xobject = xobjects[operands[0]].get_object()
            if xobject.get("/Subtype") == "/Form":
                matrix = tuple(float(v) for v in xobject.get("/Matrix", IDENTITY))
                _walk(
                    reader,
                    xobject,
                    xobject.get("/Resources") or resources,
                    _times(matrix, ctm),
                    page,
                    runs,
                )
