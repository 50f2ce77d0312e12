"""Writing files so that a stopped run never leaves half of one behind."""

from __future__ import annotations

import hashlib
import os
import tempfile
from pathlib import Path

__all__ = ["write_atomic", "sha256_of"]


def write_atomic(path: str | os.PathLike[str], text: str) -> None:
    """Write `text` to `path` through a temporary file in the same folder and a rename.

    Readers see either the old file or the whole new one, never a part.
    """
    target = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent or ".")
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as f:
            f.write(text)
            f.flush()
            os.fsync(f.fileno())
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def sha256_of(data: bytes) -> str:
    """Hex SHA-256 of `data`, for provenance records."""
    return hashlib.sha256(data).hexdigest()
