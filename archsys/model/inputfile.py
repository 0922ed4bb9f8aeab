"""Reading a user's input file: one clear InputError line for every way it can fail.

Only regular files are read: a FIFO would block for ever and ``/dev/zero``
would fill the memory, so devices, pipes and sockets are refused before they
are opened, and so is a file above the size cap of its kind.
"""
from __future__ import annotations

import os
import pathlib
import stat

from ..errors import InputError

__all__ = ["read_input_bytes", "check_regular_file", "MAX_SYSTEM_FILE_BYTES", "MAX_TABLE_BYTES"]

#: Largest system file (a 64-planet system with notes is a few tens of kB).
MAX_SYSTEM_FILE_BYTES = 16 << 20
#: Largest catalogue table or column map read into memory.
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
