"""Durable writes: a file's data and a folder's entries flushed to disk, no descriptor left open."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from bodycensus.durable import fsync_path


def _open_descriptors() -> int:
    return len(os.listdir("/proc/self/fd"))


def test_a_file_and_its_folder_are_flushed(tmp_path: Path) -> None:
    path = tmp_path / "data.bin"
    path.write_bytes(b"x" * 4096)
    before = _open_descriptors()
    fsync_path(path)  # the file's data
    fsync_path(tmp_path)  # the folder's entry for it, as after a rename
    assert _open_descriptors() == before
    assert path.read_bytes() == b"x" * 4096


def test_a_missing_path_raises_and_leaks_nothing(tmp_path: Path) -> None:
    before = _open_descriptors()
    with pytest.raises(FileNotFoundError):
        fsync_path(tmp_path / "missing")
    assert _open_descriptors() == before


def test_the_descriptor_is_closed_even_when_fsync_fails(tmp_path: Path,
                                                        monkeypatch: pytest.MonkeyPatch) -> None:
    """A disk that refuses the flush (EIO) must not leave the file open."""
    def refuse(fd: int) -> None:
        raise OSError(5, "Input/output error")

    path = tmp_path / "data.bin"
    path.write_bytes(b"x")
    before = _open_descriptors()
    monkeypatch.setattr(os, "fsync", refuse)
    with pytest.raises(OSError, match="Input/output error"):
        fsync_path(path)
    assert _open_descriptors() == before
