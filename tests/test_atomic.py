"""Atomic writes: a failing writer leaves the earlier file as it was and no temporary file behind."""

from __future__ import annotations

import pytest

from massmodel.core.atomic import write_atomic, write_text_atomic


def test_text_is_written_whole(tmp_path):
    target = tmp_path / "deep" / "report.txt"
    assert write_text_atomic(target, "mass 1 kg\n") == target
    assert target.read_text(encoding="utf-8") == "mass 1 kg\n"
    assert sorted(p.name for p in target.parent.iterdir()) == ["report.txt"]


def test_failure_keeps_the_earlier_file_and_leaves_no_temporary(tmp_path):
    target = tmp_path / "blocks.step"
    target.write_text("the earlier good export")

    def broken(tmp):
        tmp.write_text("half a fi")
        raise OSError("disk full")

    with pytest.raises(OSError, match="disk full"):
        write_atomic(target, broken)
    assert target.read_text() == "the earlier good export"
    assert [p.name for p in tmp_path.iterdir()] == ["blocks.step"]


def test_temporary_name_keeps_the_ending_writers_choose_formats_by(tmp_path):
    seen = []
    write_atomic(tmp_path / "x.stl", lambda tmp: (seen.append(tmp.suffix), tmp.write_bytes(b"solid")))
    assert seen == [".stl"]
