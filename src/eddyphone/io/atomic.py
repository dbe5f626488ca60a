"""Atomic file writes: a temporary file in the same folder, flushed to disk, renamed.

An interrupted run leaves either the old file or the new one, never half of one.
"""

from __future__ import annotations

import os
from pathlib import Path


def atomic_write_bytes(path: Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file and a rename."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.part")
    try:
        with tmp.open("wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()
    return path


def atomic_write_text(path: Path, text: str) -> Path:
    """Write UTF-8 ``text`` atomically."""
    return atomic_write_bytes(path, text.encode("utf-8"))
