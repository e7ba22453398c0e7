"""Choosing rows (issue 9 item 7): the ``where`` language and the ``window`` before the build date.

The rows a condition selects are checked against pandas boolean masks written
independently on the Palmer penguins (Horst, Hill & Gorman 2020, from the palmerpenguins
package) and on constructed frames; window dates against hand-worked calendar
arithmetic; the row accounting against pandas counts.
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import pandas as pd
import pytest
import yaml
from palmerpenguins import load_penguins

from briefgen.cli import main
from briefgen.config import load_spec
from briefgen.errors import ConfigError
from briefgen.rows.scope import where_words
from briefgen.rows.where import Compare, InList, IsMissing, Logical, Not, WhereError, parse_where
from briefgen.rows.window import window_for
from briefgen.source import open_source
from briefgen.stats import compute


def _penguin_spec(folder: Path, **keys) -> Path:
    frame = load_penguins()
    frame.to_csv(folder / "penguins.csv", index=False)
    settings = {
        "title": "Penguins",
        "data": {"path": "penguins.csv"},
        "target": "body_mass_g",
        "groups": ["species"],
        "predictors": ["flipper_length_mm"],
        "output": {"dir": "out", "formats": ["json"]},
    } | keys
    path = folder / "brief.yaml"
    path.write_text(yaml.safe_dump(settings, sort_keys=False), encoding="utf-8")
    return path


# ── the grammar ─────────────────────────────────────────────────────────────────────


def test_and_binds_tighter_than_or_and_not_applies_to_one_test():
    tree = parse_where("a = 1 or b = 2 and not c = 3")
    assert isinstance(tree, Logical) and tree.operator == "or"
    assert isinstance(tree.parts[1], Logical) and tree.parts[1].operator == "and"
    assert isinstance(tree.parts[1].parts[1], Not)


def test_literals_lists_dates_and_missing_parse_to_their_values():
    tree = parse_where("""site NOT IN ('north', 'it''s') and "odd name" is not missing""")
    listed, missing = tree.parts
    assert isinstance(listed, InList) and listed.negated
    assert [o.value for o in listed.options] == ["north", "it's"]
    assert isinstance(missing, IsMissing) and missing.negated and missing.value.name == "odd name"
    when = parse_where("t >= 2026-07-01T14:05")
    assert isinstance(when, Compare) and when.right.value == dt.datetime(2026, 7, 1, 14, 5)
    assert parse_where("t < date '2026-07-01'").right.value == dt.datetime(2026, 7, 1)
    assert parse_where("x > -1.5e2").right.value == -150.0


@pytest.mark.parametrize(
    ("text", "position", "expected"),
    [
        ("distance <", 11, "expected a value after '<'"),
        ("site in ('a' 'b')", 14, "expected ',' or ')' to end the list"),
        ("(a = 1", 7, "expected ')' to close the '('"),
        ("a = 1 b = 2", 7, "expected 'and', 'or' or the end of the condition"),
        ("a is empty", 6, "expected 'missing' after 'is'"),
        ("a ; drop table x", 3, "expected a column, a value or an operator, found ';'"),
        ("a drop", 3, "expected a comparison"),
        ("t > date '2026-13-01'", 10, "expected a date such as 2026-07-01"),
        ("a = 'open", 5, "expected a column, a value or an operator"),
    ],
)
def test_a_condition_that_does_not_parse_names_position_and_what_was_expected(
    text, position, expected
):
    with pytest.raises(WhereError) as caught:
        parse_where(text)
    assert f"at character {position} " in str(caught.value) and expected in str(caught.value)


def test_the_condition_reads_back_in_words():
    tree = parse_where("not (a = 1 or b is missing) and c between 2 and 3.5 and not d in ('x')")
    assert where_words(tree) == (
        "not (a is 1 or b is empty) and c is between 2 and 3.5 and d is not one of “x”"
    )


# ── the rows it selects ─────────────────────────────────────────────────────────────


@pytest.mark.parametrize(
    ("where", "mask"),
    [
        (
            "species = 'Adelie' and body_mass_g > 3500",
            lambda f: (f.species == "Adelie") & (f.body_mass_g > 3500),
        ),
        (
            "island in ('Dream', 'Torgersen') or not flipper_length_mm <= 210",
            lambda f: f.island.isin(["Dream", "Torgersen"]) | (f.flipper_length_mm > 210),
        ),
        ("sex is missing", lambda f: f.sex.isna()),
        (
            "bill_length_mm not between 40 and 45.5 and year != 2008",
            lambda f: (
                ~f.bill_length_mm.between(40, 45.5) & f.bill_length_mm.notna() & (f.year != 2008)
            ),
        ),
        ("year = '2009'", lambda f: f.year == 2009),  # a numeric code compared as text
    ],
)
def test_where_selects_the_rows_pandas_selects_on_the_penguins(tmp_path, where, mask):
    spec = load_spec(_penguin_spec(tmp_path, where=where))
    source = open_source(spec, "2026-12-02")
    frame = load_penguins()
    # Reference: pandas boolean masks; a row with a missing value in a comparison is not selected.
    expected = int(mask(frame).fillna(False).sum())
    assert source.table.count().to_pyarrow().as_py() == expected
    stats = compute(source, spec)
    assert stats.accounting.rows_read == expected
    assert stats.accounting.rows_in_source == len(frame) == 344
    (left_out,) = stats.accounting.selection
    assert left_out.rows == 344 - expected and left_out.reason.startswith("not where ")
    # The statistics see only the selected rows: the mean matches pandas on the same rows.
    chosen = frame[mask(frame).fillna(False)]
    assert stats.overall.n == int(chosen.body_mass_g.notna().sum())
    assert stats.overall.mean == pytest.approx(chosen.body_mass_g.mean(), rel=1e-12)


@pytest.mark.parametrize("where", [None, "island = 'Dream' or bill_depth_mm > 18"])
def test_columns_no_setting_names_are_not_stored_but_their_empty_cells_are_counted(tmp_path, where):
    """Only named columns are copied into the engine; every column's empty cells still count.

    Reference: pandas ``isna().sum()`` per column over the rows the condition selects,
    in the file's column order, on the Palmer penguins (8 columns, 5 with empty cells).
    """
    keys = {"where": where} if where else {}
    spec = load_spec(_penguin_spec(tmp_path, **keys))
    source = open_source(spec, "2026-12-02")
    frame = load_penguins()
    named = ["species", "flipper_length_mm", "body_mass_g"]
    named += ["island", "bill_depth_mm"] if where else []
    stored = source.scope.unselected if source.scope else source.table
    assert list(stored.columns) == [c for c in frame.columns if c in named]
    assert list(source.columns.names) == list(frame.columns)
    stats = compute(source, spec)
    chosen = frame
    if where:
        chosen = frame[((frame.island == "Dream") | (frame.bill_depth_mm > 18)).fillna(False)]
    expected = {column: int(n) for column, n in chosen.isna().sum().items()}
    assert stats.accounting.missing_by_column == expected
    assert list(stats.accounting.missing_by_column) == list(frame.columns)
    assert expected["sex"] > 0 and "sex" not in named  # an unused column with empty cells


def test_a_window_selects_the_same_rows_for_the_empty_cells_of_unused_columns(
    tmp_path, monkeypatch
):
    frame = _timed(tmp_path)
    frame["note"] = ["" if i % 4 == 0 else f"n{i}" for i in range(len(frame))]
    frame["code"] = [None if i % 5 == 0 else float(i) for i in range(len(frame))]
    frame.to_csv(tmp_path / "timed.csv", index=False)
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1796169600")  # 2026-12-02 00:00 UTC
    config = {
        "title": "Window",
        "data": {"path": "timed.csv"},
        "target": "minutes",
        "window": {"column": "t", "last": "7 days"},
        "output": {"dir": "out", "formats": ["json"]},
    }
    (tmp_path / "brief.yaml").write_text(yaml.safe_dump(config), encoding="utf-8")
    spec = load_spec(tmp_path / "brief.yaml")
    source = open_source(spec)
    assert list(source.table.columns) == ["t", "minutes"]
    stats = compute(source, spec)
    # Reference: pandas on the rows inside the window (read back as the CSV holds them).
    read = pd.read_csv(tmp_path / "timed.csv")
    times = pd.to_datetime(read.t)
    inside = read[(times >= "2026-11-25") & (times < "2026-12-02")]
    assert stats.accounting.rows_read == len(inside)
    assert stats.accounting.missing_by_column == {c: int(n) for c, n in inside.isna().sum().items()}
    assert stats.accounting.missing_by_column["note"] > 0


# ── the window ──────────────────────────────────────────────────────────────────────


@pytest.mark.parametrize(
    ("last", "built_on", "start", "end"),
    [
        ("7 days", "2026-12-02", "2026-11-25", "2026-12-02"),
        ("1 week", "2026-03-01", "2026-02-22", "2026-03-01"),
        # Calendar months back, the day clamped to the month's end (worked by hand:
        # 2026 is not a leap year, so 31 March minus one month is 28 February).
        ("1 month", "2026-03-31", "2026-02-28", "2026-03-31"),
        ("3 months", "2026-01-15", "2025-10-15", "2026-01-15"),
        ("2 years", "2028-02-29", "2026-02-28", "2028-02-29"),
    ],
)
def test_the_window_ends_where_the_build_date_begins(last, built_on, start, end):
    window = window_for("t", last, built_on)
    assert (window.start.isoformat(), window.end.isoformat()) == (start, end)


def _timed(folder: Path) -> pd.DataFrame:
    stamps = pd.date_range("2026-10-01", "2026-12-03 23:00", freq="7h")
    frame = pd.DataFrame(
        {
            "t": stamps.strftime("%Y-%m-%d %H:%M"),
            "site": ["north", "south", "east"] * (len(stamps) // 3) + ["north"] * (len(stamps) % 3),
            "minutes": [float(i % 11) for i in range(len(stamps))],
        }
    )
    frame.to_csv(folder / "timed.csv", index=False)
    return frame


def test_the_window_counts_back_from_source_date_epoch_and_says_so(tmp_path, monkeypatch):
    frame = _timed(tmp_path)
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1796169600")  # 2026-12-02 00:00 UTC
    config = {
        "title": "Window",
        "data": {"path": "timed.csv"},
        "target": "minutes",
        "groups": ["site"],
        "time": "t",
        "where": "site != 'east'",
        "window": {"column": "t", "last": "7 days"},
        "output": {"dir": "out", "formats": ["html", "json"]},
    }
    (tmp_path / "brief.yaml").write_text(yaml.safe_dump(config), encoding="utf-8")
    assert main(["--quiet", "build", str(tmp_path / "brief.yaml")]) == 0
    stats = json.loads((tmp_path / "out" / "stats.json").read_text())["stats"]
    times = pd.to_datetime(frame.t)
    kept = frame.site != "east"
    inside = (times >= "2026-11-25") & (times < "2026-12-02")
    accounting = stats["accounting"]
    assert accounting["rows_in_source"] == len(frame)
    assert accounting["rows_read"] == int((kept & inside).sum())
    where, window = accounting["selection"]
    assert where["rows"] == int((~kept).sum())
    assert window["rows"] == int((kept & ~inside).sum())  # of the rows where kept
    assert "2026-11-25 to 2026-12-01" in window["reason"]
    html = (tmp_path / "out" / "brief.html").read_text()
    sentence = (
        "This brief covers only the rows where site is not “east” and with t in the last "
        "7 days before 2026-12-02 (2026-11-25 to 2026-12-01)."
    )
    assert html.count(sentence) == 2  # page 1 and "How this brief was made"
    assert "computed by the database engine over every row it covers;" in html
    assert f"{accounting['rows_read']:,} of {len(frame):,} rows" in html


# ── refusals: one sentence, the right exit code ─────────────────────────────────────


def _refusal(tmp_path: Path, capsys, code: int, **keys) -> str:
    _timed(tmp_path)
    config = {
        "title": "Refused",
        "data": {"path": "timed.csv"},
        "target": "minutes",
        "groups": ["site"],
        "output": {"dir": "out", "formats": ["json"]},
    } | keys
    (tmp_path / "brief.yaml").write_text(yaml.safe_dump(config), encoding="utf-8")
    assert main(["--quiet", "build", str(tmp_path / "brief.yaml")]) == code
    err = capsys.readouterr().err
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1 and "Traceback" not in err, err
    assert not (tmp_path / "out" / "stats.json").exists()  # nothing published
    return " ".join(lines[0].split())


def test_a_where_that_does_not_parse_is_a_config_error_with_line_and_position(tmp_path, capsys):
    line = _refusal(tmp_path, capsys, 2, where="minutes >> 3")
    assert "key 'where' is invalid: at character 10" in line and "line " in line
    assert "expected a value after '>'" in line


def test_a_where_column_not_in_the_data_is_named_with_a_close_match(tmp_path, capsys):
    line = _refusal(tmp_path, capsys, 3, where="minute > 3")
    assert "column 'minute' named by 'where' (at character 1)" in line
    assert "did you mean 'minutes'?" in line


def test_a_where_comparing_text_with_a_number_is_refused_naming_the_column(tmp_path, capsys):
    line = _refusal(tmp_path, capsys, 3, where="t > 5")
    assert "'where' at character 1: column 't' holds text" in line or "holds dates" in line
    line = _refusal(tmp_path, capsys, 3, where="site > 2026-01-01")
    assert "column 'site'" in line and "dates" in line


def test_a_bad_window_span_is_a_config_error(tmp_path, capsys):
    line = _refusal(tmp_path, capsys, 2, window={"column": "t", "last": "a fortnight"})
    assert "window.last" in line and "such as '7 days'" in line


def test_a_window_column_that_is_missing_or_not_dates_is_refused(tmp_path, capsys):
    line = _refusal(tmp_path, capsys, 3, window={"column": "when", "last": "7 days"})
    assert "column 'when' named by 'window.column' is not in the data" in line
    line = _refusal(tmp_path, capsys, 3, window={"column": "site", "last": "7 days"})
    assert "column 'site'" in line and "no value that reads as a date" in line


def test_a_selection_that_leaves_no_row_is_refused(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1893456000")  # 2030-01-01: after every row
    line = _refusal(tmp_path, capsys, 3, window={"column": "t", "last": "7 days"})
    assert "no row is left after window" in line and "2029-12-25 to 2029-12-31" in line


def test_a_where_is_checked_when_the_config_is_loaded(tmp_path):
    path = _penguin_spec(tmp_path, where="species = ")
    with pytest.raises(ConfigError, match="expected a value after '='"):
        load_spec(path)
