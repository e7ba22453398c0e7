"""A mean's interval as the brief shows it: cut at 0 for a target that cannot be negative, none
without spread, while stats.json keeps the Student t bounds.

The reference for every uncut bound is scipy.stats.t.interval. Cutting at 0 keeps coverage,
since the true mean of a target with no negative values is not negative (Mandelkern 2002,
Statistical Science 17(2), cited from memory; common practice for counts). Constructed cases
are seeded; the real case is the RAND Health Insurance Experiment (statsmodels.datasets.randhie,
shipped offline), whose doctor-visit counts first showed "0.73, −0.17 to 1.63".
"""

from __future__ import annotations

import json
import re
from html.parser import HTMLParser

import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure
from scipy import stats as scipy_stats
from test_stats_trend_calendar import frame_trend

from briefgen.config import parse_spec
from briefgen.figures.cross import _trusted_points
from briefgen.figures.distribution import _draw_means
from briefgen.figures.trend import draw_trend
from briefgen.numbers import decimals_for, fmt, fmt_interval
from briefgen.pipeline import build_brief
from briefgen.stats.twoway import CrossCell

CONFIDENCE = 0.95
CUT_NOTE = "is cut at 0"


class _Tables(HTMLParser):
    """Every <table id=…> of a page as {id: [row cells]}, header row first."""

    def __init__(self) -> None:
        super().__init__()
        self.tables: dict[str, list[list[str]]] = {}
        self._id: str | None = None
        self._row: list[str] | None = None
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs):
        if tag == "table":
            self._id = dict(attrs).get("id")
            self.tables[self._id] = []
        elif tag == "tr" and self._id is not None:
            self._row = []
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag == "tr" and self._row is not None:
            self.tables[self._id].append(self._row)
            self._row = None
        elif tag == "table":
            self._id = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)


def tables_of(html: str) -> dict[str, list[list[str]]]:
    parser = _Tables()
    parser.feed(html)
    return parser.tables


def mean_intervals(tables: dict[str, list[list[str]]]) -> dict[tuple[str, str], str]:
    """(table id, row name) ─► the text of the interval printed right after a "Mean" column."""
    found = {}
    for key, rows in tables.items():
        header = rows[0] if rows else []
        if "Mean" not in header:
            continue
        column = header.index("Mean") + 1
        if column < len(header) and header[column].endswith("interval"):
            for row in rows[1:]:
                found[(key, row[0])] = row[column]
    return found


def lower_ends(text: str) -> list[float]:
    """The lower bound of every "a to b" in a text, read back as a number."""
    pairs = re.findall(r"(−?[\d,]*\.?\d+) to (−?[\d,]*\.?\d+)", text)
    return [float(low.replace("−", "-").replace(",", "")) for low, _ in pairs]


def t_interval(values) -> tuple[float, float]:
    """Reference: scipy's Student t interval of a mean."""
    values = np.asarray(values, dtype=float)
    sem = values.std(ddof=1) / np.sqrt(len(values))
    low, high = scipy_stats.t.interval(CONFIDENCE, len(values) - 1, loc=values.mean(), scale=sem)
    return float(low), float(high)


def _build(tmp_path, data: pd.DataFrame, target: str, groups: str, extra: str = ""):
    data.to_csv(tmp_path / "d.csv", index=False)
    spec = parse_spec(
        f"title: t\ndata: {{path: d.csv}}\ntarget: {target}\ngroups: [{groups}]\n"
        f"output: {{formats: [html, json]}}\n{extra}",
        tmp_path / "c.yaml",
    )
    result = build_brief(spec, tmp_path / "out", built_on="2026-12-03")
    payload = json.loads((tmp_path / "out" / "stats.json").read_text(encoding="utf-8"))
    html = (tmp_path / "out" / "brief.html").read_text(encoding="utf-8")
    return result.stats, payload, html


def _summary(payload: dict, variable: str, level: str) -> dict:
    group = next(g for g in payload["stats"]["groups"] if g["variable"] == variable)
    return next(s for s in group["summaries"] if s["level"] == level)


def count_frame() -> pd.DataFrame:
    """Visits per person (Poisson, seeded): two large levels, a small one whose t interval
    crosses 0, and one of three equal values; a second group h puts four equal values in
    the cell D · x."""
    rng = np.random.default_rng(2026)
    g = ["A"] * 300 + ["B"] * 300 + ["C"] * 6 + ["D"] * 7 + ["E"] * 3
    y = [
        *rng.poisson(2.0, 300),
        *rng.poisson(3.0, 300),
        0,
        2,
        1,
        0,
        0,
        0,
        *[2, 2, 2, 2],
        1,
        5,
        3,
        *[4, 4, 4],
    ]
    h = [*rng.choice(["x", "y"], 600), *rng.choice(["x", "y"], 6), *"xxxxyyy", *"xyx"]
    return pd.DataFrame({"visits": y, "g": g, "h": h})


def test_count_interval_is_cut_at_zero_in_the_brief_not_in_stats_json(tmp_path):
    data = count_frame()
    small = data.loc[data.g == "C", "visits"]
    low, high = t_interval(small)
    assert low < 0 < high  # precondition: scipy's t interval crosses 0 (−0.38 to 1.38)
    stats, payload, html = _build(tmp_path, data, "visits", "g, h")

    # stats.json keeps scipy's t interval; it says where the brief cut.
    summary = _summary(payload, "g", "C")
    assert (summary["ci_low"], summary["ci_high"]) == pytest.approx((low, high), rel=1e-9)
    assert payload["interval_floor"] == 0.0

    # The brief's table starts the interval at 0, and no mean's interval there goes below 0.
    decimals = decimals_for(payload["stats"]["overall"]["sd"])
    shown = mean_intervals(tables_of(html))
    assert shown[("table-group-g", "C")] == fmt_interval(0.0, high, decimals)
    assert shown[("table-group-g", "C")].startswith(f"{fmt(0.0, decimals)} to ")
    assert all(low >= 0 for text in shown.values() for low in lower_ends(text))
    assert html.count(CUT_NOTE) == 1  # the method notes say it once

    # The charts draw no interval below 0: the means panel of the group chart ...
    group = next(gr for gr in stats.groups if gr.variable == "g")
    axes = Figure().subplots()
    positions = list(range(len(group.summaries), 0, -1))
    _draw_means(axes, list(group.summaries), positions, stats.overall, "v", 2, CONFIDENCE, 0.0)
    drawn = np.concatenate(axes.collections[0].get_segments())
    assert drawn[:, 0].min() == 0.0  # C's interval starts at 0, none further left
    # ... and the two-way dots: a trusted cell of twelve counts whose t interval crosses 0.
    visits = [0] * 11 + [3]
    cell_low, cell_high = t_interval(visits)
    assert cell_low < 0  # precondition (−0.30 to 0.80)
    cell = CrossCell(
        row="r",
        column="c",
        n=12,
        mean=0.25,
        median=0.0,
        sd=float(np.std(visits, ddof=1)),
        ci_low=cell_low,
        ci_high=cell_high,
        too_small=False,
        rows=12,
    )
    (point,) = _trusted_points([(1.0, "r", cell)], "c", [], 0.0)
    assert point[2:] == (0.0, pytest.approx(cell_high))


def test_all_equal_values_show_a_dash_not_a_zero_width_interval(tmp_path):
    _, payload, html = _build(tmp_path, count_frame(), "visits", "g, h")
    # stats.json keeps the degenerate t interval (sd 0: both bounds at the mean).
    level = _summary(payload, "g", "E")
    assert (level["n"], level["sd"], level["ci_low"], level["ci_high"]) == (3, 0.0, 4.0, 4.0)
    cell = next(
        c for c in payload["stats"]["crosses"][0]["cells"] if (c["row"], c["column"]) == ("D", "x")
    )
    assert (cell["n"], cell["sd"], cell["ci_low"], cell["ci_high"]) == (4, 0.0, 2.0, 2.0)

    tables = tables_of(html)
    shown = mean_intervals(tables)
    assert shown[("table-group-g", "E")] == "–"
    assert shown[("table-cells-g-h", "D · x")] == "–"
    assert "4.00 to 4.00" not in html and "2.00 to 2.00" not in html
    # The table notes say what "–" means there.
    assert "could not be given: all values equal (no spread to estimate one from)" in html


def test_a_target_with_negative_values_keeps_its_negative_lower_ends(tmp_path):
    # Temperatures in °C (seeded): some below 0, so 0 is no bound and nothing is cut.
    rng = np.random.default_rng(1983)
    g = ["coast"] * 200 + ["inland"] * 200 + ["peak"] * 5
    temp = [*rng.normal(6, 4, 200), *rng.normal(2, 5, 200), *rng.normal(0.5, 2, 5)]
    data = pd.DataFrame({"temp": temp, "g": g})
    low, high = t_interval(data.loc[data.g == "peak", "temp"])
    assert low < 0  # precondition
    _, payload, html = _build(tmp_path, data, "temp", "g")
    assert payload["interval_floor"] is None
    summary = _summary(payload, "g", "peak")
    assert (summary["ci_low"], summary["ci_high"]) == pytest.approx((low, high), rel=1e-9)
    decimals = decimals_for(payload["stats"]["overall"]["sd"])
    shown = mean_intervals(tables_of(html))
    assert shown[("table-group-g", "peak")] == fmt_interval(low, high, decimals)
    assert shown[("table-group-g", "peak")].startswith("−")
    assert CUT_NOTE not in html


def test_positive_values_without_a_true_zero_are_not_cut(tmp_path):
    # Summer temperatures in °C (seeded), all above 0 here, but 0 °C is no floor for a mean:
    # the config says so with scale: interval (README), and nothing is cut.
    rng = np.random.default_rng(1976)
    g = ["coast"] * 200 + ["peak"] * 5
    temp = [*rng.normal(20, 4, 200), 0.2, 0.4, 9.0, 0.3, 0.1]
    data = pd.DataFrame({"temp": temp, "g": g})
    low, high = t_interval(temp[200:])
    assert min(temp) > 0 and low < 0  # precondition
    _, payload, html = _build(tmp_path, data, "temp", "g", "scale: interval\n")
    assert payload["interval_floor"] is None
    shown = mean_intervals(tables_of(html))
    decimals = decimals_for(payload["stats"]["overall"]["sd"])
    assert shown[("table-group-g", "peak")] == fmt_interval(low, high, decimals)
    assert CUT_NOTE not in html


def test_trend_chart_draws_no_interval_below_zero(tmp_path):
    # Yearly counts (seeded); 2003 has five rows whose t interval crosses 0.
    rng = np.random.default_rng(7)
    years = [*np.repeat([2001, 2002, 2004, 2005], 40), *[2003] * 5]
    y = [*rng.poisson(3.0, 160), 0, 0, 3, 0, 0]
    trend = frame_trend(pd.DataFrame({"year": years, "y": y}), tmp_path, "year")
    assert any(p.ci_low < 0 for p in trend.periods)  # precondition
    axes = Figure().subplots()
    draw_trend(axes, trend, floor=0.0)
    drawn = np.concatenate(axes.collections[0].get_segments())
    assert drawn[:, 1].min() == 0.0


def test_randhie_doctor_visits_print_no_interval_below_zero(tmp_path):
    # RAND Health Insurance Experiment (statsmodels.datasets.randhie, shipped offline):
    # doctor visits a year, whole numbers ≥ 0, 31% zeros.
    from statsmodels.datasets import randhie

    data = randhie.load_pandas().data[["mdvis", "idp", "physlm"]]
    _, payload, html = _build(tmp_path, data, "mdvis", "idp, physlm")

    # Every interval of a mean printed in the page's tables starts at 0 or above.
    shown = mean_intervals(tables_of(html))
    assert shown and all(low >= 0 for text in shown.values() for low in lower_ends(text))
    # The overall mean's interval in the sentences too.
    overall = re.search(r"the mean mdvis is [\d.]+ \(95% interval ([^)]*)\)", html)
    assert overall and all(low >= 0 for low in lower_ends(overall.group(1)))

    # The two levels of physlm that printed "−0.17 to 1.63" and "−0.28 to 8.28" now start at
    # 0; stats.json keeps scipy's t interval for them.
    for level, mean in (("0.12982", "0.73"), ("0.0431267", "4.00")):
        values = data.loc[np.isclose(data.physlm, float(level)), "mdvis"]
        low, high = t_interval(values)
        assert low < 0 and f"{values.mean():.2f}" == mean
        summary = _summary(payload, "physlm", level)
        assert (summary["ci_low"], summary["ci_high"]) == pytest.approx((low, high), rel=1e-9)
        assert shown[("table-group-physlm", level)] == f"0.00 to {high:.2f}"

    # The two-way cell of four zeros (idp 1, physlm 0.12982) shows "–", not "0.00 to 0.00".
    cell = data[(data.idp == 1) & np.isclose(data.physlm, 0.12982)]["mdvis"]
    assert len(cell) == 4 and (cell == 0).all()
    assert shown[("table-cells-idp-physlm", "1 · 0.12982")] == "–"
    assert "0.00 to 0.00" not in html
