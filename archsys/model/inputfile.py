"""Reading a user's input file: one clear InputError line for every way it can fail.

Only regular files are read: a FIFO would block for ever and ``/dev/zero``
would fill the memory, so devices, pipes and sockets are refused before they
are opened, and so is a file above the size cap of its kind.

Large catalogues are read as a stream (:func:`open_input_stream`): the same
checks, the bytes hashed (SHA-256) as they pass, the cap enforced on the bytes
actually read (a file that grows while it is read is refused too).
"""
from __future__ import annotations

import hashlib
import io
import os
import pathlib
import stat

from ..errors import InputError

__all__ = ["read_input_bytes", "check_regular_file", "open_input_stream", "InputStream",
           "MAX_SYSTEM_FILE_BYTES", "MAX_TABLE_BYTES"]

#: Largest system file (a 64-planet system with notes is a few tens of kB).
MAX_SYSTEM_FILE_BYTES = 16 << 20
#: Largest catalogue table or column map.  CSV and Parquet catalogues are streamed (never held whole in
#: memory), but what is kept of them -- every row, packed (survey/catalog.py), and its system -- grows
#: with the rows: about 2.6 times the size of a CSV file of three-planet systems (more for a compressed
#: Parquet file), so the cap is kept: a CSV file at the cap takes about 5 GiB.
MAX_TABLE_BYTES = 2 << 30

_BOM = b"\xef\xbb\xbf"


def _size(n):
    for unit, k in (("GiB", 30), ("MiB", 20), ("KiB", 10)):
        if n >= 1 << k:
            return f"{n / (1 << k):.4g} {unit}"
    return f"{n} bytes"


def check_regular_file(path, what="input file", max_bytes=MAX_SYSTEM_FILE_BYTES):
    """``os.stat`` of ``path`` if it is a readable-looking regular file within the size cap.

    Raises a one-line InputError otherwise (not found, directory, device/pipe/socket, too large).
    """
    src = str(path)
    if not src:
        raise InputError(f"empty file name; expected a {what}")
    if "\x00" in src:
        raise InputError(f"{src!r}: a file name cannot hold NUL characters")
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise InputError(f"{src}: file not found") from None
    except NotADirectoryError:
        raise InputError(f"{src}: file not found (a part of the path is not a folder)") from None
    except OSError as exc:
        raise InputError(f"{src}: cannot read ({exc.strerror})") from None
    if stat.S_ISDIR(st.st_mode):
        raise InputError(f"{src}: is a directory, expected a {what}")
    if not stat.S_ISREG(st.st_mode):
        kind = ("a named pipe (FIFO)" if stat.S_ISFIFO(st.st_mode) else
                "a character device" if stat.S_ISCHR(st.st_mode) else
                "a block device" if stat.S_ISBLK(st.st_mode) else
                "a socket" if stat.S_ISSOCK(st.st_mode) else "not a regular file")
        raise InputError(f"{src}: is {kind}; archsys reads only regular files (save the data to a file)")
    if max_bytes is not None and st.st_size > max_bytes:
        raise InputError(f"{src}: {_size(st.st_size)}; a {what} may be at most {_size(max_bytes)}")
    return st


def read_input_bytes(path, what="input file", allow_empty=False, max_bytes=MAX_SYSTEM_FILE_BYTES) -> bytes:
    """Bytes of ``path``; missing, special, oversized, unreadable or empty files raise one-line InputErrors.

    ``what`` names the expected kind of file in the messages ("system file (.toml)", ...).
    """
    src = str(path)
    check_regular_file(path, what, max_bytes)
    p = pathlib.Path(path)
    try:
        # O_NONBLOCK: should the file have been swapped for a FIFO since the check, do not hang
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
        with os.fdopen(fd, "rb") as fh:
            if not stat.S_ISREG(os.fstat(fh.fileno()).st_mode):
                raise InputError(f"{src}: not a regular file; archsys reads only regular files")
            blob = fh.read(max_bytes + 1 if max_bytes is not None else -1)
    except IsADirectoryError:
        raise InputError(f"{src}: is a directory, expected a {what}") from None
    except OSError as exc:
        raise InputError(f"{src}: cannot read ({exc.strerror})") from None
    if max_bytes is not None and len(blob) > max_bytes:
        raise InputError(f"{src}: more than {_size(max_bytes)}; a {what} may be at most {_size(max_bytes)}")
    if not allow_empty:
        body = blob[len(_BOM):] if blob.startswith(_BOM) else blob
        if not body.strip():
            raise InputError(f"{src}: file is empty" + (" (only a byte-order mark)" if body != blob else ""))
    return blob


class InputStream(io.RawIOBase):
    """A regular file read as a stream: SHA-256 of the bytes read, size cap, one-line read errors.

    ``sha256()`` is the digest of every byte read so far (call :meth:`drain` first for the whole
    file); ``has_content`` says whether a byte other than ASCII white space (after a leading UTF-8
    byte-order mark) has been read -- the test of :func:`read_input_bytes` for an empty file.
    """

    def __init__(self, fh, src, what, max_bytes):
        super().__init__()
        self._fh, self._src, self._what, self._max = fh, src, what, max_bytes
        self._hash = hashlib.sha256()
        self.nbytes = 0
        self.has_content = False
        self.bom = False

    def readable(self):
        return True

    def readinto(self, buf):
        try:
            n = self._fh.readinto(buf)
        except OSError as exc:
            raise InputError(f"{self._src}: cannot read ({exc.strerror})") from None
        if not n:
            return n
        chunk = memoryview(buf)[:n]
        self._hash.update(chunk)
        if not self.has_content:
            b = bytes(chunk)
            if self.nbytes == 0 and b.startswith(_BOM):
                b, self.bom = b[len(_BOM):], True
            self.has_content = bool(b.strip())
        self.nbytes += n
        if self._max is not None and self.nbytes > self._max:
            raise InputError(f"{self._src}: more than {_size(self._max)}; a {self._what} may be at most "
                             f"{_size(self._max)}")
        return n

    def drain(self, size=1 << 20):
        """Read (and hash) the rest of the file."""
        buf = bytearray(size)
        while self.readinto(buf):
            pass

    def sha256(self) -> str:
        return self._hash.hexdigest()

    def check_not_empty(self):
        """The one-line error of an empty file (only white space, or only a byte-order mark) once read."""
        if not self.has_content:
            raise InputError(f"{self._src}: file is empty" + (" (only a byte-order mark)" if self.bom else ""))

    def close(self):
        try:
            self._fh.close()
        finally:
            super().close()


def open_input_stream(path, what="input file", max_bytes=MAX_TABLE_BYTES) -> InputStream:
    """``path`` opened for streaming after the checks of :func:`read_input_bytes` (regular file, size cap).

    Use as a context manager; wrap in ``io.BufferedReader`` / ``io.TextIOWrapper`` to parse.
    """
    src = str(path)
    check_regular_file(path, what, max_bytes)
    try:
        fd = os.open(pathlib.Path(path), os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except IsADirectoryError:
        raise InputError(f"{src}: is a directory, expected a {what}") from None
    except OSError as exc:
        raise InputError(f"{src}: cannot read ({exc.strerror})") from None
    fh = os.fdopen(fd, "rb", buffering=0)
    try:
        if not stat.S_ISREG(os.fstat(fh.fileno()).st_mode):
            raise InputError(f"{src}: not a regular file; archsys reads only regular files")
    except BaseException:
        fh.close()
        raise
    return InputStream(fh, src, what, max_bytes)
