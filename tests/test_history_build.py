"""Since last time through the command line: the section, --compare, and a missing baseline."""

from __future__ import annotations

import html
import json
import re

import pandas as pd
from test_cli import _write_case

from briefgen.cli import main


def _text(path) -> str:
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", path.read_text())).split())


def test_the_second_build_compares_with_the_first(tmp_path):
    config = _write_case(tmp_path, "compare_with: previous\n")
    assert main(["build", str(config)]) == 0
    first = _text(tmp_path / "out" / "brief.html")
    assert "No comparison with an earlier brief: no earlier brief has been published in" in first
    frame = pd.read_csv(tmp_path / "data.csv")
    frame.assign(extra=1.0).to_csv(tmp_path / "data.csv", index=False)
    assert main(["build", str(config)]) == 0
    second = _text(tmp_path / "out" / "brief.html")
    notice = "The data's columns changed since the last brief (built"
    assert second.index(notice) < second.index("What the numbers show")  # top of page 1
    assert "Since the last brief" in second and "Rows read: 40, as then." in second
    stats = json.loads((tmp_path / "out" / "stats.json").read_text())
    assert "/runs/" in stats["since"]["previous"] and stats["since"]["same_data"] is False
    assert stats["since"]["columns"] == [
        {"column": "extra", "change": "added", "type_then": None, "type_now": "number"}
    ]


def test_compare_takes_a_stats_json_and_a_bad_one_is_one_line(tmp_path):
    config = _write_case(tmp_path)
    (tmp_path / "broken.json").write_text("{")
    assert main(["build", str(config), "--compare", str(tmp_path / "broken.json")]) == 0
    text = _text(tmp_path / "out" / "brief.html")
    assert (
        f"No comparison with an earlier brief: {tmp_path / 'broken.json'} is not valid JSON."
        in text
    )
    saved = tmp_path / "saved.json"
    saved.write_bytes((tmp_path / "out" / "stats.json").read_bytes())
    assert main(["build", str(config), "--compare", str(saved)]) == 0
    text = _text(tmp_path / "out" / "brief.html")
    assert "byte for byte the one it used (same SHA-256)" in text
    assert "No level of site moved beyond normal variation (2 levels compared)." in text


def test_without_compare_there_is_no_section_but_the_record_is_kept(tmp_path):
    config = _write_case(tmp_path)
    assert main(["build", str(config)]) == 0
    assert "Since the last brief" not in _text(tmp_path / "out" / "brief.html")
    stats = json.loads((tmp_path / "out" / "stats.json").read_text())
    assert stats["since"] is None and stats["checks"] is None
    assert len(stats["made_from"]["data"]["sha256"]) == 64
