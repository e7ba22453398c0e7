"""Excel workbooks as sources (issue 9 item 7): a sheet by name, streamed in batches.

Workbooks are written here with openpyxl from the Palmer penguins (Horst, Hill &
Gorman 2020, palmerpenguins package) and from constructed columns; the brief's
numbers are checked against pandas on the same values (reference implementation).
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import pandas as pd
import pytest
import yaml
from openpyxl import Workbook
from palmerpenguins import load_penguins

from briefgen import workbook
from briefgen.cli import main


def _write(path: Path, sheets: dict[str, list[list]]) -> None:
    book = Workbook()
    book.remove(book.active)
    for name, rows in sheets.items():
        sheet = book.create_sheet(name)
        for row in rows:
            sheet.append(row)
    book.save(path)


def _rows(frame: pd.DataFrame) -> list[list]:
    cells = frame.astype(object).where(frame.notna(), None)
    return [list(frame.columns), *cells.values.tolist()]


def _config(folder: Path, data: dict, **keys) -> Path:
    settings = {
        "title": "From a workbook",
        "data": data,
        "target": "body_mass_g",
        "groups": ["species"],
        "predictors": ["flipper_length_mm"],
        "output": {"dir": "out", "formats": ["json"]},
    } | keys
    path = folder / "brief.yaml"
    path.write_text(yaml.safe_dump(settings, sort_keys=False), encoding="utf-8")
    return path


def _built(folder: Path, capsys) -> dict:
    assert main(["--quiet", "build", str(folder / "brief.yaml")]) == 0, capsys.readouterr().err
    return json.loads((folder / "out" / "stats.json").read_text())["stats"]


def _refused(folder: Path, capsys, code: int) -> str:
    assert main(["--quiet", "build", str(folder / "brief.yaml")]) == code
    err = capsys.readouterr().err
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1 and "Traceback" not in err, err
    return " ".join(lines[0].split())


def test_a_sheet_named_in_the_config_gives_the_numbers_pandas_gives(tmp_path, capsys):
    frame = load_penguins()
    _write(
        tmp_path / "zoo.xlsx",
        {"Notes": [["read me"], ["penguins are on the next sheet"]], "Penguins": _rows(frame)},
    )
    _config(tmp_path, {"path": "zoo.xlsx", "sheet": "Penguins"}, where="island != 'Dream'")
    stats = _built(tmp_path, capsys)
    chosen = frame[frame.island != "Dream"]
    values = chosen.body_mass_g.dropna()
    assert stats["accounting"]["rows_in_source"] == len(frame)
    assert stats["overall"]["n"] == len(values)
    assert stats["overall"]["mean"] == pytest.approx(values.mean(), rel=1e-12)
    means = chosen.groupby("species").body_mass_g.mean()
    for summary in stats["groups"][0]["summaries"]:
        assert summary["mean"] == pytest.approx(means[summary["level"]], rel=1e-12)


def test_rows_arrive_in_batches_and_a_late_na_widens_the_column(tmp_path, capsys, monkeypatch):
    sizes: list[int] = []
    append = workbook._Appender.append

    def counted(self, rows):
        sizes.append(len(rows))
        return append(self, rows)

    monkeypatch.setattr(workbook, "BATCH_ROWS", 50)
    monkeypatch.setattr(workbook._Appender, "append", counted)
    days = [dt.datetime(2026, 7, 1) + dt.timedelta(hours=9 * i) for i in range(180)]
    mass = [3000 + 7 * (i % 40) for i in range(180)]
    mass[120] = "NA"  # a text marker after two batches of whole numbers
    mass[150] = None
    rows = [["when", "species", "body_mass_g", "flipper_length_mm"]]
    rows += [[days[i], ["a", "b", "c"][i % 3], mass[i], 180.0 + i % 17] for i in range(180)]
    rows.insert(60, [None, None, None, None])  # a blank row is skipped
    _write(tmp_path / "log.xlsx", {"Log": rows})
    _config(tmp_path, {"path": "log.xlsx"}, time="when")
    stats = _built(tmp_path, capsys)
    assert sizes == [50, 50, 50, 30]  # never the whole sheet at once
    numbers = pd.to_numeric(pd.Series(mass), errors="coerce").dropna()
    assert stats["accounting"]["rows_read"] == 180
    assert stats["accounting"]["target_missing"] == 2
    assert stats["overall"]["mean"] == pytest.approx(numbers.mean(), rel=1e-12)
    assert stats["trend"]["first_time"].startswith("2026-07-01")


def test_a_sheet_the_workbook_lacks_is_named_with_the_sheets_it_has(tmp_path, capsys):
    _write(tmp_path / "zoo.xlsx", {"Penguins": _rows(load_penguins()), "Notes": [["x"]]})
    _config(tmp_path, {"path": "zoo.xlsx", "sheet": "Pengiuns"})
    line = _refused(tmp_path, capsys, 3)
    assert "sheet 'Pengiuns' named by data.sheet is not in the workbook" in line
    assert "its sheets are: Penguins, Notes." in line


@pytest.mark.parametrize(
    ("header", "expected"),
    [
        (["species", None, "body_mass_g"], "column 2 of sheet 'S' has no name in row 1"),
        (["species", "species", "body_mass_g"], "repeats the column name 'species'"),
    ],
)
def test_a_header_without_a_name_or_with_a_repeat_is_refused(tmp_path, capsys, header, expected):
    _write(tmp_path / "bad.xlsx", {"S": [header, ["a", 1, 2]]})
    _config(tmp_path, {"path": "bad.xlsx"}, predictors=[])
    assert expected in _refused(tmp_path, capsys, 3)


def test_a_sheet_with_format_csv_is_a_config_error(tmp_path, capsys):
    _config(tmp_path, {"path": "x.csv", "format": "csv", "sheet": "S"})
    assert "set format: excel" in _refused(tmp_path, capsys, 2)


def test_init_proposes_a_config_from_a_workbook_that_then_builds(tmp_path, capsys):
    _write(tmp_path / "zoo.xlsx", {"Penguins": _rows(load_penguins())})
    config = tmp_path / "brief.yaml"
    assert main(["--quiet", "init", str(tmp_path / "zoo.xlsx"), "--config", str(config)]) == 0
    proposed = yaml.safe_load(config.read_text())
    assert proposed["data"]["path"] == "zoo.xlsx"
    assert proposed["target"] in load_penguins().columns and "species" in proposed["groups"]
    assert main(["--quiet", "build", str(config)]) == 0, capsys.readouterr().err
