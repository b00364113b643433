"""Tests of scorecard/files.py: every output is written under a temporary name and renamed into place."""

from __future__ import annotations

import os

import pytest

from scorecard.files import replacing, write_text_atomically


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
