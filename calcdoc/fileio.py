"""File writing for the rendering stage: atomic, so a failed run loses nothing."""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path


def write_atomic(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` via a temporary file and an atomic rename.

    A failure at any point leaves an existing file at ``path`` untouched
    and no partial file behind.
    """
    target = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent or ".")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
