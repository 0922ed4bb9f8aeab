"""Depth and size limits on every parser input, each refusal one line.

Every structured text archsys reads -- system files, column maps and prior
files (TOML), report documents and the metadata of saved chains (JSON), the
``--where`` / ``--transit-planets`` expressions -- goes through one of the
functions here, so a deeply nested or oversized input is refused with one
:class:`~archsys.errors.InputError` line instead of a ``RecursionError``
with thousands of lines of traceback.

The limits (common practice: far above anything a real input needs, far
below what exhausts the interpreter's stack):

* ``MAX_NESTING`` = 32 levels of tables/arrays/objects in a TOML or JSON
  input (a system file uses 3, a report document 5);
* ``MAX_EXPRESSION_CHARS`` = 100 000 characters and ``MAX_EXPRESSION_NESTING``
  = 100 levels of parentheses, ``not`` and ``any(``/``all(``/``count(`` in a
  selection expression (``and``/``or`` chains are flat, any length within
  the character limit);
* ``MAX_CELL_CHARS`` = 10 000 characters in one catalogue cell (a longer cell
  rejects its row, never the survey);
* ``MAX_NAME_CHARS`` = 200 characters in a system or planet name (system
  files, catalogue rows, documents and chains read back);
* ``MAX_UNIT_CHARS`` = 60 characters of a unit string quoted in a message;
* output paths: no empty ``--out``/``--figures``, at most ``NAME_MAX`` bytes
  (255 on Linux) per path component and ``PATH_MAX`` (4096) in all.
"""
from __future__ import annotations

import json
import os

from .compat import tomllib
from .errors import InputError

__all__ = ["MAX_NESTING", "MAX_EXPRESSION_CHARS", "MAX_EXPRESSION_NESTING", "MAX_CELL_CHARS", "MAX_NAME_CHARS",
           "MAX_UNIT_CHARS", "parse_toml", "parse_json", "check_depth", "check_output_path", "clip"]

MAX_NESTING = 32
MAX_EXPRESSION_CHARS = 100_000
MAX_EXPRESSION_NESTING = 100
MAX_CELL_CHARS = 10_000
MAX_NAME_CHARS = 200
MAX_UNIT_CHARS = 60
_NAME_MAX = 255
_PATH_MAX = 4096


def clip(text, n=MAX_UNIT_CHARS):
    """``text`` cut to ``n`` characters with a count of what was left out."""
    s = str(text)
    return s if len(s) <= n else f"{s[:n]}... ({len(s)} characters)"


def check_depth(obj, source, what="file", limit=MAX_NESTING):
    """Refuse ``obj`` (parsed TOML/JSON) nested deeper than ``limit`` levels (iterative walk)."""
    stack = [(obj, 1)]
    while stack:
        x, d = stack.pop()
        if isinstance(x, dict):
            children = x.values()
        elif isinstance(x, list):
            children = x
        else:
            continue
        if d > limit:
            raise InputError(f"{source}: {what} nested more than {limit} levels deep; not an archsys input")
        stack.extend((c, d + 1) for c in children)
    return obj


def _too_deep(source, what):
    return InputError(f"{source}: {what} nested too deeply to read (the limit is {MAX_NESTING} levels)")


def parse_toml(text, source, what="TOML file"):
    """``tomllib.loads`` with one-line refusals of invalid TOML and of deep nesting."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{source}: not valid TOML: {exc}") from None
    except RecursionError:
        raise _too_deep(source, what) from None
    return check_depth(data, source, what)


def parse_json(text, source, what="JSON document", allow_nan=False):
    """``json.loads`` with one-line refusals of invalid JSON, deep nesting and (unless ``allow_nan``)
    the non-standard constants NaN and Infinity."""
    def no_constant(name):
        raise ValueError(f"{name} is not a JSON number")
    try:
        data = json.loads(text, **({} if allow_nan else {"parse_constant": no_constant}))
    except RecursionError:
        raise _too_deep(source, what) from None
    except ValueError as exc:
        raise InputError(f"{source}: not valid JSON ({' '.join(str(exc).split())[:120]})") from None
    return check_depth(data, source, what)


def check_output_path(value, option):
    """Refuse an output folder argument that can never be written: empty, NUL, over-long names."""
    if value is None:
        return value
    s = os.fspath(value)
    if not str(s).strip():
        raise InputError(f"{option}: empty folder name; give a folder, e.g. {option} results/")
    if "\x00" in str(s):
        raise InputError(f"{option}: a folder name cannot hold NUL characters")
    b = os.fsencode(s)
    if len(b) > _PATH_MAX:
        raise InputError(f"{option}: the path has {len(b)} bytes; at most {_PATH_MAX}")
    for part in b.split(b"/"):
        if len(part) > _NAME_MAX:
            raise InputError(f"{option}: a folder name of {len(part)} bytes "
                             f"({os.fsdecode(part[:24])}...); at most {_NAME_MAX} per name")
    return value
