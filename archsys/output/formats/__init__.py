"""Report formats: :func:`render` one format, or :func:`write_outputs` all of them.

Every renderer (text, Markdown, HTML, LaTeX) reads the one table model of
:mod:`archsys.output.table_model`; this module only dispatches, so the renderers
never import it back (no import cycle).  :func:`write_outputs` renders every
format, the chains file, the provenance sidecar and the figures in memory and
only then writes them, each atomically.
"""
from __future__ import annotations

import json
import os
import pathlib

from ...errors import InputError
from ...scores.registry import Column
from . import html as html_out
from . import latex as latex_out
from . import markdown as markdown_out
from . import terminal as text_out
from ..numbers import short_name
from ..table_model import Table, Tables, document_tables, format_cell, verdict_lines

__all__ = ["Column", "Table", "Tables", "document_tables", "format_cell", "short_name",
           "verdict_lines", "FORMATS", "render", "write_outputs", "document_of"]

FORMATS = ("markdown", "html", "latex", "json", "text", "aastex")
_ALIASES = {"md": "markdown", "tex": "latex", "htm": "html", "txt": "text"}


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

    ``fmt``: markdown, html, latex (plain ``tabular``), aastex (AAS deluxetable), json or
    text.  HTML embeds figures: the ``figures`` list of :class:`archsys.output.figures.FigureItem` if given,
    otherwise they are drawn from ``result`` (posterior draws when it is an
    Analysis, the document alone otherwise).
    """
    name = _ALIASES.get(str(fmt).lower(), str(fmt).lower())
    doc = document_of(result)
    if name == "markdown":
        return markdown_out.render_markdown(doc)
    if name == "latex":
        return latex_out.render_latex(doc)
    if name == "aastex":
        return latex_out.render_aastex(doc)
    if name == "json":
        return json.dumps(doc, indent=2, sort_keys=False) + "\n"
    if name == "text":
        return text_out.render_text(doc)
    if name == "html":
        if figures is None:
            from ..figures import make_figures
            figures = make_figures(_draws_of(result), doc, preset=preset)
        return html_out.render_html(doc, figures)
    raise InputError(f"unknown report format {fmt!r}; choose one of {', '.join(FORMATS)}", field="format")


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

    Into ``out_dir``: ``<name>.json``, ``.md``, ``.html``, ``.tex``, ``.aas.tex``, ``.txt``,
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
    from ..files import atomic_write, safe_name
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
        files[out / f"{stem}.json"] = (json.dumps(doc, indent=2, sort_keys=False) + "\n", "w")
        files[out / f"{stem}.md"] = (markdown_out.render_markdown(doc, figures=md_figs), "w")
        files[out / f"{stem}.html"] = (html_out.render_html(doc, figures), "w")
        files[out / f"{stem}.tex"] = (latex_out.render_latex(doc), "w")
        files[out / f"{stem}.aas.tex"] = (latex_out.render_aastex(doc), "w")
        files[out / f"{stem}.txt"] = (text_out.render_text(doc), "w")
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
