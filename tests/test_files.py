"""Tests of scorecard/files.py: every output is written under a temporary name and renamed into place."""

from __future__ import annotations

import os
import sys

import pytest

from scorecard import files
from scorecard.files import exchange_folders, replacing, replacing_folder, write_text_atomically


def test_a_finished_block_puts_the_new_file_in_place(tmp_path):
    path = tmp_path / "deep" / "report.html"  # the folder is made
    with replacing(path) as temporary:
        assert temporary.parent == path.parent and temporary.name.startswith(".report.html.")
        temporary.write_text("new", encoding="utf-8")
        assert not path.exists()  # nothing at the final name until the block ends
    assert path.read_text(encoding="utf-8") == "new"
    assert os.listdir(path.parent) == ["report.html"]


def test_a_failed_block_keeps_the_old_file_and_leaves_no_temporary(tmp_path):
    path = tmp_path / "model.json"
    path.write_text("old", encoding="utf-8")
    with pytest.raises(RuntimeError, match="half-way"):
        with replacing(path) as temporary:
            temporary.write_text("half", encoding="utf-8")
            raise RuntimeError("half-way")
    assert path.read_text(encoding="utf-8") == "old"
    assert os.listdir(tmp_path) == ["model.json"]


def test_the_new_file_keeps_the_mode_of_the_one_it_replaces_or_gets_the_usual_one(tmp_path):
    kept = tmp_path / "kept.txt"
    kept.write_text("old", encoding="utf-8")
    kept.chmod(0o640)
    write_text_atomically(kept, "new")
    assert kept.stat().st_mode & 0o777 == 0o640
    umask = os.umask(0)
    os.umask(umask)
    fresh = write_text_atomically(tmp_path / "fresh.txt", "new")
    assert fresh.stat().st_mode & 0o777 == 0o666 & ~umask  # not the temporary file's private 0600


def test_text_is_written_as_utf8_with_unix_newlines(tmp_path):
    path = write_text_atomically(tmp_path / "summary.txt", "café\nline two\n")
    assert path.read_bytes() == "café\nline two\n".encode("utf-8")


def _contents(folder):
    return {path.name: path.read_bytes() for path in sorted(folder.iterdir())}


def _old_set(tmp_path):
    out = tmp_path / "run1"
    out.mkdir()
    (out / "model.json").write_text("old model", encoding="utf-8")
    (out / "report.html").write_text("old report", encoding="utf-8")
    return out


def test_a_new_set_replaces_the_old_one_whole(tmp_path):
    out = _old_set(tmp_path)
    with replacing_folder(out) as folder:
        assert folder.parent == tmp_path and folder.name.startswith(".run1.") and folder != out
        (folder / "model.json").write_text("new model", encoding="utf-8")
        (folder / "summary.txt").write_text("new summary", encoding="utf-8")
        assert _contents(out) == {"model.json": b"old model", "report.html": b"old report"}  # nothing moves yet
    # exactly the new set: an output the new run did not write does not linger beside it
    assert _contents(out) == {"model.json": b"new model", "summary.txt": b"new summary"}
    assert os.listdir(tmp_path) == ["run1"]  # no temporary and no old folder left


def test_a_set_that_fails_half_way_leaves_the_folder_as_it_was(tmp_path):
    out = _old_set(tmp_path)
    stamp = os.stat(out / "model.json").st_mtime_ns
    with pytest.raises(RuntimeError, match="workbook"):
        with replacing_folder(out) as folder:
            (folder / "model.json").write_text("new model", encoding="utf-8")
            raise RuntimeError("the workbook could not be written")
    assert _contents(out) == {"model.json": b"old model", "report.html": b"old report"}
    assert os.stat(out / "model.json").st_mtime_ns == stamp
    assert os.listdir(tmp_path) == ["run1"]


def test_a_new_folder_is_made_with_the_usual_mode(tmp_path):
    with replacing_folder(tmp_path / "deep" / "run") as folder:
        (folder / "model.json").write_text("new", encoding="utf-8")
    umask = os.umask(0)
    os.umask(umask)
    assert (tmp_path / "deep" / "run" / "model.json").read_text(encoding="utf-8") == "new"
    assert (tmp_path / "deep" / "run").stat().st_mode & 0o777 == 0o777 & ~umask  # not mkdtemp's private 0700
    assert os.listdir(tmp_path / "deep") == ["run"]


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="renameat2 is a Linux call")
def test_on_linux_the_two_folders_trade_places_in_one_step(tmp_path):
    first, second = tmp_path / "a", tmp_path / "b"
    first.mkdir()
    second.mkdir()
    (first / "one").write_text("1", encoding="utf-8")
    (second / "two").write_text("2", encoding="utf-8")
    assert exchange_folders(first, second)  # Linux with glibc 2.28 or later, on a local file system
    assert os.listdir(first) == ["two"] and os.listdir(second) == ["one"]


def test_without_the_one_step_swap_two_renames_give_the_same_result(tmp_path, monkeypatch):
    # the portable fallback: the old folder is renamed aside, then the new one into place
    monkeypatch.setattr(files, "exchange_folders", lambda first, second: False)
    out = _old_set(tmp_path)
    with replacing_folder(out) as folder:
        (folder / "model.json").write_text("new model", encoding="utf-8")
    assert _contents(out) == {"model.json": b"new model"}
    assert os.listdir(tmp_path) == ["run1"]
