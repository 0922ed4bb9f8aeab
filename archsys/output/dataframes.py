"""Tables for notebooks: per-planet and per-pair results as pandas DataFrames or astropy Tables.

Numbers come from the report document (the same values every report format
shows), labels and units from the column metadata of the table model
(:func:`archsys.scores.registry.column`).  For every summarised quantity ``key``
the table has three columns: ``key`` (median), ``key_lo`` and ``key_hi`` (the
15.87 / 84.13 percentiles); probabilities are fractions in [0, 1].  An
infinite percentile (e.g. an AMD coefficient) is ``inf`` here.
"""
from __future__ import annotations

import math

import numpy as np

from ..physics.constants import MEARTH_MSUN
from ..scores.registry import column
from .numbers import is_summary, short_name

__all__ = ["planet_table", "pair_table", "posterior_draws", "DRAW_UNITS"]

_SKIP = {"name", "inner", "outer", "not_constrained_by_data"}

#: Posterior draw keys -> (column name, factor from internal units, astropy unit).
DRAW_UNITS = {
    "period": ("period_days", 1.0, "d"), "a": ("a_au", 1.0, "AU"), "ecc": ("ecc", 1.0, ""),
    "omega": ("omega_deg", math.degrees(1.0), "deg"), "msini": ("msini_mearth", 1.0 / MEARTH_MSUN, "earthMass"),
    "mass": ("mass_mearth", 1.0 / MEARTH_MSUN, "earthMass"), "inc": ("inclination_deg", math.degrees(1.0), "deg"),
    "node": ("node_deg", math.degrees(1.0), "deg"), "psi": ("psi_deg", math.degrees(1.0), "deg"),
    "radius": ("radius_rearth", 1.0, "earthRad"), "m_star": ("star_mass_msun", 1.0, "solMass"),
    "r_star": ("star_radius_rsun", 1.0, "solRad"), "rho_star": ("star_density_gcc", 1.0, "g / cm3"),
    "sigma_mutual": ("sigma_mutual_deg", math.degrees(1.0), "deg"),
    "ref_inc": ("reference_inclination_deg", math.degrees(1.0), "deg"),
    "mean_anomaly": ("mean_anomaly_deg", math.degrees(1.0), "deg"),
}


def _doc(result):
    from .formats import document_of
    return document_of(result)


def _num(v):
    return float("inf") if v is None else float(v)


def _records(entries, table):
    """(rows, columns): flat records of document entries, and the Column of each output column."""
    rows, cols = [], {}
    for e in entries:
        row = {}
        for k, v in e.items():
            if k in _SKIP:
                continue
            col = column(k, table)
            if is_summary(v):
                inf = v.get("infinite_fraction")
                med = v["median"]
                row[k] = _num(med) if (med is not None or inf) else float("nan")
                row[k + "_lo"] = float("nan") if v["lo"] is None else float(v["lo"])
                row[k + "_hi"] = (float("inf") if inf else float("nan")) if v["hi"] is None else float(v["hi"])
                for s in ("", "_lo", "_hi"):
                    cols[k + s] = col
            elif isinstance(v, (bool, int, float, str)) or v is None:
                row[k] = v
                cols[k] = col
        rows.append(row)
    return rows, cols


def _frame(index_name, names, rows, cols, kind):
    import pandas as pd
    df = pd.DataFrame(rows, index=pd.Index(names, name=index_name))
    if kind == "pandas":
        return df
    if kind != "astropy":
        raise ValueError(f"kind must be 'pandas' or 'astropy'; got {kind!r}")
    from astropy import units as u
    from astropy.table import Column as AColumn
    from astropy.table import Table
    t = Table()
    t[index_name] = list(names)
    for name in df.columns:
        col = cols.get(name)
        values = df[name].to_numpy()
        unit = u.Unit(col.unit_astropy) if (col is not None and col.unit_astropy and values.dtype.kind == "f") else None
        desc = (col.label if col is not None else name) + ("" if name == (col.key if col else name) else
                                                          (" (15.87 percentile)" if name.endswith("_lo")
                                                           else " (84.13 percentile)"))
        if values.dtype.kind == "O":
            values = np.array(["" if x is None or (isinstance(x, float) and math.isnan(x)) else str(x)
                               for x in values])
        t[name] = AColumn(values, unit=unit, description=desc)
    return t


def planet_table(result, kind="pandas"):
    """Per-planet results of ``result`` (an Analysis or a report document).

    ``kind="pandas"``: a DataFrame indexed by planet name; ``kind="astropy"``: a
    Table with units (``period_days`` in d, ``mass_mearth`` in earthMass, ...).
    """
    doc = _doc(result)
    planets = doc.get("planets", [])
    rows, cols = _records(planets, "planet")
    return _frame("planet", [p["name"] for p in planets], rows, cols, kind)


def pair_table(result, kind="pandas"):
    """Per-pair results (adjacent pairs, indexed "inner–outer"); ``kind`` as in :func:`planet_table`."""
    doc = _doc(result)
    pairs = doc.get("pairs", [])
    sysname = doc.get("system", "")
    rows, cols = _records(pairs, "pair")
    names = [f"{short_name(q['inner'], sysname)}–{short_name(q['outer'], sysname)}" for q in pairs]
    return _frame("pair", names, rows, cols, kind)


def posterior_draws(result):
    """The posterior draws of an Analysis as a DataFrame, one row per draw, in astronomers' units.

    Planet quantities are named ``"<quantity> <planet>"`` (e.g. ``"mass_mearth b"``), system
    quantities by their name alone (``"star_mass_msun"``); see :data:`DRAW_UNITS`.
    """
    import pandas as pd
    post = getattr(result, "posterior", None)
    if post is None:
        raise TypeError("posterior_draws needs an Analysis (archsys.analyze(...)), not a document")
    sysname = post.system.name
    names = [short_name(n, sysname) for n in post.system.planet_names]
    data = {}
    for key, arr in post.draws.items():
        arr = np.asarray(arr, dtype=float)
        cname, factor, _ = DRAW_UNITS.get(key, (key, 1.0, ""))
        if arr.ndim == 2:
            for j, n in enumerate(names):
                data[f"{cname} {n}"] = arr[:, j] * factor
        else:
            data[cname] = arr * factor
    return pd.DataFrame(data)
