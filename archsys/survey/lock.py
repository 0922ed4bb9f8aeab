"""An exclusive lock on a survey's output folder for the whole run.

Two surveys into one ``--out`` would mix their results, so the second is
refused at once with one line.  The lock is the operating system's
(``flock`` on the folder itself, released by the kernel when the process dies,
even by kill -9), so a crashed run never leaves a stale lock behind and no
lock file is added to the outputs.  Where ``fcntl`` does not exist the run
is not locked.

The lock also remembers whether the run created the folder, so that a run
that fails before storing anything removes what it made (:meth:`remove_store`).
"""
from __future__ import annotations

import errno
import os
import pathlib

from ..errors import InputError

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None

__all__ = ["SurveyLock"]


class SurveyLock:
    """``with SurveyLock(out): ...`` -- hold an exclusive lock on folder ``out``."""

    def __init__(self, out):
        self.out = pathlib.Path(out)
        self.fd = None
        self.created = []

    def __enter__(self):
        made = []
        d = self.out.absolute()
        while not d.exists() and d.parent != d:
            made.append(d)
            d = d.parent
        try:
            self.out.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise InputError(f"--out {self.out}: cannot create the folder ({exc.strerror or exc})") from None
        self.created = made
        if fcntl is None:  # pragma: no cover
            return self
        try:
            self.fd = os.open(self.out, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
        except OSError as exc:
            raise InputError(f"--out {self.out}: cannot open the folder ({exc.strerror or exc})") from None
        try:
            fcntl.flock(self.fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as exc:
            os.close(self.fd)
            self.fd = None
            if exc.errno in (errno.EWOULDBLOCK, errno.EAGAIN, errno.EACCES):
                raise InputError(f"--out {self.out}: another archsys survey is running into this folder; "
                                 f"wait for it to finish or choose another --out") from None
            raise InputError(f"--out {self.out}: cannot lock the folder ({exc.strerror or exc})") from None
        return self

    def __exit__(self, et, ev, tb):
        if self.fd is not None:
            try:
                fcntl.flock(self.fd, fcntl.LOCK_UN)
            finally:
                os.close(self.fd)
                self.fd = None
        if et is not None:
            for d in reversed(self.created):    # innermost first; only folders left empty
                try:
                    d.rmdir()
                except OSError:
                    break
        return False

    def remove_store(self, name):
        """Delete the store files ``name`` (and its WAL/SHM) made by a run that stored nothing."""
        for suffix in ("", "-wal", "-shm", "-journal"):
            try:
                (self.out / f"{name}{suffix}").unlink()
            except FileNotFoundError:
                pass
