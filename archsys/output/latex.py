r"""LaTeX tables of the derived parameters, for ``\input`` into a paper.

Values carry asymmetric errors as ``$x^{+a}_{-b}$`` (``$x \pm a$`` when the
two agree after rounding), rounded by their uncertainty with
:func:`archsys.output.numbers.round_uncertain`; units sit in a second header
row.  Rules are plain ``\hline`` so the fragment compiles with any document
class and no extra package.  Wide tables use ``table*`` (full page width in
two-column classes).
"""
from __future__ import annotations

import unicodedata

from .files import safe_name
from .formats import document_tables, intro_line

__all__ = ["render_latex", "latex_cell", "escape", "standalone"]

_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_",
            "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}",
            "–": "--", "—": "---", "−": "$-$", "±": r"$\pm$", "⊕": r"$\oplus$", "☉": r"$\odot$",
            "★": r"$\star$", "°": r"$^\circ$", "≥": r"$\geq$", ">": "$>$", "<": "$<$", "|": r"$|$", "≤": r"$\leq$", "×": r"$\times$",
            "⁻": "$^{-}$", "³": "$^{3}$", "¹": "$^{1}$", "²": "$^{2}$"}
_GREEK_ALT = {"lamda": "lambda", "epsilon": "epsilon"}


def _greek(ch):
    try:
        name = unicodedata.name(ch)
    except ValueError:
        return None
    for pre, upper in (("GREEK SMALL LETTER ", False), ("GREEK CAPITAL LETTER ", True)):
        if name.startswith(pre):
            word = name[len(pre):].lower()
            if " " in word:
                return None
            word = _GREEK_ALT.get(word, word)
            if upper:
                if word in {"alpha", "beta", "epsilon", "zeta", "eta", "iota", "kappa", "mu", "nu",
                            "omicron", "rho", "tau", "chi"}:
                    return None   # Latin look-alikes: keep the character
                word = word.capitalize()
            return f"$\\{word}$"
    return None


def escape(text) -> str:
    """``text`` safe for LaTeX text mode (special characters and Greek letters mapped)."""
    out = []
    for ch in str(text):
        if ch in _SPECIAL:
            out.append(_SPECIAL[ch])
        elif ord(ch) > 127 and (g := _greek(ch)):
            out.append(g)
        else:
            out.append(ch)
    return "".join(out)


def latex_cell(cell) -> str:
    """LaTeX of a format-neutral cell; e.g. ``$0.1235^{+0.0012}_{-0.0010}$``."""
    kind = cell[0]
    if kind == "none":
        return "--"
    if kind == "pm":
        v, m, p = cell[1:]
        if m == p:
            return f"${v} \\pm {p}$"
        return f"${v}^{{+{p}}}_{{-{m}}}$"
    if kind == "number":
        return f"${cell[1]}$" if cell[1] not in ("—",) else "--"
    if kind == "percent":
        return escape(cell[1].replace(" %", "%")).replace(r"\%", r"\,\%")
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
    for row in table.rows:
        L.append(" & ".join(latex_cell(c) for c in row) + " \\\\")
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
    L = [f"% archsys {prov.get('package_version', '?')}: derived parameters of {name}",
         f"% input {prov.get('input_file', '?')} (sha256 {prov.get('input_sha256', '?')}), seed {prov.get('seed', '?')}",
         "% Plain \\hline rules: compiles with any class, no extra packages needed.", ""]
    basis = "Medians and central 68.3\\,\\% intervals"
    L += _tabular(t.planets, f"Planets of {sysname}. {basis} of {how}.", f"tab:{key}-planets", t.notes)
    if t.pairs is not None:
        pairs = _tabular(t.pairs, f"Adjacent pairs of {sysname}: period ratio, nearest mean-motion "
                         "resonance and fractional offset $\\delta$, separation $\\Delta$ in mutual Hill radii, "
                         "and the fraction of draws in which each verdict holds.", f"tab:{key}-pairs")
        L += [""] + pairs
    rows = t.star + t.system
    if rows:
        L += [""] + _kv_tabular(rows, f"Star and system-level quantities of {sysname}.", f"tab:{key}-system")
    if doc.get("disclaimer"):
        L += ["", "% " + doc["disclaimer"]]
    return "\n".join(L) + "\n"


def standalone(fragment: str) -> str:
    """A complete document around a fragment from :func:`render_latex` (for test compiles)."""
    return "\\documentclass[twocolumn]{article}\n\\begin{document}\n" + fragment + "\\end{document}\n"

