"""Self-contained HTML report: one file, inline CSS, figures embedded as base64 PNG.

Nothing is fetched when the page opens: no scripts, no web fonts, no external
style sheets or images, so the file can be archived, mailed or opened offline.
"""
from __future__ import annotations

import base64
import re
from html import escape

from ..style import PALETTE
from ..table_model import document_tables, split_table
from ..report_meta import intro_line, provenance_items, sampler_items
from .registry import ReportFormat, register_format

__all__ = ["FORMAT", "render_html", "html_cell"]

_CSS = """
:root { --ink: #1d232b; --muted: #5b6470; --rule: #d5dae0; --band: #f4f6f8; --accent: %(blue)s;
        --good: %(green)s; --mid: %(orange)s; --bad: %(red)s; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); background: #fff;
       font: 15px/1.5 "Iowan Old Style", "Palatino Linotype", Palatino, Georgia, serif; }
main { max-width: 72rem; margin: 0 auto; padding: 2rem 1.25rem 3rem; }
header { border-bottom: 3px solid var(--accent); margin-bottom: 1.5rem; padding-bottom: .6rem; }
h1 { font-size: 1.9rem; margin: 0 0 .25rem; letter-spacing: .01em; }
h2 { font-size: 1.15rem; margin: 2rem 0 .6rem; text-transform: uppercase; letter-spacing: .08em;
     color: var(--accent); }
.meta { color: var(--muted); font-size: .9rem; margin: 0; }
.lede { font-size: .92rem; color: var(--muted); }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; font-variant-numeric: tabular-nums; font-size: .92rem; }
th, td { padding: .35rem .6rem; border-bottom: 1px solid var(--rule); white-space: nowrap; }
th { text-align: right; font-weight: 600; vertical-align: bottom; }
thead th { white-space: normal; min-width: 3.5em; }
h3 { font-size: .95rem; margin: 1.1rem 0 .4rem; color: var(--muted); font-weight: 600; }
.cl { color: var(--muted); font-size: .85em; }
th .u { display: block; font-weight: 400; color: var(--muted); font-size: .8rem; }
td { text-align: right; }
th:first-child, td:first-child { text-align: left; }
tbody tr:nth-child(odd) { background: var(--band); }
.pm { display: inline-flex; align-items: center; }
.pm .err { display: inline-flex; flex-direction: column; font-size: .72em; line-height: 1.05;
           margin-left: .12em; text-align: left; }
.none { color: var(--muted); }
.badge { display: inline-block; min-width: 4.2em; padding: 0 .4em; border-radius: .25em; color: #fff;
         text-align: center; }
.good { background: var(--good); } .mid { background: var(--mid); color: #1d232b; } .bad { background: var(--bad); }
ul.verdicts { padding-left: 1.2rem; } ul.verdicts li { margin: .25rem 0; }
ul.notes { color: var(--muted); font-size: .88rem; padding-left: 1.2rem; }
.figs { display: grid; grid-template-columns: repeat(auto-fill, minmax(30rem, 1fr)); gap: 1.5rem; }
table.kv td.text { white-space: normal; text-align: left; max-width: 34rem; }
table.kv th { white-space: normal; max-width: 22rem; }
table.kv th, table.kv td { vertical-align: top; }
figure { margin: 0; } figure img { width: 100%%; height: auto; border: 1px solid var(--rule); }
figcaption { font-size: .85rem; color: var(--muted); margin-top: .35rem; }
dl { display: grid; grid-template-columns: max-content 1fr; gap: .2rem 1rem; font-size: .88rem; }
dt { font-weight: 600; } dd { margin: 0; word-break: break-word; }
.note { border-left: 4px solid var(--mid); background: #fdf6e7; padding: .6rem .9rem; font-size: .9rem; }
.warn { border-left: 4px solid var(--bad); background: #fbece6; padding: .6rem .9rem; }
""" % {"blue": PALETTE["blue"], "green": PALETTE["bluish_green"], "orange": PALETTE["orange"],
       "red": PALETTE["vermillion"]}

_VERDICT_KEYS = ("hill_stable_probability", "amd_stable_probability", "all_pairs_hill_stable_probability",
                 "amd.system_stable_probability")


def html_cell(cell, key="", raw=None) -> str:
    """HTML of a format-neutral cell; stable/unstable probabilities become coloured badges."""
    kind = cell[0]
    if kind == "none":
        return '<span class="none">—</span>'
    if kind == "inf":
        return f"∞ ({escape(cell[1])} of draws infinite)"
    if kind == "pm":
        v, m, p = (escape(x) for x in cell[1:])
        if m == p:
            return f"{v} ± {p}"
        return f'<span class="pm">{v}<span class="err"><span>+{p}</span><span>−{m}</span></span></span>'
    if kind == "limit":
        return f"&lt; {escape(cell[2])} <span class=\"cl\">({escape(cell[3])})</span>"
    text = escape(cell[1])
    if kind == "percent" and key in _VERDICT_KEYS and isinstance(raw, (int, float)):
        cls = "good" if raw >= 0.95 else "bad" if raw <= 0.05 else "mid"
        return f'<span class="badge {cls}">{text}</span>'
    return text


_SUB = re.compile(r"(?<![\w/.\-])([A-Za-z\u0391-\u03c9])_\{?([A-Za-z0-9,]+)\}?")


def symbol_html(text) -> str:
    """Escaped HTML of a label, unit or sentence with plain-text subscripts rendered:
    ``R_H,m`` -> R<sub>H,m</sub>, ``σ_mut`` -> σ<sub>mut</sub> (file names such as
    ``demo_systems`` are left alone: the letter before ``_`` must start a word)."""
    return _SUB.sub(r"\1<sub>\2</sub>", escape(str(text)))


#: Width budget of one HTML table in digit widths at a 1280 px window (main column about 1110 px,
#: table font 13.8 px: about 150 digits; 120 leaves room for the estimate's error).
HTML_BUDGET = 120.0


def _html_width(col, cells):
    """Estimated width of a column in digit widths (headers wrap at word boundaries)."""
    def w(cell):
        kind = cell[0]
        if kind == "pm":
            v, m, p = cell[1:]
            return len(v) + (len(p) + 2 if m == p else 0.75 * max(len(m), len(p)) + 1)
        if kind == "limit":
            return len(cell[2]) + len(cell[3]) + 5
        if kind == "none":
            return 1
        return len(str(cell[1]))
    head = max((len(x) for x in (col.label or "").split()), default=0)
    unit = len(col.unit) + 2 if col.unit else 0
    return max([head, unit, 3.5] + [w(c) + 1 for c in cells]) + 2.0      # + cell padding


def _head(col):
    unit = (f'<span class="u">[{symbol_html(col.unit)}]</span>' if col.unit
            else '<span class="u">&nbsp;</span>')
    return f"<th scope=\"col\">{symbol_html(col.label)}{unit}</th>"


def _tables(table, caption):
    """The table, split like the LaTeX tables into parts that fit a 1280 px window without scrolling."""
    parts = split_table(table, _html_width, HTML_BUDGET)
    out = []
    for part in parts:
        if len(parts) > 1:
            out.append(f"<h3>{escape(part.title.capitalize())}</h3>")
        out += _table(part, f"{caption} ({part.title})" if part.title else caption)
    return out


def _table(table, caption):
    out = ['<div class="scroll"><table>', f"<caption hidden>{escape(caption)}</caption>",
           "<thead><tr>" + "".join(_head(c) for c in table.columns) + "</tr></thead>", "<tbody>"]
    for r, (row, raw) in enumerate(zip(table.rows, table.raw)):
        cells = []
        for i, (col, cell) in enumerate(zip(table.columns, row)):
            tag = "th scope=\"row\"" if i == 0 else "td"
            mark = escape(table.marks.get((r, col.key), ""))
            cells.append(f"<{tag}>{html_cell(cell, col.key, raw.get(col.key))}{mark}</{tag.split()[0]}>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out += ["</tbody></table></div>"]
    return out


def _lookup(raw, key):
    for part in key.split("."):
        raw = raw.get(part) if isinstance(raw, dict) else None
    return raw


def _kv_table(rows, raw):
    out = ['<div class="scroll"><table class="kv">', "<thead><tr><th scope=\"col\">quantity</th><th scope=\"col\">"
           "value</th><th scope=\"col\">unit</th></tr></thead>", "<tbody>"]
    for col, cell in rows:
        cls = ' class="text"' if cell[0] == "text" else ""
        value = html_cell(cell, col.key, _lookup(raw, col.key))
        if cell[0] == "text":
            value = symbol_html(cell[1])
        out.append(f"<tr><th scope=\"row\">{symbol_html(col.label)}</th><td{cls}>{value}"
                   f"</td><td style=\"text-align:left\">{symbol_html(col.unit)}</td></tr>")
    out.append("</tbody></table></div>")
    return out


def _dl(items):
    return ["<dl>"] + [f"<dt>{escape(k)}</dt><dd>{escape(v)}</dd>" for k, v in items] + ["</dl>"]


def _figure_html(item):
    if hasattr(item, "data"):
        caption, png = item.caption, item.data("png")
    else:
        caption, png = item
    b64 = base64.b64encode(png).decode("ascii")
    return [f'<figure><img alt="{escape(caption)}" src="data:image/png;base64,{b64}">',
            f"<figcaption>{escape(caption)}</figcaption></figure>"]


def render_html(doc, figures=()) -> str:
    """The complete HTML page of ``doc``; ``figures``: FigureItems or (caption, png bytes) pairs."""
    t = document_tables(doc)
    name = doc.get("system", "system")
    prov = doc.get("provenance") or {}
    meta = " · ".join(x for x in (f"archsys {prov.get('package_version', '?')}", intro_line(doc),
                                  f"input {prov['input_file']}" if prov.get("input_file") else "") if x)
    L = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
         '<meta name="viewport" content="width=device-width, initial-scale=1">',
         f"<title>{'UNUSABLE POSTERIOR — ' if not t.usable else ''}{escape(name)} — system architecture</title>", f"<style>{_CSS}</style>", "</head>",
         "<body><main>"]
    if t.status:
        L.append(f'<p class="warn" id="posterior-status">{escape(t.status)}</p>')
    L += ["<header>", f"<h1>{escape(name)}</h1>",
         f'<p class="meta">System architecture · {escape(meta)}</p>', "</header>",
         '<p class="lede">Values are medians with the central 68.3 % interval of the posterior draws, '
         "rounded to two significant figures of the larger error; probabilities are fractions of the draws.</p>"]
    if (doc.get("dynamics") or {}).get("verdict"):
        head, _, rest = doc["dynamics"]["verdict"].partition(" — ")
        L.append(f'<p class="headline"><strong>{escape(head)}</strong> — {escape(rest)}</p>')
    L += ['<section id="verdicts"><h2>Verdicts</h2><ul class="verdicts">']
    L += [f"<li>{symbol_html(v)}</li>" for v in t.verdicts] + ["</ul></section>"]
    L += ['<section id="priors"><h2>Priors</h2><ul class="notes">']
    L += [f"<li>{escape(v)}</li>" for v in t.priors] + ["</ul></section>"]
    if t.star:
        L += ['<section id="star"><h2>Star</h2>'] + _kv_table(t.star, doc.get("star", {})) + ["</section>"]
    L += ['<section id="planets"><h2>Planets</h2>']
    L += _tables(t.planets, f"Planets of {name}")
    if t.notes:
        L += ['<ul class="notes">'] + [f"<li>{symbol_html(n)}</li>" for n in t.notes] + ["</ul>"]
    L.append("</section>")
    if t.pairs is not None:
        L += ['<section id="pairs"><h2>Adjacent pairs</h2>']
        L += _tables(t.pairs, f"Adjacent pairs of {name}")
        L += ['<ul class="notes"><li>Δ: separation in mutual Hill radii (Gladman 1993 criterion 2√3 for '
              "circular orbits); offset: fractional distance from the nearest mean-motion resonance.</li></ul>",
              "</section>"]
    if t.system:
        L += ['<section id="system"><h2>System</h2>'] + _kv_table(t.system, doc) + ["</section>"]
    figures = list(figures or ())
    if figures:
        L += ['<section id="figures"><h2>Figures</h2><div class="figs">']
        for f in figures:
            L += _figure_html(f)
        L += ["</div></section>"]
    items = sampler_items(doc)
    if items:
        L += ['<section id="sampling"><h2>Sampling</h2>'] + _dl(items) + ["</section>"]
    items = provenance_items(doc)
    if items:
        L += ['<section id="provenance"><h2>Provenance</h2>'] + _dl(items) + ["</section>"]
    if doc.get("disclaimer"):
        L.append(f'<p class="note"><strong>Note.</strong> {escape(doc["disclaimer"])}</p>')
    L += ["</main></body>", "</html>"]
    return "\n".join(L) + "\n"


FORMAT = register_format(ReportFormat(
    "html", ".html", lambda doc, ctx: render_html(doc, list(ctx.figures or ())), order=30, aliases=("htm",),
    embeds_figures=True, description="self-contained HTML page with the figures embedded"))
