"""Atomic writes: nothing half-written, ordinary permissions (common practice on POSIX)."""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pytest

from recordscan.core.files import atomic_write_many, atomic_write_text, temporary_for


def test_permissions_follow_the_umask(tmp_path: Path) -> None:
    old = os.umask(0o022)
    try:
        atomic_write_text(tmp_path / "a.txt", "x")
        mode = stat.S_IMODE((tmp_path / "a.txt").stat().st_mode)
    finally:
        os.umask(old)
    assert mode == 0o644


def test_failure_leaves_nothing(tmp_path: Path) -> None:
    target = tmp_path / "b.bin"
    with pytest.raises(TypeError):
        atomic_write_many([(tmp_path / "ok.bin", b"1"), (target, object())])  # type: ignore[list-item]
    assert list(tmp_path.iterdir()) == []


def test_temporary_for_replaces_only_on_success(tmp_path: Path) -> None:
    target = tmp_path / "c.txt"
    target.write_text("old")
    with pytest.raises(RuntimeError), temporary_for(target) as tmp:
        tmp.write_text("new")
        raise RuntimeError("writer failed")
    assert target.read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.txt"]
    with temporary_for(target) as tmp:
        tmp.write_text("new")
    assert target.read_text() == "new"
