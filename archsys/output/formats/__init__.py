"""Report formats: :func:`render` one format, or :func:`write_outputs` all of them.

Every format is a module of this package registered in :mod:`.registry` (text, JSON,
Markdown, HTML, LaTeX, AASTeX); renderers read the one table model of
:mod:`archsys.output.table_model`.  This module only dispatches through the registry,
so the renderers never import it (no import cycle).  :func:`write_outputs` renders every
registered format, the chains file, the provenance sidecar and the figures in memory and
only then writes them, each atomically.
"""
from __future__ import annotations

import os
import pathlib

from ...errors import InputError
from ...scores.registry import Column
from ..numbers import short_name
from ..table_model import Table, Tables, document_tables, format_cell, verdict_lines
from .registry import (RenderContext, ReportFormat, format_names, get_format, register_format,
                       registered_format, report_formats)

__all__ = ["Column", "Table", "Tables", "document_tables", "format_cell", "short_name",
           "verdict_lines", "render", "write_outputs", "document_of", "ReportFormat", "RenderContext",
           "register_format", "registered_format", "report_formats", "format_names", "get_format"]


# --- rendering entry points -------------------------------------------------
def document_of(result):
    """The report document of an :class:`~archsys.pipeline.Analysis` or a document itself."""
    if isinstance(result, dict):
        return result
    doc = getattr(result, "document", None)
    if not isinstance(doc, dict) or not doc:
        raise TypeError("expected an Analysis (with .document) or a report document dict")
    return doc


def render(result, fmt, figures=None, preset=None):
    """The report of ``result`` (Analysis or document) as a string in ``fmt``.

    ``fmt``: a registered format (:func:`format_names`: text, json, markdown, html, latex,
    aastex) or an alias of one (md, htm, tex, txt).  HTML embeds figures: the ``figures`` list of :class:`archsys.output.figures.FigureItem` if given,
    otherwise they are drawn from ``result`` (posterior draws when it is an
    Analysis, the document alone otherwise).
    """
    spec = get_format(fmt)
    doc = document_of(result)
    if spec.embeds_figures and figures is None:
        from ..figures import make_figures
        figures = make_figures(_draws_of(result), doc, preset=preset)
    return spec.render(doc, RenderContext(figures=tuple(figures) if figures is not None else None))


def _draws_of(result):
    post = getattr(result, "posterior", None)
    return getattr(post, "draws", None)


def _dir(path, what):
    p = pathlib.Path(path)
    if p.exists() and not p.is_dir():
        raise InputError(f"{what} {str(p)!r} exists and is not a folder")
    return p


def write_outputs(result, out_dir=None, fig_dir=None, preset=None, stem=None, corner_params=None):
    """Write every report format, chains, provenance and figures of ``result``.

    Into ``out_dir``: one file per registered format (``<name>.json``, ``.md``, ``.html``,
    ``.tex``, ``.aas.tex``, ``.verdicts.tex`` (the verdicts as a paragraph), ``.bib`` (what to
    cite), ``.txt``),
    ``<name>.chains.npz`` and ``<name>.provenance.json``; figures (PDF and PNG)
    into ``fig_dir`` (``out_dir/figures`` when only ``out_dir`` is given).
    Everything is rendered in memory first; each file is then written
    atomically, so a failure while rendering writes nothing.  The provenance
    sidecar is written last: its presence marks a complete set.

    Returns
    -------
    written : dict
        file name -> :class:`pathlib.Path` of every file written.
    """
    from ..figures import figure_files, make_figures
    from ..files import atomic_write
    from ..file_names import safe_name
    from ..provenance import build_provenance, provenance_json
    from ..style import get_preset

    if out_dir is None and fig_dir is None:
        return {}
    preset_name = get_preset(preset).name                  # validate before any work
    doc = document_of(result)
    stem = stem or safe_name(doc.get("system", "system"))   # stem: see files.unique_stems
    out = _dir(out_dir, "output folder") if out_dir is not None else None
    figs_at = _dir(fig_dir, "figure folder") if fig_dir is not None else out / "figures"

    chosen = {"corner_params": corner_params} if corner_params else {}
    figures = make_figures(_draws_of(result), doc, preset=preset_name, **chosen)
    fig_blobs = figure_files(figures, stem)                # {file name: bytes}
    files = {}                                             # path -> (bytes or str, mode)
    for fname, blob in fig_blobs.items():
        files[figs_at / fname] = (blob, "wb")
    if out is not None:
        rel = _relative(figs_at, out)
        md_figs = [(f.caption, f"{rel}/{stem}_{f.name}.png") for f in figures]
        ctx = RenderContext(figures=tuple(figures), figure_links=tuple(md_figs))
        for spec in report_formats():                 # every registered format, in file order
            files[out / f"{stem}{spec.suffix}"] = (spec.render(doc, ctx), "w")
        post = getattr(result, "posterior", None)
        if post is not None:
            from ..chains import posterior_bytes
            files[out / f"{stem}.chains.npz"] = (posterior_bytes(post, doc), "wb")
        hashed = {_display_path(p, out): data for p, (data, _) in files.items()}
        prov = build_provenance(doc, hashed, preset=preset_name)
        files[out / f"{stem}.provenance.json"] = (provenance_json(prov), "w")
    written = {}
    for path, (data, mode) in files.items():         # the provenance sidecar comes last
        try:
            atomic_write(path, data, mode=mode)
        except OSError as exc:
            raise InputError(f"cannot write {path}: {exc.strerror or exc}") from None
        written[path.name] = path
    return written


def _display_path(p, root):
    """``p`` relative to ``root`` (POSIX), or as given when it lies elsewhere."""
    try:
        return p.resolve().relative_to(root.resolve()).as_posix()
    except ValueError:
        return str(p)


def _relative(figs_at, out):
    """Figure folder relative to the output folder, for links in the Markdown report."""
    return pathlib.PurePath(os.path.relpath(figs_at.resolve(), out.resolve())).as_posix()
