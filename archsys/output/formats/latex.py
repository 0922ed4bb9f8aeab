r"""LaTeX tables of the derived parameters, for ``\input`` into a paper.

Values carry asymmetric errors as ``$x^{+a}_{-b}$`` (``$x \pm a$`` when the
two agree after rounding), rounded by their uncertainty with
:func:`archsys.output.numbers.round_uncertain`; units sit in a second header
row.  Labels and units come from the table model (:mod:`archsys.output.table_model`).

:func:`render_latex` writes plain ``tabular`` environments with ``\hline`` rules, so
the fragment compiles with any document class and no extra package (wide
tables use ``table*``).  :func:`render_aastex` writes the same tables as AAS
``deluxetable`` environments through astropy's AASTeX table writer
(``astropy.io.ascii``, format ``aastex``), for the AAS journals' class.
"""
from __future__ import annotations

import io

from ..files import safe_name
from ..table_model import document_tables, intro_line
from ..latex_escape import escape

__all__ = ["render_latex", "render_aastex", "latex_cell", "escape", "standalone"]


def _percent(text):
    """'42 %' -> '42\\,\\%' (thin space, escaped per cent sign)."""
    return escape(text.replace(" %", "%")).replace(r"\%", r"\,\%")


def latex_cell(cell) -> str:
    """LaTeX of a format-neutral cell; e.g. ``$0.1235^{+0.0012}_{-0.0010}$``."""
    kind = cell[0]
    if kind == "none":
        return "--"
    if kind == "raw":                       # already LaTeX (labels, units)
        return cell[1]
    if kind == "inf":
        return f"$\\infty$ ({_percent(cell[1])} of draws)"
    if kind == "pm":
        v, m, p = (x.replace("∞", r"\infty") for x in cell[1:])
        if m == p:
            return f"${v} \\pm {p}$"
        return f"${v}^{{+{p}}}_{{-{m}}}$"
    if kind == "number":
        return f"${cell[1]}$" if cell[1] not in ("—",) else "--"
    if kind == "percent":
        return _percent(cell[1])
    return escape(cell[1])


def _unit(col):
    return f"({col.unit_latex})" if col.unit_latex else ""


def _tabular(table, caption, label, notes=()):
    cols = table.columns
    env = "table*" if len(cols) > 5 else "table"
    L = [f"\\begin{{{env}}}", "\\centering", "\\renewcommand{\\arraystretch}{1.25}", f"\\caption{{{caption}}}", f"\\label{{{label}}}",
         "\\begin{tabular}{l" + "c" * (len(cols) - 1) + "}", "\\hline"]
    L.append(" & ".join(c.latex for c in cols) + " \\\\")
    if any(c.unit_latex for c in cols):
        L.append(" & ".join(_unit(c) for c in cols) + " \\\\")
    L.append("\\hline")
    for i, row in enumerate(table.rows):
        L.append(" & ".join(latex_cell(c) + escape(table.marks.get((i, col.key), ""))
                            for c, col in zip(row, cols)) + " \\\\")
    L += ["\\hline", "\\end{tabular}"]
    if notes:
        L += ["\\par\\smallskip", "{\\footnotesize\\raggedright " + " ".join(escape(n) for n in notes) + "\\par}"]
    L.append(f"\\end{{{env}}}")
    return L


def _kv_tabular(rows, caption, label):
    """Quantity | value | unit; descriptive text values go to notes under the table."""
    L = ["\\begin{table}", "\\centering", "\\renewcommand{\\arraystretch}{1.25}", f"\\caption{{{caption}}}",
         f"\\label{{{label}}}", "\\begin{tabular}{lcc}", "\\hline", "Quantity & Value & Unit \\\\", "\\hline"]
    notes = []
    for col, cell in rows:
        if cell[0] == "text" and len(cell[1]) > 24:
            notes.append(f"{col.latex}: {escape(cell[1])}.")
            continue
        L.append(f"{col.latex} & {latex_cell(cell)} & {col.unit_latex} \\\\")
    L += ["\\hline", "\\end{tabular}"]
    if notes:
        L += ["\\par\\smallskip", "{\\footnotesize\\raggedright " + " ".join(notes) + "\\par}"]
    L.append("\\end{table}")
    return L


def render_latex(doc) -> str:
    r"""LaTeX tables (planets, adjacent pairs, star and system) of ``doc``, for ``\input``."""
    t = document_tables(doc)
    name = doc.get("system", "system")
    key = safe_name(name).lower()
    prov = doc.get("provenance") or {}
    how = escape(intro_line(doc))
    sysname = escape(name)
    L = [_comment(t.status)] if t.status else []
    L += [f"% archsys {prov.get('package_version', '?')}: derived parameters of {name}",
         f"% input {prov.get('input_file', '?')} (sha256 {prov.get('input_sha256', '?')}), seed {prov.get('seed', '?')}",
         "% Plain \\hline rules: compiles with any class, no extra packages needed.", ""]
    basis = "Medians and central 68.3\\,\\% intervals" if t.usable else escape(t.status) + " Summary"
    L += _tabular(t.planets, f"Planets of {sysname}. {basis} of {how}.", f"tab:{key}-planets",
                  t.notes + t.priors)
    if t.pairs is not None:
        pairs = _tabular(t.pairs, f"Adjacent pairs of {sysname}: period ratio, nearest mean-motion "
                         "resonance and fractional offset $\\delta$, separation $\\Delta$ in mutual Hill radii, "
                         "and the fraction of draws in which each verdict holds.", f"tab:{key}-pairs")
        L += [""] + pairs
    rows = t.star + t.system
    if rows:
        L += [""] + _kv_tabular(rows, f"Star and system-level quantities of {sysname}.", f"tab:{key}-system")
    L += [""] + [_comment("Verdict: " + v) for v in t.verdicts]
    if doc.get("disclaimer"):
        L += ["", _comment(doc["disclaimer"])]
    return "\n".join(L) + "\n"


def _comment(text):
    return "% " + " ".join(str(text).split())


def _deluxetable(columns, rows, caption, label, comments=(), marks=None):
    """One AAS ``deluxetable*`` through astropy's AASTeX writer (astropy.io.ascii format 'aastex')."""
    from astropy.io import ascii as astropy_ascii
    from astropy.table import Table as AstropyTable
    names, seen = [], set()
    for c in columns:                                    # astropy needs unique column names
        n = c.latex
        while n in seen:
            n += "{}"
        seen.add(n)
        names.append(n)
    marks = marks or {}
    data = [[latex_cell(row[j]) + escape(marks.get((i, c.key), "")) for i, row in enumerate(rows)]
            for j, c in enumerate(columns)]
    tab = AstropyTable(data, names=names, dtype=[str] * len(names)) if rows else AstropyTable(names=names,
                                                                                            dtype=[str] * len(names))
    latexdict = {"tabletype": "deluxetable*", "caption": f"{caption}\\label{{{label}}}",
                 "col_align": "l" + "c" * (len(names) - 1),
                 "units": {n: c.unit_latex for n, c in zip(names, columns) if c.unit_latex}}
    if comments:
        latexdict["tablefoot"] = "\\tablecomments{" + " ".join(comments) + "}"
    buf = io.StringIO()
    astropy_ascii.write(tab, buf, format="aastex", latexdict=latexdict)
    return buf.getvalue().rstrip("\n").splitlines()


def render_aastex(doc) -> str:
    r"""The tables of ``doc`` as AAS ``deluxetable*`` environments (for ``\input`` with the AASTeX class)."""
    from ...scores.registry import Column
    t = document_tables(doc)
    name = doc.get("system", "system")
    key = safe_name(name).lower()
    prov = doc.get("provenance") or {}
    sysname = escape(name)
    L = [_comment(t.status)] if t.status else []
    L += [_comment(f"archsys {prov.get('package_version', '?')}: derived parameters of {name} (AASTeX deluxetable)"),
         _comment(f"input {prov.get('input_file', '?')} (sha256 {prov.get('input_sha256', '?')}), "
                  f"seed {prov.get('seed', '?')}"), ""]
    notes = [escape(n) for n in t.notes + t.priors]
    basis = "Medians and central 68.3\\,\\% intervals" if t.usable else escape(t.status) + " Summary"
    L += _deluxetable(t.planets.columns, t.planets.rows, f"Planets of {sysname}. {basis} "
                      f"of {escape(intro_line(doc))}.", f"tab:{key}-planets", notes,
                      t.planets.marks)
    if t.pairs is not None:
        L += [""] + _deluxetable(t.pairs.columns, t.pairs.rows, f"Adjacent pairs of {sysname}.",
                                 f"tab:{key}-pairs", marks=t.pairs.marks)
    rows = t.star + t.system
    if rows:
        cols = [Column("quantity", "Quantity", "Quantity", fmt="text"), Column("value", "Value", "Value"),
                Column("unit", "Unit", "Unit", fmt="text")]
        body = [[("text", c.latex), cell, ("text", c.unit_latex)] for c, cell in rows]
        L += [""] + _deluxetable(cols, [[("raw", r[0][1]), r[1], ("raw", r[2][1])] for r in body],
                                 f"Star and system-level quantities of {sysname}.", f"tab:{key}-system")
    L += [""] + [_comment("Verdict: " + v) for v in t.verdicts]
    if doc.get("disclaimer"):
        L += ["", _comment(doc["disclaimer"])]
    return "\n".join(L) + "\n"


def standalone(fragment: str) -> str:
    """A complete document around a fragment from :func:`render_latex` (for test compiles)."""
    return "\\documentclass[twocolumn]{article}\n\\begin{document}\n" + fragment + "\\end{document}\n"

