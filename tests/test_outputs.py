"""Atomic writes: no silent overwrite, no partial results after a failure."""
from __future__ import annotations

import pytest

from extremes.errors import OutputError
from extremes.outputs import output_folder, write_text_atomic


def test_write_text_refuses_existing_file(tmp_path):
    target = tmp_path / "a.json"
    write_text_atomic(target, "1")
    with pytest.raises(OutputError, match="--overwrite"):
        write_text_atomic(target, "2")
    write_text_atomic(target, "3", overwrite=True)
    assert target.read_text() == "3"


def test_failed_folder_leaves_nothing(tmp_path):
    target = tmp_path / "study"
    with pytest.raises(RuntimeError):
        with output_folder(target) as work:
            (work / "results.json").write_text("{}")
            raise RuntimeError("stage failed")
    assert not target.exists()
    assert list(tmp_path.iterdir()) == []


def test_folder_overwrite_only_when_asked(tmp_path):
    target = tmp_path / "study"
    with output_folder(target) as work:
        (work / "old.txt").write_text("old")
    with pytest.raises(OutputError, match="--overwrite"):
        with output_folder(target):
            pass
    with output_folder(target, overwrite=True) as work:
        (work / "new.txt").write_text("new")
    assert sorted(p.name for p in target.iterdir()) == ["new.txt"]
