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
from dataclasses import dataclass, field

from ..scores.registry import Column, column, score_columns
from ..scores.planet_columns import PLANET_COLUMNS, STAR_COLUMNS
from .latex_escape import escape
from .numbers import fmt_percent, format_value, is_summary, short_name
from .wording import CONSTRAINT_MARK, DATA_PRIOR_MARKS, WITHHELD_NOTE, prior_lines, status_line

__all__ = ["META_KEYS", "MARK", "MARK_NOTE", "MARKS", "MARK_NOTES", "LIMIT_SIG", "NAME_COLUMN",
           "PAIR_COLUMN", "Table", "Tables", "column_of", "format_cell", "basis_notes", "limit_cell",
           "estimate_marks", "document_tables", "verdict_lines", "column_group", "split_table"]

#: Document keys that are not quantities (rendered in their own sections).
META_KEYS = {"schema_version", "system", "star", "planets", "pairs", "sampler", "disclaimer",
             "provenance", "verdicts", "structured_verdicts", "posterior_usability", "data_or_prior"}
_PLANET_SKIP = {"name", "not_constrained_by_data", "ecc_limit", "estimated", "data_or_prior"}
_PAIR_SKIP = {"inner", "outer"}
MARK = "†"
MARK_NOTE = "† not constrained by the data: the value is (nearly) set by the prior."
#: One mark per kind of estimate (the document's structured ``estimated`` codes), the same in
#: every table of every format and in the figures' legends.
MARKS = {"prior_dominated": "†", "mass_radius_relation": "‡", "prior_inclination": "§"}
MARK_NOTES = {
    "prior_dominated": MARK_NOTE + " An unconstrained ω is not shown.",
    "mass_radius_relation": "‡ estimate from the mass–radius relation (no mass data).",
    "prior_inclination": "§ rests on an inclination with no orientation data of the planet's own "
                         "(prior or population model).",
}
#: Number of significant figures of an upper limit (common practice).
LIMIT_SIG = 2
NAME_COLUMN = Column("name", "planet", "Planet", fmt="text", table="planet")
PAIR_COLUMN = Column("pair", "pair", "Pair", fmt="text", table="pair")


@dataclass
class Table:
    columns: list
    rows: list = field(default_factory=list)     # each row: list of cells (see format_value)
    raw: list = field(default_factory=list)      # each row: {key: document value}
    marks: dict = field(default_factory=dict)    # (row index, key) -> mark, e.g. "†"
    title: str = ""                              # the part of a split table ("orbits", "predictions")

    def part(self, columns, title=""):
        """The same rows with only ``columns`` (the first, naming column is always kept)."""
        keep = [self.columns[0]] + [c for c in columns if c is not self.columns[0]]
        idx = [self.columns.index(c) for c in keep]
        keys = {c.key for c in keep}
        return Table(keep, [[row[i] for i in idx] for row in self.rows], list(self.raw),
                     {k: v for k, v in self.marks.items() if k[1] in keys}, title)


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


def limit_cell(limit):
    """The cell of an upper limit ``{"upper", "probability"}``: ``("limit", "<", "0.060", "95 %")``."""
    from .numbers import decimals_for, _fmt
    v = float(limit["upper"])
    return ("limit", "<", _fmt(v, decimals_for(v, LIMIT_SIG)), fmt_percent(limit.get("probability", 0.95)))


def estimate_marks(entry):
    """{key: mark} of a planet's document entry (from its structured ``estimated`` codes)."""
    out = {}
    for key in entry.get("not_constrained_by_data") or []:
        out[key] = MARKS["prior_dominated"]
    for key, code in (entry.get("estimated") or {}).items():
        out[key] = MARKS.get(code, MARK)
    return out


def _planet_table(doc):
    sysname = doc.get("system", "")
    planets = doc.get("planets", [])
    known = list(PLANET_COLUMNS) + score_columns("planet")
    entries = [dict(p) for p in planets]
    for e in entries:                 # a circular orbit assumed, not sampled, is shown as such
        if e.get("ecc") is None and e.get("ecc_origin") == "assumed":
            e["ecc"] = "0 (assumed)"
    cols = _columns(entries, known, "planet", _PLANET_SKIP)
    tab = Table([NAME_COLUMN] + cols)
    for i, (p, e) in enumerate(zip(planets, entries)):
        row = [("text", short_name(p.get("name", "?"), sysname))]
        estimated = p.get("estimated") or {}
        for c in cols:
            if c.key == "ecc" and p.get("ecc_limit"):
                row.append(limit_cell(p["ecc_limit"]))
            elif c.key == "omega_deg" and estimated.get("omega_deg") == "prior_dominated":
                row.append(("none",))           # an unconstrained omega is the prior's: not shown
            else:
                row.append(_cell(e.get(c.key), c))
        tab.rows.append(row)
        tab.raw.append(e)
        for key, mark in estimate_marks(p).items():
            tab.marks[(i, key)] = mark
        for key, m in (p.get("data_or_prior") or {}).items():
            mark = DATA_PRIOR_MARKS.get((m or {}).get("source"), ("",))[0]
            if mark and (i, key) not in tab.marks:
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
    notes += [MARK_NOTES[code] for code, mark in MARKS.items() if mark in used]
    notes += [note for mark, note in DATA_PRIOR_MARKS.values() if mark in used and mark not in MARKS.values()]
    if CONSTRAINT_MARK[0] in used:
        notes.append(CONSTRAINT_MARK[1])
    if any(p.get("ecc_limit") for p in doc.get("planets", [])):
        notes.append("e < x (95 %): the 95th percentile of the eccentricity posterior, where the input gave "
                     "only an upper limit or the data do not constrain e.")
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
    t.notes = [n for n in t.notes if not n.startswith(("†", "‡", "§", "¶", "‖"))] + [WITHHELD_NOTE]


def verdict_lines(doc):
    """The document's verdict sentences (worded by :mod:`archsys.output.wording` when it was built)."""
    out = [str(v) for v in doc.get("verdicts", []) or []]
    if not doc.get("pairs"):
        out.insert(0, "Single planet: no pair scores.")
    return out


# --- splitting wide tables (LaTeX at \textwidth, HTML at 1280 px) ------------------------------
_PLANET_GROUPS = {"mass_mearth": "masses and radii", "msini_mearth": "masses and radii",
                  "radius_rearth": "masses and radii"}


def column_group(col):
    """The part of a split table a column belongs to: planet columns "orbits", "masses and radii" or
    "predictions"; pair columns "dynamics" or "predictions" (a score's ``table_group``)."""
    from ..scores.registry import registered_scores
    for s in registered_scores():
        if any(c.key == col.key and c.table == col.table for c in s.columns):
            group = getattr(s, "table_group", "dynamics")
            if col.table == "planet" and group == "dynamics":
                return "orbits"
            return group
    if col.table == "planet":
        return _PLANET_GROUPS.get(col.key, "orbits")
    return "dynamics"


def split_table(table, width, budget):
    """Parts of ``table`` whose estimated width fits ``budget``: the whole table if it fits, else one
    part per column group (:func:`column_group`), and a group still too wide in consecutive runs of
    columns.  ``width(col, cells)`` estimates one column's width (header and cells) in the budget's
    units.  Every part keeps the naming first column."""
    cols = table.columns
    w = {id(c): width(c, [row[i] for row in table.rows]) for i, c in enumerate(cols)}
    first = w[id(cols[0])]

    def fits(cs):
        return first + sum(w[id(c)] for c in cs) <= budget

    rest = cols[1:]
    if fits(rest):
        return [table]
    groups = {}
    for c in rest:
        groups.setdefault(column_group(c), []).append(c)
    parts = []
    for name, cs in groups.items():
        run = []
        for c in cs:
            if run and not fits(run + [c]):
                parts.append((name, run))
                run = []
            run.append(c)
        if run:
            parts.append((name, run))
    counts = {}
    for name, _ in parts:
        counts[name] = counts.get(name, 0) + 1
    seen, out = {}, []
    for name, cs in parts:
        seen[name] = seen.get(name, 0) + 1
        title = name if counts[name] == 1 else f"{name}, {seen[name]} of {counts[name]}"
        out.append(table.part(cs, title))
    return out
