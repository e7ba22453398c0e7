"""Every number on the page comes from stats.json: tables cell by cell, sentences number by number.

The demo data are invented; what is checked here is that the page and the JSON agree,
since both are written from the same results.
"""

from __future__ import annotations

import json
import re
from html.parser import HTMLParser

import pytest

from briefgen.cli import demo_config_path
from briefgen.config import load_spec
from briefgen.numbers import decimals_for, fmt, fmt_count
from briefgen.pipeline import build_brief

NUMBER = re.compile(r"[−-]?\d+(?:,\d{3})*(?:\.\d+)?")
# Constants of method the brief states in words (fences, thresholds, citation years, sample cap).
STATED_CONSTANTS = {
    "1.5",
    "3",
    "1",
    "10",
    "30",
    "5,000",
    "7",
    "8",
    "0.05",
    "1977",
    "1978",
    "1979",
    "1996",
    "2008",
}


class _Text(HTMLParser):
    """Visible text per element of interest: table cells by table id, and paragraph text."""

    def __init__(self) -> None:
        super().__init__()
        self.tables: dict[str, list[list[str]]] = {}
        self.paragraphs: list[str] = []
        self._table: str | None = None
        self._row: list[str] | None = None
        self._cell: list[str] | None = None
        self._paragraph: list[str] | None = None
        self._skip = 0

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag in {"style", "head"}:
            self._skip += 1
        if tag == "table":
            self._table = attrs.get("id")
            self.tables[self._table] = []
        elif tag == "tr" and self._table:
            self._row = []
        elif tag in {"td", "th"} and self._row is not None:
            self._cell = []
        elif tag in {"p", "li", "figcaption"} and self._table is None:
            self._paragraph = []

    def handle_endtag(self, tag):
        if tag in {"style", "head"}:
            self._skip -= 1
        if tag == "table":
            self._table = None
        elif tag == "tr" and self._row is not None:
            self.tables[self._table].append(self._row)
            self._row = None
        elif tag in {"td", "th"} and self._cell is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag in {"p", "li", "figcaption"} and self._paragraph is not None:
            self.paragraphs.append("".join(self._paragraph))
            self._paragraph = None

    def handle_data(self, data):
        if self._skip:
            return
        if self._cell is not None:
            self._cell.append(data)
        if self._paragraph is not None:
            self._paragraph.append(data)


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    out = tmp_path_factory.mktemp("numbers")
    build_brief(load_spec(demo_config_path()), out, built_on="2026-12-02")
    page = _Text()
    page.feed((out / "brief.html").read_text(encoding="utf-8"))
    payload = json.loads((out / "stats.json").read_text(encoding="utf-8"))
    return page, payload


def _decimals(payload) -> int:
    return decimals_for(payload["stats"]["overall"]["sd"])


def test_group_tables_equal_stats_json(built):
    page, payload = built
    d = _decimals(payload)
    for group in payload["stats"]["groups"]:
        rows = page.tables[f"table-group-{group['variable']}"][1:]
        boxes = {b["level"]: b for b in group["boxes"]}
        assert [r[0] for r in rows] == [s["level"] for s in group["summaries"]]
        for row, s in zip(rows, group["summaries"], strict=True):
            assert row[1] == fmt_count(s["n"])
            assert row[2] == fmt(s["mean"], d)
            assert row[3] == f"{fmt(s['ci_low'], d)} to {fmt(s['ci_high'], d)}"
            assert row[4] == fmt(s["median"], d)
            assert row[5] == f"{fmt(s['q1'], d)} – {fmt(s['q3'], d)}"
            assert row[6] == fmt_count(boxes[s["level"]]["outlier_count"])


def test_fit_table_equals_stats_json(built):
    page, payload = built
    rows = page.tables["table-fits"][1:]
    fits = payload["stats"]["fits"]
    assert len(rows) == len(fits)
    for row, fit in zip(rows, fits, strict=True):
        d = decimals_for(abs(fit["slope"]))
        assert row[1] == fmt_count(fit["n"])
        assert row[2] == fmt(fit["slope"], d)
        assert row[3] == f"{fmt(fit['slope_ci_low'], d)} to {fmt(fit['slope_ci_high'], d)}"
        assert row[4] == fmt(fit["r_squared"], 2)


def test_trend_table_equals_stats_json(built):
    page, payload = built
    d = _decimals(payload)
    rows = page.tables["table-trend"][1:]
    periods = payload["stats"]["trend"]["periods"]
    assert len(rows) == len(periods)
    for row, period in zip(rows, periods, strict=True):
        assert row[0].startswith(period["start"])
        assert row[1] == fmt_count(period["n"])
        assert row[2] == fmt(period["mean"], d)


def _numbers_in(value, found: list[float]) -> None:
    if isinstance(value, bool) or value is None:
        return
    if isinstance(value, int | float):
        found.append(float(value))
    elif isinstance(value, dict):
        for item in value.values():
            _numbers_in(item, found)
    elif isinstance(value, list):
        for item in value:
            _numbers_in(item, found)


def _renderings(value: float) -> set[str]:
    """Every way the brief may write a number: fixed decimals, percent, signed, p-value style."""
    texts = set()
    for d in range(0, 5):
        for v in (value, abs(value), 100 * value, 100 * abs(value), -value):
            texts.add(fmt(v, d).lstrip("+"))
    texts.add(f"{value:.2g}")
    return texts


def test_every_number_in_the_text_is_in_stats_json(built):
    page, payload = built
    values: list[float] = []
    _numbers_in(payload["stats"], values)
    _numbers_in(payload["family"], values)  # adjusted p-values the certainty sentences quote
    # Captions total counts over a group's levels (outliers, listed outliers, far-out values).
    for group in payload["stats"]["groups"]:
        boxes = group["boxes"]
        values.append(sum(b["outlier_count"] for b in boxes))
        values.append(sum(len(b["outliers"]) for b in boxes))
        values.append(sum(b["beyond_axis_low"] + b["beyond_axis_high"] for b in boxes))
    # Box plots mark only the values past their drawn edge (some past the cut fit in the room).
    values += [f["values_past_edge"] for f in payload["figures"] if "values_past_edge" in f]
    # Differences the text derives (gap between two means, change of a margin) come from pairs in the JSON.
    allowed = set().union(*(_renderings(v) for v in values)) | STATED_CONSTANTS
    # The row-accounting table shows each count as a share of rows read.
    accounting = payload["stats"]["accounting"]
    counts = list(accounting["used"].values()) + [d["rows"] for d in accounting["dropped"]]
    allowed |= set().union(*(_renderings(n / accounting["rows_read"]) for n in counts))
    allowed |= _renderings(1.0)
    cells = [cell for table in page.tables.values() for row in table[1:] for cell in row[1:]]
    unexplained = []
    for paragraph in page.paragraphs + cells:
        if re.search(r"\d{4}-\d{2}-\d{2}|\d{1,2} \w{3} \d{4}", paragraph):
            paragraph = re.sub(r"\d{4}-\d{2}-\d{2}|\d{1,2} \w{3} \d{4}", "", paragraph)  # dates
        paragraph = re.sub(r"\b\d{2}-\d{2}\b", "", paragraph)  # time-slot labels such as 07-10
        for number in NUMBER.findall(paragraph):
            text = number.lstrip("−-")
            if text not in allowed and number not in allowed:
                unexplained.append((number, paragraph[:80]))
    assert unexplained == []
