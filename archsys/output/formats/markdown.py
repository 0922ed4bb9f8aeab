"""Markdown report (GitHub-flavoured pipe tables), rendered from the report document."""
from __future__ import annotations

from ..table_model import document_tables
from ..report_meta import intro_line, provenance_items, sampler_items
from .registry import ReportFormat, register_format

__all__ = ["FORMAT", "render_markdown", "md_cell"]


def _esc(s):
    return str(s).replace("\\", "\\\\").replace("|", "\\|").replace("\n", " ")


def md_cell(cell):
    """Markdown text of a format-neutral cell (see :func:`archsys.output.numbers.format_value`)."""
    kind = cell[0]
    if kind == "none":
        return "—"
    if kind == "inf":
        return f"∞ ({_esc(cell[1])} of draws infinite)"
    if kind == "pm":
        v, m, p = cell[1:]
        return f"{v} ± {p}" if m == p else f"{v} +{p}/−{m}"
    if kind == "limit":
        return _esc(f"{cell[1]} {cell[2]} ({cell[3]})")
    return _esc(cell[1])


def _head(col):
    return _esc(col.label + (f" [{col.unit}]" if col.unit else ""))


def _table(table):
    cols = table.columns
    out = ["| " + " | ".join(_head(c) for c in cols) + " |",
           "|" + "|".join([":--"] + ["--:"] * (len(cols) - 1)) + "|"]
    for i, row in enumerate(table.rows):
        out.append("| " + " | ".join(md_cell(c) + table.marks.get((i, col.key), "")
                                      for c, col in zip(row, cols)) + " |")
    return out


def _kv(rows):
    out = ["| quantity | value | unit |", "|:--|--:|:--|"]
    for col, cell in rows:
        out.append(f"| {_esc(col.label)} | {md_cell(cell)} | {_esc(col.unit)} |")
    return out


def render_markdown(doc, figures=None) -> str:
    """Markdown report of ``doc``.

    ``figures``: optional list of ``(caption, relative_path)`` pairs, linked as images.
    """
    t = document_tables(doc)
    name = doc.get("system", "system")
    prov = doc.get("provenance") or {}
    L = [f"> **{_esc(t.status)}**", ""] if t.status else []
    L += [f"# {_esc(name)} — system architecture", ""]
    meta = [f"archsys {prov.get('package_version', '?')}", intro_line(doc)]
    if prov.get("input_file"):
        meta.append(f"input `{prov['input_file']}`")
    L += ["*" + " · ".join(m for m in meta if m) + "*", "",
          "Values are medians with the central 68.3 % interval of the posterior draws, rounded to "
          "two significant figures of the larger error.", ""]
    if (doc.get("dynamics") or {}).get("verdict"):
        L += [f"**{_esc(doc['dynamics']['verdict'].split(' — ')[0])}** — "
              f"{_esc(doc['dynamics']['verdict'].split(' — ', 1)[-1])}", ""]
    if t.star:
        L += ["## Star", ""] + _kv(t.star) + [""]
    L += ["## Planets", ""] + _table(t.planets) + [""]
    if t.notes:
        L += [f"- {_esc(n)}" for n in t.notes] + [""]
    if t.pairs is not None:
        L += ["## Adjacent pairs", ""] + _table(t.pairs) + [""]
        L += ["Δ: separation in mutual Hill radii; offset: fractional distance from the nearest "
              "mean-motion resonance; probabilities are fractions of the draws.", ""]
    if t.system:
        L += ["## System", ""] + _kv(t.system) + [""]
    L += ["## Verdicts", ""] + [f"- {_esc(v)}" for v in t.verdicts] + [""]
    L += ["## Priors", ""] + [f"- {_esc(v)}" for v in t.priors] + [""]
    if figures:
        L += ["## Figures", ""]
        for caption, path in figures:
            if path:
                L += [f"![{_esc(caption)}]({path})", "", f"*{_esc(caption)}*", ""]
    items = sampler_items(doc)
    if items:
        L += ["## Sampling", ""] + [f"- **{_esc(k)}**: {_esc(v)}" for k, v in items] + [""]
    items = provenance_items(doc)
    if items:
        L += ["## Provenance", ""] + [f"- **{_esc(k)}**: {_esc(v)}" for k, v in items] + [""]
    if doc.get("disclaimer"):
        L += [f"> **Note.** {_esc(doc['disclaimer'])}", ""]
    return "\n".join(L)


FORMAT = register_format(ReportFormat(
    "markdown", ".md", lambda doc, ctx: render_markdown(doc, figures=list(ctx.figure_links or ()) or None),
    order=20, aliases=("md",), description="GitHub-flavoured Markdown with links to the figure files"))
