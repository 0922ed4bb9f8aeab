"""Atomic file output and safe file names."""
from __future__ import annotations

import os
import pathlib
import re
import tempfile

__all__ = ["atomic_write", "safe_name"]


def atomic_write(path, data, mode="w"):
    """Write ``data`` to ``path`` atomically: a temporary file in the same folder, then rename.

    An interrupted run leaves either the old file or the new one, never a partial file.
    """
    path = pathlib.Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb" if "b" in mode else "w", **({} if "b" in mode else {"encoding": "utf-8", "newline": ""})) as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)       # mkstemp creates 0600; give the usual permissions
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return path


_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


def safe_name(name, fallback="system"):
    """A file-name stem from a system or planet name: no separators, no traversal, no hidden files."""
    s = _UNSAFE.sub("_", str(name)).strip("._-")
    s = s.replace("..", "_")
    return (s or fallback)[:80]
