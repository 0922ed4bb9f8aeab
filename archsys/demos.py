"""The bundled demo systems (invented systems: fictional names and values), as real files on disk.

Installed, they are package data (``archsys.data.demo_systems``) read through
:mod:`importlib.resources`; each is made a real file with ``as_file`` (a no-op for an
ordinary install, a temporary copy for a zipped one, kept until the interpreter exits).
From a source checkout they are the files in ``demo_systems/`` beside ``archsys/``.
"""
from __future__ import annotations

import atexit
import contextlib
import pathlib
from importlib import resources

__all__ = ["demo_files", "demo_path"]

_SOURCE = pathlib.Path(__file__).resolve().parents[1]
_KEEP = contextlib.ExitStack()
atexit.register(_KEEP.close)


def _entries():
    """{name: Traversable or Path} of the demo systems, sorted by name."""
    src = _SOURCE / "demo_systems"
    if (_SOURCE / "pyproject.toml").is_file() and src.is_dir():       # a source checkout
        return {p.stem: p for p in sorted(src.glob("*.toml"))}
    root = resources.files("archsys.data.demo_systems")
    return {e.name[: -len(".toml")]: e for e in sorted(root.iterdir(), key=lambda e: e.name)
            if e.name.endswith(".toml")}


def _real(entry) -> str:
    if isinstance(entry, pathlib.Path):
        return str(entry)
    return str(_KEEP.enter_context(resources.as_file(entry)))


def demo_files() -> list[str]:
    """Paths of every bundled demo system, sorted by name."""
    return [_real(e) for e in _entries().values()]


def demo_path(name: str) -> str:
    """Path of the bundled demo system ``name`` ("velmora", "korrin", "ondrel", "perrow")."""
    entries = _entries()
    key = name.lower()
    if key not in entries:
        raise FileNotFoundError(f"no demo system {name!r}; the demo systems are {', '.join(entries)}")
    return _real(entries[key])
