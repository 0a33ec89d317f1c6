"""Atomic text writes: a reader sees the old file or the whole new one, never part of one."""

from __future__ import annotations

import os
import stat

import pytest

from lean_video import files
from lean_video.files import atomic_write_text


def test_writes_the_whole_text_and_returns_the_path(tmp_path):
    target = tmp_path / "summary.json"
    assert atomic_write_text(target, "{\"a\": 1}\n") == target
    assert target.read_text(encoding="utf-8") == "{\"a\": 1}\n"
    assert atomic_write_text(target, "ü\r\n") == target            # replaced, text kept byte for byte
    assert target.read_bytes() == "ü\r\n".encode("utf-8")
    assert [p.name for p in tmp_path.iterdir()] == ["summary.json"]  # no temporary file left


def test_private_file_is_readable_by_its_owner_only(tmp_path):
    target = atomic_write_text(tmp_path / "client.json", "x", private=True)
    assert stat.S_IMODE(os.stat(target).st_mode) == 0o600


def test_a_failed_write_keeps_the_old_file_and_leaves_no_temporary(tmp_path, monkeypatch):
    target = tmp_path / "report.html"
    target.write_text("old", encoding="utf-8")

    def interrupted(src, dst):
        # Ctrl-C between writing the temporary file and moving it; the message
        # tells this interrupt from any other the clean-up might raise
        raise KeyboardInterrupt("Ctrl-C before the move")

    monkeypatch.setattr(files.os, "replace", interrupted)
    with pytest.raises(KeyboardInterrupt, match="Ctrl-C before the move"):
        atomic_write_text(target, "new")
    assert target.read_text(encoding="utf-8") == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["report.html"]


def test_missing_folder_is_an_error_not_a_silent_skip(tmp_path):
    with pytest.raises(FileNotFoundError, match=r"No such file or directory: .*no_such_folder"):
        atomic_write_text(tmp_path / "no_such_folder" / "x.txt", "x")
