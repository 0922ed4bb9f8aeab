"""The registry of report formats: every format is one module of this package that registers itself.

A format is a :class:`ReportFormat`: its name (``--format NAME``), the file suffix
``write_outputs`` gives it, and a ``render(doc, ctx)`` function that turns the report
document into text.  ``ctx`` is a :class:`RenderContext`: the figures (for formats that
embed them) and links to the figure files (for formats that point to them).  Adding a
format is one new module here that calls :func:`register_format` when imported; the
command line's ``--format`` choices, :func:`archsys.render` and ``--out`` read the
registry.  Renderers read the table model (:mod:`archsys.output.table_model`) and never
import the package's ``__init__``.
"""
from __future__ import annotations

import contextlib
import importlib
import pathlib
import pkgutil
from dataclasses import dataclass
from typing import Callable

from ...errors import InputError

__all__ = ["ReportFormat", "RenderContext", "register_format", "unregister_format", "registered_format",
           "report_formats", "get_format", "format_names", "load_formats", "NOT_FORMATS"]


@dataclass(frozen=True)
class RenderContext:
    """What a renderer may use besides the document.

    ``figures``: :class:`archsys.output.figures.FigureItem` objects (drawn), or None;
    ``figure_links``: ``(caption, relative path)`` of figure files written beside the report, or None.
    """

    figures: tuple | None = None
    figure_links: tuple | None = None


@dataclass(frozen=True)
class ReportFormat:
    """One report format: ``render(doc, ctx) -> str`` written to ``<stem><suffix>`` by ``--out``.

    ``order`` sets the order of the files (and of the provenance listing); ``aliases`` are other
    names ``render`` accepts; ``embeds_figures`` asks ``render`` to draw the figures when none are given.
    """

    name: str
    suffix: str
    render: Callable
    order: int = 100
    aliases: tuple = ()
    embeds_figures: bool = False
    description: str = ""


_FORMATS: dict = {}
#: Modules of this package that are not formats.
NOT_FORMATS = {"registry"}
_loaded = False


def register_format(fmt: ReportFormat) -> ReportFormat:
    """Add ``fmt`` to the registry (a format of the same name is replaced)."""
    if not isinstance(fmt, ReportFormat):
        raise TypeError(f"expected a ReportFormat; got {type(fmt).__name__}")
    _FORMATS[fmt.name] = fmt
    return fmt


def unregister_format(name):
    _FORMATS.pop(getattr(name, "name", name), None)


@contextlib.contextmanager
def registered_format(fmt: ReportFormat):
    """Register ``fmt`` for the duration of a ``with`` block (tests, notebooks)."""
    load_formats()
    previous = _FORMATS.get(fmt.name)
    register_format(fmt)
    try:
        yield fmt
    finally:
        unregister_format(fmt.name)
        if previous is not None:
            register_format(previous)


def load_formats():
    """Import every format module of this package once (each registers itself when imported)."""
    global _loaded
    if _loaded:
        return
    here = pathlib.Path(__file__).resolve().parent
    for mod in sorted(m.name for m in pkgutil.iter_modules([str(here)])):
        if mod not in NOT_FORMATS:
            importlib.import_module(f"{__package__}.{mod}")
    _loaded = True


def report_formats():
    """The registered formats in file order."""
    load_formats()
    return sorted(_FORMATS.values(), key=lambda f: (f.order, f.name))


def format_names():
    """Names accepted by ``--format`` (registered formats, in file order)."""
    return [f.name for f in report_formats()]


def get_format(name) -> ReportFormat:
    """The format called ``name`` (or one of its aliases); one InputError line otherwise."""
    key = str(name).lower()
    for f in report_formats():
        if key == f.name or key in f.aliases:
            return f
    raise InputError(f"unknown report format {name!r}; choose one of {', '.join(format_names())}",
                     field="format")
