"""Since last time: the key numbers then and now, their intervals, and every sentence the section says.

References: scipy.stats.ttest_ind(equal_var=False).confidence_interval and
scipy.stats.ttest_ind_from_stats(equal_var=False) for Welch's interval of a difference of
means (Welch 1947); Newcombe (1998) for shares (the brief's own newcombe_interval, checked
against his Table II in tests/test_stats_proportions.py); Bonferroni (Dunn 1961) for the
family level 1 − α/m. The data are constructed here.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from scipy import stats as scipy_stats

from briefgen.config import load_spec
from briefgen.document import build_document
from briefgen.history.change import KeyChange, SinceLastTime, compare_runs
from briefgen.history.previous import PreviousRun
from briefgen.history.record import record_run
from briefgen.present.sections.since import column_notice, since_section
from briefgen.present.wording import wording_for
from briefgen.render import render_json
from briefgen.source import open_source
from briefgen.stats import compute


def _run(folder: Path, frame: pd.DataFrame, name: str = "run", **config):
    """Statistics, record and stats.json of one run on ``frame`` (nothing rendered)."""
    folder = folder / name
    folder.mkdir(exist_ok=True)
    frame.to_csv(folder / "data.csv", index=False)
    settings = {"title": "Since", "data": {"path": "data.csv"}, "target": "y"} | config
    settings.setdefault("output", {"formats": ["json"]})
    (folder / "brief.yaml").write_text(yaml.safe_dump(settings), encoding="utf-8")
    spec = load_spec(folder / "brief.yaml")
    source = open_source(spec)
    stats = compute(source, spec)
    record = record_run(spec, source.columns, stats.accounting.rows_read)
    stored = json.loads(render_json(stats, spec, "2026-12-01", made_from=record))
    return spec, stats, record, stored


def _compare(tmp_path: Path, then: pd.DataFrame, now: pd.DataFrame, **config):
    *_, stored = _run(tmp_path, then, "then", **config)
    spec, stats, record, _ = _run(tmp_path, now, "now", **config)
    since = compare_runs(stats, record, PreviousRun("then/stats.json", stored, None))
    section = since_section(
        since, wording_for(stats, "Y"), spec, stats.trend.period if stats.trend else None
    )
    return since, " ".join(section.lines), stats, spec


def _normal(seed: int, n: int, mean: float, sd: float = 1.0) -> np.ndarray:
    return np.random.default_rng(seed).normal(mean, sd, n)


def test_overall_interval_matches_scipy_welch(tmp_path):
    a, b = _normal(1, 80, 10.0, 2.0), _normal(2, 50, 10.9, 1.0)
    since, _, _, _ = _compare(tmp_path, pd.DataFrame({"y": a}), pd.DataFrame({"y": b}))
    (change,) = since.changes
    # scipy.stats.ttest_ind(equal_var=False): Welch's t interval of mean(now) − mean(then).
    reference = scipy_stats.ttest_ind(b, a, equal_var=False).confidence_interval(0.95)
    assert change.difference == pytest.approx(b.mean() - a.mean(), rel=1e-12)
    assert change.ci_low == pytest.approx(reference.low, rel=1e-9)
    assert change.ci_high == pytest.approx(reference.high, rel=1e-9)
    assert since.adjusted_confidence == 0.95  # one number: no family to adjust for
    # scipy.stats.ttest_ind_from_stats(equal_var=False) on the stored n, mean and sd gives
    # the same t: the comparison needs nothing but what stats.json keeps.
    t, _ = scipy_stats.ttest_ind_from_stats(
        change.value_now, np.std(b, ddof=1), change.n_now,
        change.value_then, np.std(a, ddof=1), change.n_then, equal_var=False,
    )  # fmt: skip
    df = scipy_stats.ttest_ind(b, a, equal_var=False).df
    half = (change.ci_high - change.ci_low) / 2
    assert change.difference / (half / scipy_stats.t.ppf(0.975, df)) == pytest.approx(t, rel=1e-9)


def test_the_family_is_bonferroni_over_every_number_with_an_interval(tmp_path):
    rng = np.random.default_rng(3)
    frame = lambda shift: pd.DataFrame(  # noqa: E731
        {"site": ["north", "south"] * 60, "y": rng.normal(5, 1, 120) + shift}
    )
    then, now = frame(0.0), frame(0.0)
    since, _, _, _ = _compare(tmp_path, then, now, groups=["site"])
    assert len(since.tested) == 3  # overall, north, south
    assert since.adjusted_confidence == pytest.approx(1 - 0.05 / 3)  # Bonferroni (Dunn 1961)
    north = next(c for c in since.changes if c.level == "north")
    a = then.loc[then.site == "north", "y"].to_numpy()
    b = now.loc[now.site == "north", "y"].to_numpy()
    reference = scipy_stats.ttest_ind(b, a, equal_var=False).confidence_interval(1 - 0.05 / 3)
    assert (north.ci_low, north.ci_high) == pytest.approx((reference.low, reference.high))


def test_a_large_offset_keeps_the_digits_of_the_change(tmp_path):
    # Exact at any offset (DEVELOPERS.md): differences from medians plus mean shifts.
    base = 1e12 + np.tile([0.0, 0.1, 0.2, 0.3], 25)
    since, _, _, _ = _compare(tmp_path, pd.DataFrame({"y": base}), pd.DataFrame({"y": base + 0.1}))
    assert since.changes[0].difference == pytest.approx(0.1, rel=1e-3)
    assert since.changes[0].beyond is True


def test_beyond_and_within_normal_variation(tmp_path):
    same = pd.DataFrame({"y": _normal(4, 200, 20.0)})
    _, text, _, _ = _compare(tmp_path, same, same)
    assert "within normal variation" in text and "beyond normal variation:" not in text
    assert "20.048 now, 20.048 then, a change of 0.000 (95% interval −0.197 to +0.197)" in text
    moved = pd.DataFrame({"y": _normal(5, 200, 23.0)})
    _, text, _, _ = _compare(tmp_path, same, moved)
    assert re.search(r"over all rows: 2[23]\.\d{3} now, 20\.048 then, a change of \+", text)
    assert ": beyond normal variation." in text and "within normal variation" not in text


def test_byte_for_byte_the_same_data_is_said_only_when_the_hash_matches(tmp_path):
    frame = pd.DataFrame({"y": _normal(6, 50, 3.0)})
    _, text, _, _ = _compare(tmp_path, frame, frame)
    assert "byte for byte the one it used (same SHA-256)" in text
    _, text, _, _ = _compare(tmp_path, frame, frame.iloc[:-1])
    assert "byte for byte" not in text


def test_rows_read_are_stated_as_a_count_not_tested(tmp_path):
    frame = pd.DataFrame({"y": _normal(7, 40, 3.0)})
    _, text, _, _ = _compare(tmp_path, frame, frame)
    assert "Rows read: 40, as then." in text
    _, text, _, _ = _compare(tmp_path, frame, pd.concat([frame, frame.iloc[:10]]))
    assert "Rows read: 50 now, 40 then (+25.0%)." in text
    _, text, _, _ = _compare(tmp_path, frame, frame.iloc[:30])
    assert "Rows read: 30 now, 40 then (−25.0%)." in text


def test_a_config_change_is_named(tmp_path):
    frame = pd.DataFrame({"y": _normal(8, 40, 3.0)})
    *_, stored = _run(tmp_path, frame, "then", confidence=0.9)
    spec, stats, record, _ = _run(tmp_path, frame, "now")
    since = compare_runs(stats, record, PreviousRun("p", stored, None))
    text = " ".join(since_section(since, wording_for(stats, "Y"), spec, None).lines)
    assert "The config then differed in confidence" in text
    _, text, _, _ = _compare(tmp_path, frame, frame)
    assert "config then differed" not in text


def test_columns_added_dropped_and_retyped_are_said_at_the_top(tmp_path):
    then = pd.DataFrame({"y": _normal(9, 30, 1.0), "code": range(30), "old": ["a"] * 30})
    now = pd.DataFrame({"y": _normal(9, 30, 1.0), "code": ["c"] * 30, "new": [1.5] * 30})
    since, text, stats, spec = _compare(tmp_path, then, now)
    notice = column_notice(since)
    assert notice == (
        "The data's columns changed since the last brief (built 2026-12-01): "
        "added new; dropped old; code was number, now text."
    )
    assert notice in text and "same columns as then" not in text
    doc = build_document(stats, spec, "2026-12-02", "data.csv", since=since)
    assert doc.notices == (notice,)
    since, text, stats, spec = _compare(tmp_path, then, then)
    assert column_notice(since) is None and "The data have the same columns as then" in text
    assert build_document(stats, spec, "2026-12-02", "data.csv", since=since).notices == ()


def test_whole_numbers_that_gain_a_decimal_are_still_numbers(tmp_path):
    then = pd.DataFrame({"y": _normal(10, 30, 1.0), "count": range(30)})
    now = then.assign(count=[i + 0.5 for i in range(30)])
    since, _, _, _ = _compare(tmp_path, then, now)
    assert since.columns == ()


def test_an_older_stats_json_without_a_record_says_columns_cannot_be_said(tmp_path):
    frame = pd.DataFrame({"y": _normal(11, 30, 1.0)})
    *_, stored = _run(tmp_path, frame, "then")
    del stored["made_from"]
    spec, stats, record, _ = _run(tmp_path, frame, "now")
    since = compare_runs(stats, record, PreviousRun("p", stored, None))
    text = " ".join(since_section(since, wording_for(stats, "Y"), spec, None).lines)
    assert "did not record its columns" in text and "byte for byte" not in text
    assert since.changes[0].beyond is False  # the numbers still compare


@pytest.mark.parametrize(
    ("change", "expected"),
    [
        ({"y": "other"}, "No comparison with an earlier brief: the last brief was about other"),
        (
            {"kind": "binary"},
            "No comparison with an earlier brief: the last brief read the target as binary",
        ),
    ],
)
def test_briefs_about_another_target_are_not_compared(tmp_path, change, expected):
    frame = pd.DataFrame({"y": _normal(12, 30, 1.0)})
    *_, stored = _run(tmp_path, frame, "then")
    if "y" in change:
        stored["target"] = change["y"]
    else:
        stored["stats"]["target_kind"]["kind"] = change["kind"]
    spec, stats, record, _ = _run(tmp_path, frame, "now")
    since = compare_runs(stats, record, PreviousRun("p", stored, None))
    section = since_section(since, wording_for(stats, "Y"), spec, None)
    assert section.lines[0].startswith(expected) and len(section.lines) == 1
    assert section.table is None and since.changes == ()


def test_a_missing_previous_run_is_one_line(tmp_path):
    frame = pd.DataFrame({"y": _normal(13, 30, 1.0)})
    spec, stats, record, _ = _run(tmp_path, frame)
    since = compare_runs(stats, record, PreviousRun("out", None, "no earlier brief was made"))
    section = since_section(since, wording_for(stats, "Y"), spec, None)
    assert section.lines == ("No comparison with an earlier brief: no earlier brief was made.",)
    _, text, _, _ = _compare(tmp_path, frame, frame)
    assert "No comparison" not in text


def test_levels_beyond_normal_variation_are_named_and_only_they(tmp_path):
    rng = np.random.default_rng(14)
    then = pd.DataFrame({"site": ["north", "south"] * 100, "y": rng.normal(5, 1, 200)})
    now = then.assign(y=then.y + np.where(then.site == "north", 2.0, 0.0))
    _, text, _, _ = _compare(tmp_path, then, now, groups=["site"])
    assert "Beyond normal variation: north (site, +2.0" in text
    assert "south (site" not in text and "No level of" not in text
    _, text, _, _ = _compare(tmp_path, then, then, groups=["site"])
    assert "No level of site moved beyond normal variation (2 levels compared)." in text
    assert "Beyond normal variation:" not in text


def test_the_fold_of_small_levels_is_never_compared(tmp_path):
    levels = [f"l{i:02d}" for i in range(6)]
    frame = pd.DataFrame({"g": [levels[i % 6] for i in range(120)], "y": _normal(15, 120, 1.0)})
    since, _, _, _ = _compare(tmp_path, frame, frame, groups=["g"], max_levels=3)
    compared = {c.level for c in since.changes if c.variable == "g"}
    assert compared and not any(str(level).startswith("Other") for level in compared)


def _trend_frame(start: str, days: int, seed: int) -> pd.DataFrame:
    times = pd.date_range(start, periods=days * 4, freq="6h")
    return pd.DataFrame({"t": times, "y": _normal(seed, len(times), 10.0)})


def test_the_latest_period_then_and_now(tmp_path):
    then = _trend_frame("2026-01-05", 56, 16)
    now = _trend_frame("2026-01-05", 63, 16)
    since, text, _, _ = _compare(tmp_path, then, now, time={"column": "t", "period": "week"})
    trend = next(c for c in since.changes if c.key == "trend")
    assert (trend.period_then, trend.period_now) == ("2026-02-23", "2026-03-02")
    assert "Latest week (2026-03-02): mean" in text
    assert "in the latest week then (2026-02-23)" in text and "the same week as then" not in text
    since, text, _, _ = _compare(
        tmp_path, then, then.iloc[:-2], time={"column": "t", "period": "week"}
    )
    assert "Latest week (2026-02-23, the same week as then, now 26 rows, then 28)" in text


def test_a_zero_one_target_is_compared_by_shares_in_points(tmp_path):
    then = pd.DataFrame({"y": [1] * 30 + [0] * 70})
    now = pd.DataFrame({"y": [1] * 60 + [0] * 40})
    since, text, _, _ = _compare(tmp_path, then, now)
    (change,) = since.changes
    assert change.measure == "share"
    assert (
        "Share of y over all rows: 60.0% now, 30.0% then, a change of +30.0 percentage points"
        in text
    )
    assert (
        "points): beyond normal variation." in text and "Newcombe's hybrid score interval" in text
    )
    from briefgen.stats.proportions import newcombe_interval

    # Newcombe (1998) method 10, the brief's own implementation (checked against his Table II).
    assert (change.ci_low, change.ci_high) == pytest.approx(newcombe_interval(60, 100, 30, 100)[1:])


def _since(changes: tuple[KeyChange, ...], adjusted: float = 0.95) -> SinceLastTime:
    return SinceLastTime(
        "p", "2026-12-01", None, None, (), True, (), None, changes, "bonferroni", 0.95, adjusted
    )


def _key(key="overall", beyond=None, low=None, high=None, **extra) -> KeyChange:
    fields = dict(
        key=key, measure="mean", variable=None, level=None, period_then=None, period_now=None,
        n_then=1, value_then=1.0, n_now=1, value_now=2.0, difference=1.0, ci_low=low,
        ci_high=high, beyond=beyond,
    ) | extra  # fmt: skip
    return KeyChange(**fields)


def test_a_number_without_an_interval_is_not_tested(tmp_path):
    spec, stats, *_ = _run(tmp_path, pd.DataFrame({"y": _normal(17, 30, 1.0)}))
    section = since_section(_since((_key(),)), wording_for(stats, "Y"), spec, None)
    text = " ".join(section.lines)
    assert "not tested: too few rows or no spread for an interval" in text
    assert "normal variation" not in text and "hold together" not in text
    assert section.table.rows[-1][-1] == "not tested"


def test_the_method_line_names_the_family_or_a_single_interval(tmp_path):
    spec, stats, *_ = _run(tmp_path, pd.DataFrame({"y": _normal(18, 30, 1.0)}))
    words = wording_for(stats, "Y")
    one = since_section(_since((_key(beyond=False, low=-1.0, high=3.0),)), words, spec, None)
    assert "The interval is at 95%." in " ".join(one.lines)
    many = tuple(_key("group-g", False, -1.0, 3.0, variable="g", level=str(i)) for i in range(3))
    three = since_section(_since(many, 1 - 0.05 / 3), words, spec, None)
    assert (
        "The 3 intervals hold together at 95%: each is a 98.3% interval (Bonferroni)."
        in " ".join(three.lines)
    )
    assert "wider than they need be" in " ".join(three.lines)


def test_a_zero_one_target_compares_each_level_by_its_share(tmp_path):
    then = pd.DataFrame({"site": ["north", "south"] * 100, "y": [1, 0] * 50 + [0, 0] * 50})
    now = then.assign(y=[1, 0] * 50 + [1, 0] * 50)  # north's share goes from 50% to 100%
    since, text, _, _ = _compare(tmp_path, then, now, groups=["site"])
    north = next(c for c in since.changes if c.level == "north")
    south = next(c for c in since.changes if c.level == "south")
    assert (north.value_then, north.value_now, north.measure) == (0.5, 1.0, "share")
    assert north.beyond is True and south.beyond is False
    # Newcombe (1998) at the Bonferroni level over the three shares compared.
    from briefgen.stats.proportions import newcombe_interval

    expected = newcombe_interval(100, 100, 50, 100, 1 - 0.05 / 3)[1:]
    assert (north.ci_low, north.ci_high) == pytest.approx(expected)
    assert "Beyond normal variation: north (site, +50.0 percentage points, interval +" in text


def test_a_stats_json_of_another_shape_is_one_line_not_an_error(tmp_path):
    frame = pd.DataFrame({"site": ["north", "south"] * 20, "y": _normal(19, 40, 1.0)})
    *_, stored = _run(tmp_path, frame, "then", groups=["site"])
    stored["stats"]["groups"] = [{"variable": "site", "summaries": 5}]
    stored["made_from"]["schema"] = "columns"
    spec, stats, record, _ = _run(tmp_path, frame, "now", groups=["site"])
    since = compare_runs(stats, record, PreviousRun("p", stored, None))
    text = " ".join(since_section(since, wording_for(stats, "Y"), spec, None).lines)
    assert (
        text == "No comparison with an earlier brief: p holds values briefgen does not write there."
    )


def test_the_opening_and_method_sentences_name_the_baseline_and_the_interval(tmp_path):
    frame = pd.DataFrame({"y": _normal(20, 40, 1.0)})
    _, text, _, _ = _compare(tmp_path, frame, frame)
    assert text.startswith("Compared with the brief built on 2026-12-01 (then/stats.json).")
    assert "Welch's interval from each run's n, mean and spread" in text
    assert "Newcombe" not in text and "did not record its columns" not in text
    *_, stored = _run(tmp_path, frame, "undated")
    del stored["built_on"]
    spec, stats, record, _ = _run(tmp_path, frame, "now")
    since = compare_runs(stats, record, PreviousRun("old.json", stored, None))
    section = since_section(since, wording_for(stats, "Y"), spec, None)
    assert section.lines[0] == "Compared with the brief (old.json)."
    assert section.table.notes == ("Rows read is a count, stated and not tested.",)


def test_the_table_names_the_latest_period_and_says_how_it_was_chosen(tmp_path):
    then = _trend_frame("2026-01-05", 56, 21)
    since, _, stats, spec = _compare(tmp_path, then, then, time={"column": "t", "period": "week"})
    table = since_section(since, wording_for(stats, "Y"), spec, "week").table
    assert tuple(r[0] for r in table.rows if "week" in r[0]) == ("Latest week (2026-02-23)",)
    assert "Latest period: this run's last period against the last run's last period." in (
        table.notes
    )
    assert table.header[4] == "97.5% interval"  # two numbers with intervals: 1 − 0.05/2
