"""Atomic writes: the final name holds a finished file or nothing."""

from __future__ import annotations

from pathlib import Path

import pytest

from annotate.io.atomic import atomic_path


def test_file_appears_only_when_the_block_succeeds(tmp_path: Path) -> None:
    final = tmp_path / "sub" / "out.txt"
    with atomic_path(final) as tmp:
        tmp.write_text("done")
        assert not final.exists()
    assert final.read_text() == "done"
    assert sorted(p.name for p in final.parent.iterdir()) == ["out.txt"]


def test_failure_leaves_neither_final_nor_temporary_file(tmp_path: Path) -> None:
    final = tmp_path / "out.txt"
    with pytest.raises(RuntimeError), atomic_path(final) as tmp:
        tmp.write_text("half")
        raise RuntimeError("interrupted")
    assert list(tmp_path.iterdir()) == []


def test_failure_keeps_the_previous_finished_file(tmp_path: Path) -> None:
    final = tmp_path / "out.txt"
    final.write_text("old")
    with pytest.raises(RuntimeError), atomic_path(final) as tmp:
        tmp.write_text("half")
        raise RuntimeError("interrupted")
    assert final.read_text() == "old"


def test_directories_are_replaced_whole(tmp_path: Path) -> None:
    final = tmp_path / "chunks"
    final.mkdir()
    (final / "stale").write_text("x")
    with atomic_path(final) as tmp:
        tmp.mkdir()
        (tmp / "fresh").write_text("y")
    assert [p.name for p in final.iterdir()] == ["fresh"]
