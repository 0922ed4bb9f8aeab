"""The table model every report format reads: one model of the document, one number formatter.

:func:`document_tables` turns a report document into format-neutral tables
(planets, adjacent pairs, star and system quantities), verdict sentences, the
priors that ran and notes.  Labels, LaTeX labels, units and number formats come
from the column metadata of the score registry and the planet/star columns
(:func:`archsys.scores.registry.column`) — never from the JSON keys.  A key
that no column describes (a document from a newer archsys) is still shown,
under its raw key, so nothing is dropped.  Cells are built by
:func:`archsys.output.numbers.format_value`, so every renderer shows the same
rounded numbers and percentages.
"""
from __future__ import annotations

import dataclasses
import json
from dataclasses import dataclass, field

from ..scores.registry import Column, column, score_columns
from ..scores.planet_columns import PLANET_COLUMNS, STAR_COLUMNS
from .numbers import fmt_plain, format_value, is_summary, short_name
from .latex_escape import escape
from .wording import CONSTRAINT_MARK, DATA_PRIOR_MARKS, WITHHELD_NOTE, prior_lines, status_line

__all__ = ["Table", "Tables", "document_tables", "format_cell", "verdict_lines", "sampler_items",
           "provenance_items", "intro_line", "basis_notes", "column_of", "META_KEYS", "MARK", "MARK_NOTE"]

#: Document keys that are not quantities (rendered in their own sections).
META_KEYS = {"schema_version", "system", "star", "planets", "pairs", "sampler", "disclaimer",
             "provenance", "verdicts", "structured_verdicts", "posterior_usability", "data_or_prior"}
_PLANET_SKIP = {"name", "not_constrained_by_data", "data_or_prior"}
_PAIR_SKIP = {"inner", "outer"}
MARK = "†"
MARK_NOTE = "† not constrained by the data: the value is (nearly) set by the prior."
NAME_COLUMN = Column("name", "planet", "Planet", fmt="text", table="planet")
PAIR_COLUMN = Column("pair", "pair", "Pair", fmt="text", table="pair")


@dataclass
class Table:
    columns: list
    rows: list = field(default_factory=list)     # each row: list of cells (see format_value)
    raw: list = field(default_factory=list)      # each row: {key: document value}
    marks: dict = field(default_factory=dict)    # (row index, key) -> mark, e.g. "†"


@dataclass
class Tables:
    planets: Table
    pairs: Table | None
    star: list          # [(Column, cell)]
    system: list        # [(Column, cell)]
    notes: list         # plain-text notes on the basis of values
    verdicts: list = field(default_factory=list)
    priors: list = field(default_factory=list)
    status: str | None = None      # the line a report opens with when its posterior is not usable/clean
    usable: bool = True            # False: no intervals, no verdicts (README, "Usable posteriors")


def column_of(key, table):
    """The registered column of ``key`` in ``table``, or a column labelled by the raw key itself."""
    col = column(key, table)
    if col is None:
        col = Column(key, key, r"\texttt{" + escape(key) + "}", fmt="summary", table=table)
    return col


def format_cell(value, key="", scale=None, col=None):
    """The cell of ``value`` under the column of ``key`` (its number format and scale)."""
    col = col or column(key) or Column(key or "?", key or "?", key or "?")
    return format_value(value, col.fmt, col.scale if scale is None else scale)


def _cell(value, col, sysname=""):
    if col.fmt == "names" and isinstance(value, list):
        value = [[short_name(n, sysname) for n in x] if isinstance(x, list) else short_name(x, sysname)
                 for x in value]
    return format_value(value, col.fmt, col.scale)


def _columns(entries, known, table, skip):
    present, order = set(), []
    for e in entries:
        for k, v in e.items():
            if k not in skip and v is not None and k not in present:
                present.add(k)
                order.append(k)
    cols = [c for c in known if c.key in present and c.show]
    known_keys = {c.key for c in known}
    cols += [column_of(k, table) for k in order if k not in known_keys]
    return cols


def _flatten(block, table, sysname, prefix=""):
    """[(Column, cell)] of a mapping of quantities; nested blocks become dotted keys."""
    rows = []
    for k, v in block.items():
        path = f"{prefix}{k}"
        if v is None:
            continue
        if isinstance(v, dict) and not is_summary(v):
            rows += _flatten(v, table, sysname, prefix=path + ".")
            continue
        col = column_of(path, table)
        if col.show:
            rows.append((col, _cell(v, col, sysname)))
    return rows


def basis_notes(doc):
    """Plain sentences on how masses, eccentricities and inclinations were obtained."""
    sysname = doc.get("system", "")
    groups = {}
    for p in doc.get("planets", []):
        s = short_name(p.get("name", "?"), sysname)
        for key, what in (("mass_basis", "mass"), ("ecc_basis", "e"), ("inclination_basis", "i")):
            basis = p.get(key)
            if not basis or (key == "mass_basis" and basis == "true"):
                continue
            groups.setdefault((what, basis), []).append(s)
    notes = []
    rank = {"mass": 0, "e": 1, "i": 2}
    for (what, basis), names in sorted(groups.items(), key=lambda kv: rank[kv[0][0]]):
        noun = {"mass": "Mass", "e": "Eccentricity", "i": "Sky inclination"}[what]
        notes.append(f"{noun} of {', '.join(names)}: {basis}.")
    return notes


def _planet_table(doc):
    sysname = doc.get("system", "")
    planets = doc.get("planets", [])
    known = list(PLANET_COLUMNS) + score_columns("planet")
    entries = [dict(p) for p in planets]
    for e in entries:                 # a circular orbit assumed, not sampled, is shown as such
        if e.get("ecc") is None and "assumed circular" in str(e.get("ecc_basis", "")):
            e["ecc"] = "0 (assumed)"
    cols = _columns(entries, known, "planet", _PLANET_SKIP)
    tab = Table([NAME_COLUMN] + cols)
    for i, (p, e) in enumerate(zip(planets, entries)):
        tab.rows.append([("text", short_name(p.get("name", "?"), sysname))] + [_cell(e.get(c.key), c) for c in cols])
        tab.raw.append(e)
        for key in p.get("not_constrained_by_data") or []:
            tab.marks[(i, key)] = MARK
        for key, m in (p.get("data_or_prior") or {}).items():
            mark = DATA_PRIOR_MARKS.get((m or {}).get("source"), ("",))[0]
            if mark:
                tab.marks[(i, key)] = mark
    return tab


def _pair_table(doc):
    sysname = doc.get("system", "")
    pairs = doc.get("pairs") or []
    if not pairs:
        return None
    cols = _columns(pairs, score_columns("pair"), "pair", _PAIR_SKIP)
    tab = Table([PAIR_COLUMN] + cols)
    for q in pairs:
        label = f"{short_name(q.get('inner', '?'), sysname)}–{short_name(q.get('outer', '?'), sysname)}"
        tab.rows.append([("text", label)] + [_cell(q.get(c.key), c) for c in cols])
        tab.raw.append(q)
    return tab


def document_tables(doc) -> Tables:
    """Format-neutral tables, verdicts and notes of a report document (see module docstring)."""
    sysname = doc.get("system", "")
    ptab = _planet_table(doc)
    star_known = {c.key: c for c in STAR_COLUMNS}
    star = [(star_known.get(k) or column_of(k, "star"), _cell(v, star_known.get(k) or column_of(k, "star")))
            for k, v in (doc.get("star") or {}).items() if v is not None]
    rest = {k: v for k, v in doc.items() if k not in META_KEYS}
    order = [c.key for c in score_columns("system") if "." not in c.key]
    ordered = {k: rest.pop(k) for k in order if k in rest}
    ordered.update(rest)
    system = _flatten(ordered, "system", sysname)
    pair_tab = _pair_table(doc)
    notes = basis_notes(doc)
    used = set(ptab.marks.values())
    dp = doc.get("data_or_prior") or {}
    imposed = _imposed(doc)
    for i, (col, cell) in enumerate(system):         # marks on system quantities: data or prior, imposed
        mark = DATA_PRIOR_MARKS.get((dp.get(col.key) or {}).get("source"), ("",))[0]
        if imposed and "stable" in col.key and "probability" in col.key:
            mark += CONSTRAINT_MARK[0]
        if mark:
            system[i] = (dataclasses.replace(col, label=col.label + " " + mark), cell)
            used.update(mark)
    if imposed and pair_tab is not None:
        for r in range(len(pair_tab.rows)):
            for col in pair_tab.columns:
                if "stable" in col.key and "probability" in col.key:
                    pair_tab.marks[(r, col.key)] = CONSTRAINT_MARK[0]
                    used.add(CONSTRAINT_MARK[0])
    if MARK in used:
        notes.append(MARK_NOTE)
    notes += [note for mark, note in DATA_PRIOR_MARKS.values() if mark in used and mark != MARK]
    if CONSTRAINT_MARK[0] in used:
        notes.append(CONSTRAINT_MARK[1])
    tabs = Tables(ptab, pair_tab, star, system, notes, verdict_lines(doc), prior_lines(doc),
                  status=status_line(doc), usable=(doc.get("posterior_usability") or {}).get("usable", True))
    if not tabs.usable:
        _withhold(tabs)
    return tabs


def _imposed(doc):
    return bool(((doc.get("provenance") or {}).get("options") or {}).get("require_stable"))


_NUMERIC = ("pm", "percent", "number", "inf")


def _withhold(t):
    """An unusable posterior: every number drawn from it becomes "—" (no interval it cannot support)."""
    for tab in (t.planets, t.pairs):
        if tab is None:
            continue
        tab.rows = [[("none",) if c[0] in _NUMERIC else c for c in row] for row in tab.rows]
        tab.marks = {}
    t.star = [(col, ("none",) if c[0] in _NUMERIC else c) for col, c in t.star]
    t.system = [(col, ("none",) if c[0] in _NUMERIC else c) for col, c in t.system]
    t.notes = [n for n in t.notes if not n.startswith(("†", "‡", "§"))] + [WITHHELD_NOTE]


def verdict_lines(doc):
    """The document's verdict sentences (worded by :mod:`archsys.output.wording` when it was built)."""
    out = [str(v) for v in doc.get("verdicts", []) or []]
    if not doc.get("pairs"):
        out.insert(0, "Single planet: no pair scores.")
    return out


_META_LABELS = {"input_file": "input file", "input_sha256": "input SHA-256", "package_version": "archsys version",
                "method": "method", "why": "why this method", "draws": "draws", "seed": "seed",
                "n_eff": "effective samples", "min_n_eff": "smallest effective sample size",
                "autocorrelation_time": "autocorrelation time", "tau_max": "largest autocorrelation time",
                "acceptance": "acceptance fraction", "walkers": "walkers", "steps": "steps",
                "converged": "converged", "orientation_draws": "orientation draws",
                "orientation_pilot": "orientation pilot", "importance": "importance sampling",
                "options": "options", "versions": "versions"}


def _meta_label(key):
    return _META_LABELS.get(key, key)


def sampler_items(doc):
    """[(label, text)] of the sampler block; long mappings are summarised."""
    out = []
    for k, v in (doc.get("sampler") or {}).items():
        if isinstance(v, dict):
            nums = [x for x in v.values() if isinstance(x, (int, float)) and not isinstance(x, bool)]
            if len(v) > 6 and nums:
                text = f"{len(v)} parameters, range {fmt_plain(min(nums))} – {fmt_plain(max(nums))}"
            else:
                text = ", ".join(f"{a}={fmt_plain(b) if isinstance(b, float) else b}" for a, b in v.items())
        elif isinstance(v, float):
            text = fmt_plain(v, 6)
        elif isinstance(v, (list, tuple)):
            text = ", ".join(map(str, v))
        else:
            text = str(v)
        out.append((_meta_label(k), text))
    return out


def provenance_items(doc):
    """[(label, text)] of the provenance block for the human-readable formats (priors: see prior_lines)."""
    prov = doc.get("provenance") or {}
    out = []
    for k in ("input_file", "input_sha256", "seed", "draws", "package_version"):
        if k in prov:
            out.append((_meta_label(k), str(prov[k])))
    opts = prov.get("options") or {}
    if opts:
        out.append(("options", ", ".join(f"{a}={b}" for a, b in opts.items())))
    vers = prov.get("versions") or {}
    if vers:
        out.append(("versions", ", ".join(f"{a} {b}" for a, b in vers.items())))
    for k, v in prov.items():
        if k not in {"input_file", "input_sha256", "seed", "draws", "package_version", "options",
                     "priors", "versions"}:
            out.append((_meta_label(k), json.dumps(v, default=str) if isinstance(v, (dict, list)) else str(v)))
    return out


def intro_line(doc):
    """'4000 posterior draws (direct Monte Carlo), seed 0': how the numbers were made."""
    prov = doc.get("provenance") or {}
    smp = doc.get("sampler") or {}
    imp = smp.get("importance") or {}
    bits = []
    if "draws" in prov and imp.get("proposals"):
        ess = float(imp.get("effective_sample_size") or 0)
        bits.append(f"{prov['draws']} draws resampled from {imp['proposals']} weighted proposals "
                    f"(effective sample size {ess:.0f})" if ess >= 10 else
                    f"{prov['draws']} draws resampled from {imp['proposals']} weighted proposals "
                    f"(effective sample size {ess:.2g})")
    elif "draws" in prov:
        bits.append(f"{prov['draws']} posterior draws")
    if smp.get("method"):
        bits.append(f"({smp['method']})")
    text = " ".join(bits)
    if "seed" in prov:
        text += f", seed {prov['seed']}"
    return text
