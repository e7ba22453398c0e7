"""Publishing: one atomic switch, the last runs kept, and nothing left behind on any failure."""

from __future__ import annotations

import errno
import os
from pathlib import Path

import pytest
from folder_state import stray_entries, tree, visible_brief

from briefgen.deliver import publish
from briefgen.deliver.publish import current_run, write_outputs
from briefgen.errors import RenderError


def _brief(tag: str) -> dict[str, bytes]:
    return {
        "brief.html": f"<p>{tag}</p>".encode(),
        "brief.pdf": f"%PDF {tag}".encode() * 100,
        "stats.json": f'{{"title": "{tag}"}}'.encode(),
    }


def test_publish_links_the_stable_names_through_current(tmp_path):
    out = tmp_path / "out"
    paths = write_outputs(out, _brief("one"))
    assert paths == [out / name for name in _brief("one")]
    assert visible_brief(out) == _brief("one")
    assert os.readlink(out / "brief.pdf") == "current/brief.pdf"
    assert os.readlink(out / "current") == f"runs/{current_run(out)}"
    assert stray_entries(out) == []


def test_a_second_publish_switches_every_file_and_keeps_the_last_runs(tmp_path):
    out = tmp_path / "out"
    for tag in ["one", "two", "three", "four"]:
        write_outputs(out, _brief(tag), keep=2)
    assert visible_brief(out) == _brief("four")
    runs = sorted(os.listdir(out / "runs"))
    assert len(runs) == 2 and runs[-1] == current_run(out)
    assert (out / "runs" / runs[0] / "brief.html").read_bytes() == b"<p>three</p>"
    assert stray_entries(out) == []


def test_a_format_the_new_brief_lacks_is_no_longer_linked(tmp_path):
    out = tmp_path / "out"
    write_outputs(out, _brief("one"))
    write_outputs(out, {"brief.html": b"<p>two</p>"})
    assert visible_brief(out) == {"brief.html": b"<p>two</p>"}
    assert not os.path.lexists(out / "brief.pdf")


def test_a_brief_from_the_flat_layout_is_kept_as_the_first_run(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    for name, content in _brief("old").items():
        (out / name).write_bytes(content)
    write_outputs(out, _brief("new"), keep=3)
    assert visible_brief(out) == _brief("new")
    runs = sorted(os.listdir(out / "runs"))
    assert len(runs) == 2
    assert (out / "runs" / runs[0] / "stats.json").read_bytes() == _brief("old")["stats.json"]
    assert stray_entries(out) == []


def test_a_folder_where_a_brief_file_belongs_is_refused_before_anything_changes(tmp_path):
    out = tmp_path / "out"
    write_outputs(out, _brief("one"))
    (out / "brief.pdf").unlink()
    (out / "brief.pdf").mkdir()
    before = tree(out)
    with pytest.raises(RenderError, match="brief.pdf: is a folder"):
        write_outputs(out, _brief("two"))
    assert tree(out) == before


def test_leftovers_of_a_killed_run_are_removed_by_the_next(tmp_path):
    out = tmp_path / "out"
    write_outputs(out, _brief("one"))
    runs = out / "runs"
    (runs / ".staging-20991231T000000.000000Z-1").mkdir()
    (runs / ".staging-20991231T000000.000000Z-1" / "brief.pdf").write_bytes(b"half")
    (runs / "20991231T000000.000000Z-2").mkdir()  # renamed but never switched in
    os.symlink("current/brief.pdf", out / ".brief.pdf.link-3")
    assert len(stray_entries(out)) == 3
    write_outputs(out, _brief("two"))
    assert visible_brief(out) == _brief("two")
    assert stray_entries(out) == []


def test_a_full_disk_mid_write_leaves_the_previous_brief_and_no_temp_files(tmp_path, monkeypatch):
    out = tmp_path / "out"
    write_outputs(out, _brief("one"))
    before = tree(out)
    real_write = os.write
    calls = []

    def write_until_full(fd, data):
        calls.append(fd)
        if len(calls) > 1:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        return real_write(fd, data)

    monkeypatch.setattr(publish.os, "write", write_until_full)
    with pytest.raises(RenderError, match="No space left on device.*previous brief is unchanged"):
        write_outputs(out, _brief("two"))
    assert tree(out) == before


@pytest.mark.parametrize(
    "stop_at", ["write brief.pdf", "rename staged folder", "switch current", "linked"]
)
def test_an_interrupt_at_any_step_leaves_one_whole_brief(tmp_path, monkeypatch, stop_at):
    out = tmp_path / "out"
    write_outputs(out, _brief("one"))
    before = tree(out)

    def interrupt(name: str) -> None:
        if name == stop_at:
            raise KeyboardInterrupt

    monkeypatch.setattr(publish, "step", interrupt)
    with pytest.raises(KeyboardInterrupt):
        write_outputs(out, _brief("two"))
    if stop_at == "linked":  # after the switch: the new brief is whole and in place
        assert visible_brief(out) == _brief("two")
    else:
        assert tree(out) == before
    assert stray_entries(out) == []


def test_run_names_sort_after_the_previous_even_when_the_clock_steps_back(tmp_path):
    later = "29991231T235959.999999Z-1"
    name = publish._new_run_name(Path(tmp_path), later)
    assert name > later


def test_a_real_full_disk_leaves_the_previous_brief_and_frees_what_it_wrote(small_disk):
    out = small_disk / "out"
    write_outputs(out, _brief("one"))
    before = tree(out)
    used = os.statvfs(small_disk).f_bfree
    too_big = _brief("two") | {"brief.pdf": b"x" * (2 * 1024 * 1024)}
    with pytest.raises(RenderError, match="No space left on device.*previous brief is unchanged"):
        write_outputs(out, too_big)
    assert tree(out) == before
    assert stray_entries(out) == []
    assert os.statvfs(small_disk).f_bfree == used  # the partial file was removed, not left
