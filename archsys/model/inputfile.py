"""Reading a user's input file: one clear InputError line for every way it can fail."""
from __future__ import annotations

import pathlib

from ..errors import InputError

__all__ = ["read_input_bytes"]


def read_input_bytes(path, what="input file", allow_empty=False) -> bytes:
    """Bytes of ``path``; missing, directory, unreadable or empty files raise one-line InputErrors.

    ``what`` names the expected kind of file in the messages ("system file (.toml)", ...).
    """
    src = str(path)
    p = pathlib.Path(path)
    try:
        blob = p.read_bytes()
    except FileNotFoundError:
        raise InputError(f"{src}: file not found") from None
    except IsADirectoryError:
        raise InputError(f"{src}: is a directory, expected a {what}") from None
    except OSError as exc:
        raise InputError(f"{src}: cannot read ({exc.strerror})") from None
    if not allow_empty and not blob.strip():
        raise InputError(f"{src}: file is empty")
    return blob
