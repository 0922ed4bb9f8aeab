"""Terminal text report, rendered from the report document.

Layout of our own: a header line, the star, a planet table, a pair table, the
system verdicts in plain language, and the statistical caveat.  Colour (ANSI)
only when writing to a terminal.
"""
from __future__ import annotations

from ..numbers import plain_cell
from ..table_model import document_tables
from ..report_meta import intro_line
from .registry import ReportFormat, register_format

__all__ = ["FORMAT", "render_text"]


class _Style:
    def __init__(self, colour):
        self.c = colour

    def _w(self, code, s):
        return f"\033[{code}m{s}\033[0m" if self.c else s

    def head(self, s):
        return self._w("1", s)

    def dim(self, s):
        return self._w("2", s)

    def good(self, s):
        return self._w("32", s)

    def warn(self, s):
        return self._w("33", s)

    def bad(self, s):
        return self._w("31", s)


def _table(rows, header, st):
    widths = [max(len(str(r[i])) for r in rows + [header]) for i in range(len(header))]
    line = "  ".join(h.ljust(w) for h, w in zip(header, widths))
    out = ["  " + st.dim(line)]
    for r in rows:
        out.append("  " + "  ".join(str(c).ljust(w) for c, w in zip(r, widths)))
    return out


def _head(col):
    return col.label + (f" [{col.unit}]" if col.unit else "")


def _grid(table, st):
    rows = [[plain_cell(c) + table.marks.get((i, col.key), "") for c, col in zip(row, table.columns)]
            for i, row in enumerate(table.rows)]
    return _table(rows, [_head(c) for c in table.columns], st)


def _kv(rows, st):
    width = max((len(c.label) for c, _ in rows), default=0)
    return ["  " + c.label.ljust(width) + "  " + plain_cell(cell) + (f" {c.unit}" if c.unit else "")
            for c, cell in rows]


def _tone(line, st):
    """Colour a verdict line by its first percentage (terminal only)."""
    import re
    m = re.search(r"([<>]?)([0-9.]+) %", line)
    if not m or "stable" not in line:
        return line
    x = float(m.group(2))
    return st.good(line) if x >= 95 else st.bad(line) if x <= 5 else st.warn(line)


def render_text(doc, colour=False) -> str:
    """The terminal report of ``doc`` (the same table model and numbers as every other format)."""
    st = _Style(colour)
    t = document_tables(doc)
    sysname = doc.get("system", "system")
    prov = doc.get("provenance") or {}
    L = [(st.bad if not t.usable else st.warn)(t.status)] if t.status else []
    L += [st.head(f"{sysname} — system architecture") + st.dim(f"   (archsys {prov.get('package_version', '?')})"),
          ""]
    if t.star:
        L.append(st.head("Star    ") + "   ".join(f"{c.label} = {plain_cell(cell)}" + (f" {c.unit}" if c.unit else "")
                                                  for c, cell in t.star))
    L.append(st.head("Draws   ") + intro_line(doc))
    if (doc.get("dynamics") or {}).get("verdict"):
        L.append(st.head("Verdict ") + _tone(doc["dynamics"]["verdict"].split(" — ")[0], st)
                 + " — " + doc["dynamics"]["verdict"].split(" — ", 1)[-1])
    L += ["", st.head("Planets") + st.dim("   median and 68 % interval")]
    L += _grid(t.planets, st)
    L += [st.dim("  " + n) for n in t.notes]
    if t.pairs is not None:
        L += ["", st.head("Adjacent pairs")] + _grid(t.pairs, st)
        L.append(st.dim("  Δ: separation in mutual Hill radii; offset: from the nearest mean-motion resonance; "
                        "probabilities are fractions of the draws."))
    if t.system:
        L += ["", st.head("System")] + _kv(t.system, st)
    L += ["", st.head("Verdicts")] + ["  " + _tone(v, st) for v in t.verdicts]
    L += ["", st.head("Priors")] + ["  " + v for v in t.priors]
    if doc.get("disclaimer"):
        L += ["", st.dim("Note: " + doc["disclaimer"])]
    return "\n".join(L) + "\n"


FORMAT = register_format(ReportFormat("text", ".txt", lambda doc, ctx: render_text(doc), order=60, aliases=("txt",),
                                      description="plain-text report (as on the terminal, without colour)"))
