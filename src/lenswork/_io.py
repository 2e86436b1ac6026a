"""Atomic file output: write to a temporary name beside the target, then rename."""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path

__all__ = ["atomic_path", "write_text"]


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; rename it onto ``path`` only on success.

    Nothing half-written is ever left at ``path``: on an exception the
    temporary file is removed and the exception propagates.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        yield Path(tmp)
        # mkstemp creates 0600 files; give the result the permissions a plain open() would
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def write_text(path, text):
    """Write ``text`` (UTF-8) to ``path`` atomically."""
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
