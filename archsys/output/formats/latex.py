r"""LaTeX tables of the derived parameters, for ``\input`` into a paper.

Values carry asymmetric errors as ``$x^{+a}_{-b}$`` (``$x \pm a$`` when the
two agree after rounding), rounded to two significant figures of the larger
error with :func:`archsys.output.numbers.round_uncertain` (common practice);
upper limits are written as limits (``$<0.060$ (95\,\%)``); units sit in a
second header row.  Labels and units come from the table model
(:mod:`archsys.output.table_model`).

Every table fits an AAS two-column page at ``\textwidth``: a table wider than
that is split (:func:`archsys.output.table_model.split_table`) into parts — planets'
orbits, masses and radii; pairs' dynamics and predictions — each a table of its
own.  Long text (assumptions, bases, caveats) goes below the table (plain
``.tex``) or into ``\tablecomments`` (AAS), never into a cell.  Citation texts
become ``\citet``/``\citealt`` keys of ``NAME.bib`` (:mod:`archsys.output.references`).

:func:`render_latex` writes plain ``tabular`` environments with ``\hline``
rules (compiles with any class; ``\citet`` falls back to ``\cite`` without
natbib).  :func:`render_aastex` writes the same tables as AAS ``deluxetable*``
environments for the AASTeX class.  :func:`render_verdicts_tex` writes the
verdicts as a paragraph to paste into the text.
"""
from __future__ import annotations

import re

from ..file_names import safe_name
from ..latex_escape import escape
from ..references import LATEX_FALLBACK, cite_latex
from ..table_model import document_tables, split_table
from ..report_meta import intro_line
from .registry import ReportFormat, register_format

__all__ = ["FORMAT", "render_latex", "render_aastex", "render_verdicts_tex", "latex_cell", "escape", "standalone",
           "TEXTWIDTH_BUDGET", "column_width"]

#: Width budget of one table in "digit widths" of the table font (\scriptsize, \tabcolsep 3pt) at an
#: AAS two-column \textwidth (7.1 in): about 150 digits; 128 leaves room for the estimate's error.
TEXTWIDTH_BUDGET = 128.0
#: A table narrower than this fits one column (\columnwidth, about 3.4 in).
COLUMNWIDTH_BUDGET = 58.0
_HEAD_LINE = 12          # characters per line of a wrapped text header


def _percent(text):
    """'42 %' -> '42\\,\\%' (thin space, escaped per cent sign)."""
    return escape(text.replace(" %", "%")).replace(r"\%", r"\,\%")


def latex_cell(cell) -> str:
    """LaTeX of a format-neutral cell; e.g. ``$0.1235^{+0.0012}_{-0.0010}$``."""
    kind = cell[0]
    if kind == "none":
        return "\\nodata"
    if kind == "raw":                       # already LaTeX (labels, units)
        return cell[1]
    if kind == "inf":
        return f"$\\infty$ ({_percent(cell[1])} of draws)"
    if kind == "pm":
        v, m, p = (x.replace("∞", r"\infty") for x in cell[1:])
        if m == p:
            return f"${v} \\pm {p}$"
        return f"${v}^{{+{p}}}_{{-{m}}}$"
    if kind == "limit":
        return f"${cell[1]}{cell[2]}$ ({_percent(cell[3])})"
    if kind == "number":
        return f"${cell[1]}$" if cell[1] not in ("—",) else "\\nodata"
    if kind == "percent":
        return _percent(cell[1])
    return escape(cell[1])


# --- widths ---------------------------------------------------------------------------------
def _cell_width(cell):
    """Estimated width of a cell in digit widths of the table font."""
    kind = cell[0]
    if kind == "pm":
        v, m, p = cell[1:]
        return len(v) + (len(p) + 2.5 if m == p else 0.75 * max(len(m), len(p)) + 1.5)
    if kind == "limit":
        return len(cell[2]) + len(cell[3]) + 5
    if kind == "inf":
        return len(cell[1]) + 12
    if kind == "none":
        return 2
    text = re.sub(r"\\[a-zA-Z]+|[{}$^_]", "", str(cell[1]))
    return len(text)


def _visible(latex):
    """Rough visible length of a LaTeX label (commands and braces removed)."""
    t = re.sub(r"\\(mathrm|text|textit|mathcal)\{([^{}]*)\}", r"\2", latex)
    t = re.sub(r"\\[a-zA-Z]+", "x", t)
    return len(re.sub(r"[{}$^_\\]", "", t))


def _head_lines(col):
    """The header of a column as lines (a long plain-text label wraps at word boundaries)."""
    label = col.latex
    if "$" in label or "\\" in label or len(label) <= _HEAD_LINE:
        return [label]
    lines, cur = [], ""
    for word in label.split():
        if cur and len(cur) + 1 + len(word) > _HEAD_LINE:
            lines.append(cur)
            cur = word
        else:
            cur = f"{cur} {word}".strip()
    return lines + [cur] if cur else lines


def column_width(col, cells):
    """Estimated width of a column (header, unit, cells) in digit widths of the table font."""
    head = max(_visible(x) for x in _head_lines(col))
    unit = _visible(col.unit_latex) + 2 if col.unit_latex else 0
    body = max((_cell_width(c) + 1 for c in cells), default=0)
    return max(head, unit, body) + 1.8          # + 2 \tabcolsep (6 pt) in digit widths


def _head(col):
    lines = _head_lines(col)
    return lines[0] if len(lines) == 1 else "\\shortstack{" + "\\\\".join(lines) + "}"


def _unit(col):
    return f"({col.unit_latex})" if col.unit_latex else ""


# --- the table specifications shared by both renderers ----------------------------------------
def _specs(doc):
    """[(kind, caption, label, columns, rows, marks, notes)] of ``doc``; kind "grid" or "kv"."""
    t = document_tables(doc)
    name = doc.get("system", "system")
    key = safe_name(name).lower()
    sysname = escape(name)
    how = escape(intro_line(doc))
    basis = f"Medians and central 68.3\\,\\% intervals of {how}"
    specs = []
    notes = [cite_latex(escape(n)) for n in t.notes + t.priors]
    parts = split_table(t.planets, column_width, TEXTWIDTH_BUDGET)
    for k, part in enumerate(parts):
        what = f" ({part.title})" if part.title else ""
        lab = f"tab:{key}-planets" + (f"-{_slug(part.title)}" if len(parts) > 1 else "")
        specs.append(("grid", f"Planets of {sysname}{what}. {basis}.", lab, part.columns, part.rows,
                      part.marks, notes if k == 0 else []))
    if t.pairs is not None:
        parts = split_table(t.pairs, column_width, TEXTWIDTH_BUDGET)
        for k, part in enumerate(parts):
            what = f" ({part.title})" if part.title else ""
            lab = f"tab:{key}-pairs" + (f"-{_slug(part.title)}" if len(parts) > 1 else "")
            pnotes = []
            if k == 0:
                pnotes = [cite_latex("Period ratio, nearest mean-motion resonance (MMR) and fractional offset "
                                     "$\\delta$ from it; separation $\\Delta$ in mutual Hill radii "
                                     "$R_\\mathrm{H,m}$; probabilities are fractions of the posterior draws in "
                                     "which the criterion holds (Hill stability: Gladman 1993; AMD: "
                                     "Laskar \\& Petit 2017).")]
            specs.append(("grid", f"Adjacent pairs of {sysname}{what}.", lab, part.columns, part.rows,
                          part.marks, pnotes))
    rows, comments = [], []
    for col, cell in t.star + t.system:
        if cell[0] == "text" and len(cell[1]) > 24:
            comments.append(f"{cite_latex(col.latex)}: {cite_latex(escape(cell[1]))}.")
            continue
        rows.append((col, cell))
    if rows or comments:
        specs.append(("kv", f"Star and system-level quantities of {sysname}.", f"tab:{key}-system", None,
                      rows, {}, comments))
    return specs


def _slug(title):
    """'orbits, 1 of 2' -> 'orbits-1'; 'masses and radii' -> 'masses'."""
    words = re.findall(r"[a-z]+|\d+", title.lower())
    nums = [w for w in words if w.isdigit()]
    return words[0] + (f"-{nums[0]}" if nums else "")


def _cells(columns, rows, marks):
    return [[latex_cell(c) + escape(marks.get((i, col.key), "")) for c, col in zip(row, columns)]
            for i, row in enumerate(rows)]


def _width(columns, rows):
    return sum(column_width(c, [r[i] for r in rows]) for i, c in enumerate(columns))


# --- plain tabular --------------------------------------------------------------------------------
def _plain_grid(caption, label, columns, rows, marks, notes):
    wide = _width(columns, rows) > COLUMNWIDTH_BUDGET
    env = "table*" if wide else "table"
    L = [f"\\begin{{{env}}}", "\\centering", "\\scriptsize", "\\setlength{\\tabcolsep}{3pt}",
         "\\renewcommand{\\arraystretch}{1.2}", f"\\caption{{{caption}}}", f"\\label{{{label}}}",
         "\\begin{tabular}{l" + "c" * (len(columns) - 1) + "}", "\\hline"]
    L.append(" & ".join(_head(c) for c in columns) + " \\\\")
    if any(c.unit_latex for c in columns):
        L.append(" & ".join(_unit(c) for c in columns) + " \\\\")
    L.append("\\hline")
    L += [" & ".join(r) + " \\\\" for r in _cells(columns, rows, marks)]
    L += ["\\hline", "\\end{tabular}"]
    if notes:
        L += ["\\par\\smallskip", "\\parbox{\\linewidth}{\\raggedright " + " ".join(notes) + "}"]
    L.append(f"\\end{{{env}}}")
    return L


def _kv_rows(rows):
    return [f"{cite_latex(col.latex)} & {latex_cell(cell)} & {col.unit_latex} \\\\" for col, cell in rows]


def _plain_kv(caption, label, rows, comments):
    L = ["\\begin{table*}", "\\centering", "\\scriptsize", "\\setlength{\\tabcolsep}{3pt}",
         "\\renewcommand{\\arraystretch}{1.2}", f"\\caption{{{caption}}}", f"\\label{{{label}}}",
         "\\begin{tabular}{p{0.5\\textwidth}cc}", "\\hline", "Quantity & Value & Unit \\\\", "\\hline"]
    L += _kv_rows(rows)
    L += ["\\hline", "\\end{tabular}"]
    if comments:
        L += ["\\par\\smallskip", "\\parbox{\\linewidth}{\\raggedright " + " ".join(comments) + "}"]
    L.append("\\end{table*}")
    return L


def _header(doc, what):
    prov = doc.get("provenance") or {}
    name = doc.get("system", "system")
    return [_comment(f"archsys {prov.get('package_version', '?')}: {what} of {name}"),
            _comment(f"input {prov.get('input_file', '?')} (sha256 {prov.get('input_sha256', '?')}), "
                     f"seed {prov.get('seed', '?')}"),
            _comment(f"citations: keys of {safe_name(name)}.bib (\\bibliography{{{safe_name(name)}}})")]


def render_latex(doc) -> str:
    r"""LaTeX tables (planets, adjacent pairs, star and system) of ``doc``, for ``\input``."""
    status = document_tables(doc).status
    L = ([_comment(status)] if status else []) + _header(doc, "derived parameters") + [
        _comment("Plain \\hline rules: compiles with any class; \\citet falls back to \\cite without natbib.")]
    L += LATEX_FALLBACK + ["\\providecommand{\\nodata}{--}", ""]
    for kind, caption, label, columns, rows, marks, notes in _specs(doc):
        if kind == "grid":
            L += _plain_grid(caption, label, columns, rows, marks, notes) + [""]
        else:
            L += _plain_kv(caption, label, rows, notes) + [""]
    L += _verdict_comments(doc)
    return "\n".join(L) + "\n"


def _verdict_comments(doc):
    """The verdicts as comments beside the tables; the paragraph to paste is NAME.verdicts.tex."""
    L = [_comment(f"Verdicts (as a paragraph with citations: {safe_name(doc.get('system', 'system'))}"
                  ".verdicts.tex):")]
    L += [_comment("Verdict: " + str(v)) for v in doc.get("verdicts") or []]
    if doc.get("disclaimer"):
        L += [_comment(doc["disclaimer"])]
    return L


def _comment(text):
    return "% " + " ".join(str(text).split())


# --- AAS deluxetable ------------------------------------------------------------------------------
def _deluxe_grid(caption, label, columns, rows, marks, notes):
    wide = _width(columns, rows) > COLUMNWIDTH_BUDGET
    env = "deluxetable*" if wide else "deluxetable"
    L = [f"\\begin{{{env}}}{{l" + "c" * (len(columns) - 1) + "}", "\\tabletypesize{\\scriptsize}",
         "\\tablewidth{0pt}", f"\\tablecaption{{{caption}\\label{{{label}}}}}"]
    head = " & ".join(f"\\colhead{{{_head(c)}}}" for c in columns)
    if any(c.unit_latex for c in columns):
        head += " \\\\\n" + " & ".join(f"\\colhead{{{_unit(c)}}}" for c in columns)
    L += ["\\tablehead{" + head + "}", "\\startdata"]
    body = [" & ".join(r) for r in _cells(columns, rows, marks)]
    L += [r + " \\\\" for r in body[:-1]] + body[-1:]
    L.append("\\enddata")
    if notes:
        L.append("\\tablecomments{" + " ".join(notes) + "}")
    L.append(f"\\end{{{env}}}")
    return L


def _deluxe_kv(caption, label, rows, comments):
    L = ["\\begin{deluxetable*}{p{0.5\\textwidth}cc}", "\\tabletypesize{\\scriptsize}", "\\tablewidth{0pt}",
         f"\\tablecaption{{{caption}\\label{{{label}}}}}",
         "\\tablehead{\\colhead{Quantity} & \\colhead{Value} & \\colhead{Unit}}", "\\startdata"]
    body = _kv_rows(rows)
    if body:
        body[-1] = body[-1][:-len(" \\\\")]
    L += body + ["\\enddata"]
    if comments:
        L.append("\\tablecomments{" + " ".join(comments) + "}")
    L.append("\\end{deluxetable*}")
    return L


def render_aastex(doc) -> str:
    r"""The tables of ``doc`` as AAS ``deluxetable*`` environments (for ``\input`` with the AASTeX class)."""
    status = document_tables(doc).status
    L = ([_comment(status)] if status else []) + _header(doc, "derived parameters (AASTeX deluxetable)") + [""]
    for kind, caption, label, columns, rows, marks, notes in _specs(doc):
        if kind == "grid":
            L += _deluxe_grid(caption, label, columns, rows, marks, notes) + [""]
        else:
            L += _deluxe_kv(caption, label, rows, notes) + [""]
    L += _verdict_comments(doc)
    return "\n".join(L) + "\n"


# --- the verdicts as a paragraph -----------------------------------------------------------------
def render_verdicts_tex(doc) -> str:
    r"""The verdicts of ``doc`` as one paragraph to paste into a paper (``\citet`` keys of NAME.bib).

    It holds every verdict sentence the document carries — one per structured verdict of every
    registered score, worded by :mod:`archsys.output.wording` — so a new score's verdicts appear
    here without a change to this function.
    """
    name = doc.get("system", "system")
    sentences = [str(v).strip() for v in doc.get("verdicts") or [] if str(v).strip()]
    how = intro_line(doc)
    labels = [sp[2] for sp in _specs(doc)]
    refs = (f"Table~\\ref{{{labels[0]}}}" if len(labels) == 1 else
            f"Tables~\\ref{{{labels[0]}}}--\\ref{{{labels[-1]}}}")
    text = (f"From {escape(how) or 'the posterior draws'}, the architecture of {escape(name)} ({refs}) gives "
            "the following verdicts; each probability is the fraction of posterior draws in which the "
            "criterion holds.")
    body = " ".join(s if s.endswith(".") else s + "." for s in sentences) or "No pair verdicts (one planet)."
    para = cite_latex(escape(body))
    closing = escape(doc.get("disclaimer") or "")
    L = _header(doc, "verdicts paragraph")
    L += LATEX_FALLBACK + ["", _wrap(text + " " + para + (" " + closing if closing else "")), ""]
    return "\n".join(L) + "\n"


def _wrap(text, width=100):
    out, line = [], ""
    for word in text.split():
        if line and len(line) + 1 + len(word) > width:
            out.append(line)
            line = word
        else:
            line = f"{line} {word}".strip()
    return "\n".join(out + [line])


def standalone(fragment: str) -> str:
    """A complete document around a fragment from :func:`render_latex` (for test compiles)."""
    return "\\documentclass[twocolumn]{article}\n\\begin{document}\n" + fragment + "\\end{document}\n"


FORMAT = register_format(ReportFormat("latex", ".tex", lambda doc, ctx: render_latex(doc), order=40, aliases=("tex",),
                                      description="LaTeX tabular tables for \\input"))
