"""One system's catalogue rows -> a mapping in the system-file shape (for build_system).

Cells are converted field by field with the column map (:mod:`.columns`); every
row-level problem (not a number, an unknown limit flag, rows that disagree on
the star, a duplicated planet) becomes a reject line naming row, field and
column instead of stopping the survey.
"""
from __future__ import annotations

import math

from .where import as_bool, evaluate, parse_number

__all__ = ["system_mapping"]


def _to_float(x):
    """A cell as a number in plain decimal notation (see where.parse_number), or None."""
    return parse_number(x)


# --------------------------------------------------------------------------
# rows -> system mapping in the system-file shape
# --------------------------------------------------------------------------

def _problem(planet, row, fieldname, column, reason):
    return {"planet": planet, "row": row, "field": fieldname, "column": column, "reason": reason}


def _unit_for(f, cat_units):
    if f.unit:
        return f.unit
    col = f.value or f.upper or f.lower
    return cat_units.get(col)


def _quantity(f, cells, rownum, planet, cat_units, problems):
    """One field of one row as a system-file quantity (dict), None when absent."""
    num = {}
    for key, col in f.columns():
        if key == "limit":
            continue
        x = cells.get(col)
        if x is None:
            continue
        v = _to_float(x)
        if v is None:
            problems.append(_problem(planet, rownum, f.label, col, f"not a number: {x!r:.40}"))
            return None
        if math.isnan(v):
            continue
        num[key] = v
    flag = None
    if f.limit:
        raw = cells.get(f.limit)
        if raw is not None:
            code = str(raw).strip().casefold()
            if code in f.upper_codes:
                flag = "upper"
            elif code in f.lower_codes:
                flag = "lower"
            else:
                problems.append(_problem(planet, rownum, f.label, f.limit,
                                         f"limit flag {raw!r:.20} not understood (expected one of "
                                         f"{', '.join(f.upper_codes + f.lower_codes)} or empty)"))
                return None
    if f.minus_sign == "negative" and "minus" in num:
        num["minus"] = abs(num["minus"])
    if flag:
        if "value" not in num:
            problems.append(_problem(planet, rownum, f.label, f.limit,
                                     f"limit flag '{flag}' but no value in column '{f.value}'"))
            return None
        q = {flag: num["value"]}
    else:
        q = {k: num[k] for k in ("value", "err", "minus", "plus", "upper", "lower") if k in num}
    if not q:
        return None
    if (f.zero_without_errors == "unmeasured" and q.get("value") == 0.0
            and not any(q.get(k, 0.0) > 0 for k in ("err", "minus", "plus"))):
        return None                               # "fixed to 0" in the source: not measured
    if f.cl is not None and ("upper" in q or "lower" in q):
        q["cl"] = f.cl
    unit = _unit_for(f, cat_units)
    if unit:
        q["unit"] = unit
    return q


def _transiting(f, cells, rownum, planet, problems):
    raw = cells.get(f.value)
    if raw is None:
        return None
    if isinstance(raw, bool):
        return raw
    v = _to_float(raw)
    s = str(raw).strip().casefold() if v is None else ("1" if v == 1 else "0" if v == 0 else str(v))
    if s in f.true_codes:
        return True
    if s in f.false_codes:
        return False
    b = as_bool(raw)
    if b is not None:
        return b
    problems.append(_problem(planet, rownum, "transiting", f.value, f"not a true/false flag: {raw!r:.20}"))
    return None


def system_mapping(group, cmap, cat_units=None):
    """The system-file mapping of one system's rows.

    Returns
    -------
    data : dict
        ``{"name", "star", "planet": [...]}`` ready for
        :func:`archsys.model.reader.build_system`.
    problems : list of dict
        Row-level problems (planet, row, field, column, reason); non-empty
        means the system is rejected.
    rows_of : dict
        planet name -> row number, for locating build_system's messages.
    """
    cat_units = cat_units or {}
    problems = []
    star = {}
    star_src = {}
    top = {}
    rows = group.rows               # unpacked once (SystemRows keeps its rows packed)
    first_row = rows[0][0]
    for f in cmap.fields:
        if f.scope not in ("star", "system"):
            continue
        seen = None
        for rownum, cells in rows:
            q = _quantity(f, cells, rownum, "", cat_units, problems)
            if q is None:
                continue
            if seen is None:
                seen = (q, rownum)
            elif q != seen[0]:
                what = "the star" if f.scope == "star" else f"the system's {f.name}"
                problems.append(_problem("", rownum, f.label, f.value,
                                         f"rows disagree on {what}: {_fmt(seen[0])} (row {seen[1]}) vs "
                                         f"{_fmt(q)} (row {rownum}); are these planets of different stars?"))
                break
        if seen is not None and f.scope == "system":
            top[f.name] = seen[0]
        elif seen is not None:
            star[f.name] = seen[0]
            star_src[f.name] = seen[1]
    planets, rows_of, seen_names = [], {}, {}
    for rownum, cells in rows:
        name = cells.get(cmap.planet) if cmap.planet else None
        name = str(name) if name is not None else f"{group.system} (row {rownum})"
        if name in seen_names:
            problems.append(_problem(name, rownum, "planet", cmap.planet or "",
                                     f"duplicated row: planet '{name}' already given in row {seen_names[name]}"))
            continue
        seen_names[name] = rownum
        rows_of[name] = rownum
        pl = {"name": name}
        for f in cmap.fields:
            if f.scope != "planet":
                continue
            if f.name == "transiting":
                t = _transiting(f, cells, rownum, name, problems)
                if t is not None:
                    pl["transiting"] = t
                continue
            q = _quantity(f, cells, rownum, name, cat_units, problems)
            if q is None:
                continue
            key = f.name
            if f.name == "mass" and f.msini_when:
                row_rows = [cells]
                sysvars = {"n_planets": group.n_planets, "system": group.system}
                if any(evaluate(e, row_rows, 0, sysvars) for e in f.msini_when):
                    key = "msini"
            if key in pl:
                problems.append(_problem(name, rownum, key, f.value,
                                         f"field '{key}' given twice (check msini_when and the mapping)"))
                continue
            pl[key] = q
        planets.append(pl)
    data = {"name": group.system, "star": star, "planet": planets, **top}
    rows_of[""] = first_row
    return data, problems, rows_of


def _fmt(q):
    return ", ".join(f"{k}={v}" for k, v in q.items() if k != "unit")
