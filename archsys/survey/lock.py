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

__all__ = ["SurveyLock", "ReportLock", "refuse_survey_folder"]


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


def _is_survey_folder(d):
    return (d / "survey.sqlite").exists() or ((d / "population.json").exists() and (d / "systems.csv").exists())


def refuse_survey_folder(path, command):
    """Refuse to write the files of ``command`` into a survey's output folder (or its figures/)."""
    if not path:
        return
    d = pathlib.Path(path)
    for cand in (d, d.parent if d.name == "figures" else None):
        if cand is not None and cand.is_dir() and _is_survey_folder(cand):
            raise InputError(f"{path}: is the output folder of a survey; `archsys {command}` does not write "
                             f"into it (its files would replace the survey's); choose another folder")


class ReportLock:
    """``with ReportLock(out, figures): ...`` -- the survey lock on existing output folders of a report.

    A report waits for nobody: when a survey holds the lock on one of the
    folders, the report is refused with one line.  Folders that do not exist
    yet are not locked (no survey can be running into them).
    """

    def __init__(self, *dirs):
        self.dirs = []
        for d in dirs:
            if d and pathlib.Path(d).is_dir() and pathlib.Path(d).absolute() not in self.dirs:
                self.dirs.append(pathlib.Path(d).absolute())
        self.fds = []

    def __enter__(self):
        if fcntl is None:  # pragma: no cover
            return self
        try:
            for d in self.dirs:
                try:
                    fd = os.open(d, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
                except OSError:
                    continue
                self.fds.append(fd)
                try:
                    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                except OSError as exc:
                    if exc.errno in (errno.EWOULDBLOCK, errno.EAGAIN, errno.EACCES):
                        raise InputError(f"{d}: an archsys survey is running into this folder; "
                                         f"choose another folder for the report") from None
                    raise
        except BaseException:
            self.__exit__(None, None, None)
            raise
        return self

    def __exit__(self, et, ev, tb):
        for fd in self.fds:
            try:
                fcntl.flock(fd, fcntl.LOCK_UN)
            finally:
                os.close(fd)
        self.fds = []
        return False
