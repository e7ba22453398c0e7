"""The record stats.json keeps of what a brief was built from, and how the previous run is found.

References: the SHA-256 test vector of FIPS 180-2 (Appendix B.1, message "abc") and GNU
coreutils' sha256sum on a file larger than one read.
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pandas as pd
import pytest
import yaml

from briefgen.config import load_spec
from briefgen.deliver.publish import write_outputs
from briefgen.history.previous import find_previous, read_previous
from briefgen.history.record import HASH_CHUNK, config_as_used, file_sha256, record_run
from briefgen.source import open_source


def test_sha256_matches_the_fips_180_2_vector(tmp_path):
    path = tmp_path / "abc"
    path.write_bytes(b"abc")
    # FIPS 180-2, Appendix B.1: SHA-256("abc").
    assert file_sha256(path) == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


@pytest.mark.skipif(shutil.which("sha256sum") is None, reason="coreutils sha256sum not installed")
def test_sha256_of_a_file_of_several_reads_matches_sha256sum(tmp_path):
    path = tmp_path / "big.bin"
    block = bytes(range(256)) * 4099  # not a multiple of the read size
    path.write_bytes(block * (3 * HASH_CHUNK // len(block) + 1))
    assert path.stat().st_size > 3 * HASH_CHUNK
    # GNU coreutils sha256sum as the outside reference.
    expected = subprocess.run(
        ["sha256sum", str(path)], check=True, capture_output=True, text=True
    ).stdout.split()[0]
    assert file_sha256(path) == expected


def _spec(folder: Path, **config):
    settings = {"title": "Record", "data": {"path": "data.csv"}, "target": "y"} | config
    (folder / "brief.yaml").write_text(yaml.safe_dump(settings), encoding="utf-8")
    return load_spec(folder / "brief.yaml")


def test_the_record_holds_hash_size_schema_config_and_versions(tmp_path):
    frame = pd.DataFrame(
        {"y": [1.5, 2.5], "n": [1, 2], "name": ["a", "b"], "day": ["2026-01-01", "2026-01-02"]}
    )
    frame.to_csv(tmp_path / "data.csv", index=False)
    spec = _spec(
        tmp_path,
        delivery={
            "email": {"host": "h", "sender": "s@example.org", "recipients": ["r@example.org"]}
        },
    )
    record = record_run(spec, open_source(spec).columns, 2)
    data = (tmp_path / "data.csv").read_bytes()
    assert record.data.bytes == len(data) and record.data.rows == 2 and record.data.query is None
    assert record.data.sha256 == file_sha256(tmp_path / "data.csv")
    kinds = {c.name: c.kind for c in record.schema}
    assert kinds == {"y": "number", "n": "number", "name": "text", "day": "date/time"}
    assert [c.name for c in record.schema] == ["y", "n", "name", "day"]
    assert record.config["target"] == "y" and record.config["confidence"] == 0.95
    assert "delivery" not in record.config and "source_file" not in record.config
    assert record.config == config_as_used(spec)
    assert record.built_with.engine == "duckdb" and record.built_with.engine_version[0].isdigit()


def _publish(folder: Path, stats: dict) -> None:
    write_outputs(folder, {"stats.json": json.dumps(stats).encode()})


STORED = {"target": "y", "stats": {}, "built_on": "2026-12-01"}


def test_the_previous_run_is_the_one_current_points_at(tmp_path):
    spec = _spec(tmp_path, output={"dir": "out"})
    folder = spec.output_dir()
    missing = find_previous(spec, folder)
    assert missing.stats is None and missing.reason.startswith(
        "no earlier brief has been published"
    )
    _publish(folder, STORED)
    found = find_previous(spec, folder)
    assert found.stats == STORED and found.reason is None
    assert "/runs/" in found.source  # the run folder itself, which outlives the next switch


def test_dated_folders_are_searched_for_the_newest_published_run(tmp_path):
    spec = _spec(tmp_path, output={"dir": "briefs/{date}"})
    _publish(spec.output_dir(None, "2026-11-30"), STORED | {"built_on": "2026-11-30"})
    _publish(spec.output_dir(None, "2026-12-01"), STORED)
    today = spec.output_dir(None, "2026-12-02")
    assert find_previous(spec, today).stats["built_on"] == "2026-12-01"
    # An --out folder outside the template finds only its own history.
    assert find_previous(spec, tmp_path / "elsewhere").stats is None


def test_a_published_brief_without_stats_json_is_a_reason(tmp_path):
    spec = _spec(tmp_path, output={"dir": "out"})
    write_outputs(spec.output_dir(), {"brief.html": b"<p>"})
    assert find_previous(spec, spec.output_dir()).reason == (
        "the last published brief has no stats.json"
    )


@pytest.mark.parametrize(
    ("content", "reason"),
    [
        (None, "does not exist"),
        (b"{not json", "is not valid JSON"),
        (b'{"a": 1}', "is not a stats.json written by briefgen"),
        (b"\xff\xfe", "could not be read (UnicodeDecodeError)"),
    ],
)
def test_an_unreadable_stats_json_is_a_reason_not_an_error(tmp_path, content, reason):
    path = tmp_path / "stats.json"
    if content is not None:
        path.write_bytes(content)
    previous = read_previous(path)
    assert previous.stats is None and previous.reason.endswith(reason)


def test_compare_with_names_a_file_relative_to_the_config(tmp_path):
    (tmp_path / "old.json").write_text(json.dumps(STORED))
    spec = _spec(tmp_path, compare_with="old.json")
    assert find_previous(spec, tmp_path / "out").stats == STORED
