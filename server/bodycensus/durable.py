"""Durable writes: flush a file or folder to disk so a rename survives a crash or power loss."""

from __future__ import annotations

import os
from pathlib import Path


def fsync_path(path: Path) -> None:
    """Flush a file's data, or a folder's entries (after a rename inside it), to disk."""
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
