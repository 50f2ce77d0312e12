"""Writing files so that a stopped run never leaves half of one behind."""

from __future__ import annotations

import hashlib
import os
import tempfile
from pathlib import Path

__all__ = ["read_input", "write_atomic", "write_atomic_bytes", "sha256_of"]


def read_input(path: str | os.PathLike[str], error: type[Exception]) -> bytes:
    """The bytes of an input file, or `error` saying plainly why it cannot be read."""
    p = Path(path)
    try:
        return p.read_bytes()
    except FileNotFoundError:
        raise error(f"{p}: no such file") from None
    except IsADirectoryError:
        raise error(f"{p}: is a folder, not a file") from None
    except OSError as e:
        raise error(f"{p}: cannot be read ({e.strerror})") from None


def write_atomic(path: str | os.PathLike[str], text: str) -> None:
    """Write `text` to `path` through a temporary file in the same folder and a rename.

    Readers see either the old file or the whole new one, never a part.
    """
    write_atomic_bytes(path, text.encode("utf-8"))


def write_atomic_bytes(path: str | os.PathLike[str], data: bytes) -> None:
    """Write `data` to `path` atomically (see :func:`write_atomic`)."""
    target = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent or ".")
    mask = os.umask(0)
    os.umask(mask)
    os.chmod(tmp, 0o666 & ~mask)                      # as an ordinary new file, not mkstemp's 0600
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(data)
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
