"""Output files: atomic writes, staged runs, safe and unique file names, printable text.

* :func:`atomic_write` writes one file through a temporary file and a rename.
* :class:`StagedOutput` makes a whole run all-or-nothing: inside ``with
  StagedOutput(out_dir):`` every :func:`atomic_write` goes to a staging folder
  inside the output folder, and the files are moved into place only when the
  block ends without an error (targets that are folders are found before any
  file moves).  On an error the staging folder is removed, and so is an output
  folder the run created, when it is empty.  The final moves are a
  transaction too: a move that fails part-way (a read-only target, a full
  disk) puts back every file already moved (old files are kept as hard links
  until the last move succeeds).  A target on another file system (``figures/``
  a symbolic link to another disk) is copied beside the target and renamed
  there (EXDEV).  Each staging folder is locked (``flock``) by its run; the next
  run into the folder removes staging folders whose run is dead (kill -9,
  power loss).
* :func:`safe_name` turns a system or planet name into a file-name stem;
  :func:`unique_stems` makes the stems of one run distinct, deterministically.
* :func:`printable` escapes control characters (NUL, terminal escape
  sequences, ...) so user text never reaches a terminal or a file raw.
"""
from __future__ import annotations

import errno
import os
import time
import pathlib
import re
import shutil
import tempfile

from ..errors import InputError

__all__ = ["STAGING_PREFIX", "remove_stale_staging", "atomic_write", "StagedOutput", "staged"]

_ACTIVE = []        # the StagedOutput blocks in force (innermost last)
STAGING_PREFIX = ".archsys-staging-"

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None


def _lock_dir(path):
    """An fd holding an exclusive flock on folder ``path`` (None where locks do not exist or are held)."""
    if fcntl is None:  # pragma: no cover
        return None
    fd = os.open(path, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        os.close(fd)
        return None
    return fd


def _pid_alive(pid):
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, ValueError):
        return True
    return True


def remove_stale_staging(root):
    """Remove staging folders in ``root`` left by runs that died.

    A folder is removed when nobody holds its lock and either the process named in it is gone or it
    is over an hour old (a process id reused by another program does not keep it for ever).

    Returns the number removed.  A folder whose run is alive holds its lock and is left alone.
    """
    n = 0
    try:
        entries = [e for e in os.scandir(root) if e.name.startswith(STAGING_PREFIX)
                   and e.is_dir(follow_symlinks=False)]
    except OSError:
        return 0
    for e in entries:
        m = re.match(re.escape(STAGING_PREFIX) + r"(\d+)-", e.name)
        try:
            young = time.time() - e.stat(follow_symlinks=False).st_mtime < 3600
            if young and (not m or (_pid_alive(int(m.group(1))) and int(m.group(1)) != os.getpid())):
                continue                        # its run may be starting (not locked yet): never race it
            fd = _lock_dir(e.path)
        except OSError:
            continue
        if fcntl is not None and fd is None:
            continue                            # a live run holds it
        try:
            shutil.rmtree(e.path, ignore_errors=True)
            n += 1
        finally:
            if fd is not None:
                os.close(fd)
    return n


def _copy_then_rename(src, final):
    """Move ``src`` to ``final`` across file systems: a copy beside ``final``, fsynced, then a rename."""
    final = pathlib.Path(final)
    tmp = final.parent / f".{final.name[:60]}.{os.getpid()}.archsys-move"
    try:
        with open(src, "rb") as fi, open(tmp, "wb") as fo:
            shutil.copyfileobj(fi, fo, 1 << 20)
            fo.flush()
            os.fsync(fo.fileno())
        os.replace(tmp, final)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    os.unlink(src)


def _move(src, final):
    """``os.replace``, or a copy and a rename when ``final`` is on another file system (EXDEV)."""
    try:
        os.replace(src, final)
    except OSError as exc:
        if exc.errno != errno.EXDEV:
            raise
        _copy_then_rename(src, final)


def _write_file(path, data, mode):
    """Write ``data`` to a new file ``path`` (fsynced) with the usual permissions."""
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
    binary = "b" in mode
    with os.fdopen(fd, "wb" if binary else "w",
                   **({} if binary else {"encoding": "utf-8", "newline": ""})) as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())


def atomic_write(path, data, mode="w"):
    """Write ``data`` to ``path`` atomically: a temporary file in the same folder, then rename.

    An interrupted run leaves either the old file or the new one, never a partial file.
    Inside a :class:`StagedOutput` block the file is staged and moved into place
    when the block succeeds.
    """
    path = pathlib.Path(path)
    if _ACTIVE:
        return _ACTIVE[-1].stage(path, data, mode)
    path.parent.mkdir(parents=True, exist_ok=True)
    if path.is_dir():
        raise IsADirectoryError(errno.EISDIR, "is a directory", str(path))
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name[:60]}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    os.unlink(tmp)
    try:
        _write_file(tmp, data, mode)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return path


def _missing_parents(d):
    """Folders that ``mkdir(parents=True)`` on ``d`` would create (outermost first)."""
    out = []
    d = pathlib.Path(d).absolute()
    while not d.exists():
        out.append(d)
        if d.parent == d:
            break
        d = d.parent
    return out[::-1]


class StagedOutput:
    """All-or-nothing output of one run (see the module docstring).

    ``roots``: the output folders of the run (staging folders are made inside
    them, so the final moves are renames on one file system).  Files outside
    every root are staged beside their target.
    """

    def __init__(self, *roots):
        self.roots = [pathlib.Path(r).absolute() for r in roots if r is not None]
        self.created = []       # folders this run made (removed on failure when empty)
        self.stages = {}        # root -> staging folder
        self.files = []         # (staged path, final path)
        self.moved = []
        self.locks = []         # fds holding the flocks of the staging folders

    # -- context ------------------------------------------------------------
    def __enter__(self):
        for r in self.roots:
            self._stage_dir(r)
        _ACTIVE.append(self)
        return self

    def __exit__(self, et, ev, tb):
        _ACTIVE.remove(self)
        if et is None:
            try:
                self.commit()
            except BaseException:
                self._cleanup(failed=True)
                raise
            self._cleanup(failed=False)
            return False
        self._cleanup(failed=True)
        return False

    # -- staging --------------------------------------------------------------
    def _stage_dir(self, root):
        if root not in self.stages:
            if root.exists() and not root.is_dir():
                raise InputError(f"cannot write into {root}: exists and is not a folder")
            made = _missing_parents(root)
            try:
                root.mkdir(parents=True, exist_ok=True)
            except OSError as exc:
                raise InputError(f"cannot create the folder {root}: {exc.strerror or exc}") from None
            self.created += [m for m in made if m not in self.created]
            remove_stale_staging(root)
            try:
                stage = pathlib.Path(tempfile.mkdtemp(prefix=f"{STAGING_PREFIX}{os.getpid()}-", dir=root))
            except OSError as exc:
                raise InputError(f"cannot write into {root}: {exc.strerror or exc}") from None
            self.stages[root] = stage
            try:
                fd = _lock_dir(stage)
            except OSError:
                fd = None
            if fd is not None:
                self.locks.append(fd)
        return self.stages[root]

    def _root_of(self, path):
        best = None
        for r in self.roots:
            if path == r or r in path.parents:
                if best is None or len(r.parts) > len(best.parts):
                    best = r
        return best

    def stage(self, path, data, mode="w"):
        """Write ``data`` for ``path`` into the staging folder (the move waits for commit)."""
        path = pathlib.Path(path).absolute()
        root = self._root_of(path)
        if root is None:
            root = path.parent
            self.roots.append(root)
        tmp = self._stage_dir(root) / f"{len(self.files):05d}"
        for i, (_, final) in enumerate(self.files):
            if final == path:          # a later write of the same file replaces the earlier one
                self.files.pop(i)
                break
        _write_file(tmp, data, mode)
        self.files.append((tmp, path))
        return path

    def commit(self):
        """Move every staged file into place; folders in the way are found first."""
        for _, final in self.files:
            if final.is_dir():
                raise InputError(f"cannot write {final}: a folder of that name is in the way; "
                                 f"nothing was written")
            for parent in final.parents:
                if parent.exists():
                    if not parent.is_dir():
                        raise InputError(f"cannot write {final}: {parent} is not a folder; nothing was written")
                    break
        journal = []            # (final, hard link or copy of the old file, or None)
        try:
            for tmp, final in self.files:
                made = _missing_parents(final.parent)
                final.parent.mkdir(parents=True, exist_ok=True)
                self.created += [m for m in made if m not in self.created]
                old = None
                if os.path.lexists(final):
                    old = final.parent / f".{final.name[:60]}.{os.getpid()}.archsys-old"
                    try:
                        os.link(final, old, follow_symlinks=False)
                    except OSError:
                        shutil.copy2(final, old, follow_symlinks=False)
                journal.append((final, old, False))
                _move(tmp, final)
                journal[-1] = (final, old, True)
                self.moved.append(final)
        except BaseException:
            self._roll_back(journal)
            raise
        for _, old, _ in journal:
            if old is not None:
                try:
                    os.unlink(old)
                except OSError:
                    pass

    def _roll_back(self, journal):
        """Undo the moves of a commit that failed part-way: new files out, old files back."""
        for final, old, moved in reversed(journal):
            try:
                if old is not None and moved:
                    os.replace(old, final)
                elif old is not None:
                    os.unlink(old)          # the target was never replaced (a hard link of it: rename would not undo)
                elif moved:
                    os.unlink(final)
            except OSError:
                pass
        self.moved = []

    def _cleanup(self, failed):
        for d in self.stages.values():
            shutil.rmtree(d, ignore_errors=True)
        for fd in self.locks:
            try:
                os.close(fd)
            except OSError:
                pass
        self.locks = []
        if failed:
            for d in sorted(self.created, key=lambda p: len(p.parts), reverse=True):
                try:
                    d.rmdir()           # only when empty
                except OSError:
                    pass

    @property
    def written(self):
        """Final paths of the files moved into place, in write order."""
        return list(self.moved)


def staged(*roots):
    """``with staged(out_dir): ...`` -- shorthand for :class:`StagedOutput`."""
    return StagedOutput(*roots)


