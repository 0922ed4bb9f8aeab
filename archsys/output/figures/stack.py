"""Systems for a stacked architecture figure, from any mix of sources, selected and sorted.

Sources:

* a system file (``.toml``): analysed with the given options;
* saved chains (``.npz``, from ``archsys report --out``): the report document inside;
* a report document (``.json``, one document or a list);
* a survey folder (``archsys survey --out``): every analysed system, rebuilt from
  ``systems.csv``, ``planets.csv`` and ``pairs.csv``, selected with the survey's
  ``--where`` language (:mod:`archsys.survey.catalog`) on planet rows that also
  carry their system's columns.

Sort keys (``-KEY`` for descending): ``name``, ``n_planets``, ``star_mass``,
``a_inner``, ``a_outer``, ``period_inner``, ``period_outer``, ``total_mass``,
``min_hill_separation``, ``gap_complexity``, ``hill_stable_probability``, or
any numeric column of a survey's ``systems.csv``.
"""
from __future__ import annotations

import math
import pathlib

from ...errors import InputError

__all__ = ["collect_documents", "sort_documents", "SORT_KEYS", "write_stacked_figure"]

SORT_KEYS = ("name", "n_planets", "star_mass", "a_inner", "a_outer", "period_inner", "period_outer",
             "total_mass", "min_hill_separation", "gap_complexity", "hill_stable_probability")


def _med(s):
    if isinstance(s, dict):
        s = s.get("median")
    try:
        v = float(s)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _num(x):
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _survey_documents(folder, where=()):
    """Report-like documents of every analysed system of a survey folder that passes ``where``."""
    from ...survey.catalog import group_systems, parse_where, read_catalog, select
    folder = pathlib.Path(folder)
    for name in ("systems.csv", "planets.csv", "pairs.csv"):
        if not (folder / name).is_file():
            raise InputError(f"{folder}: not a survey folder (no {name}; run `archsys survey --out {folder}`)")
    systems = read_catalog(folder / "systems.csv")
    planets = read_catalog(folder / "planets.csv")
    pairs = read_catalog(folder / "pairs.csv")
    for tab, need in ((systems, ("system",)), (planets, ("system", "planet")), (pairs, ("system", "inner", "outer"))):
        missing = [c for c in need if c not in tab.columns]
        if missing:
            raise InputError(f"{folder / tab.name}: not a survey table (no column '{missing[0]}'); "
                             f"rerun `archsys survey --out {folder}`")
    sysrow = {str(r["system"]): r for r in map(systems.row, range(systems.n_rows))}
    extra = [c for c in systems.columns if c not in planets.columns]
    planet_systems = planets.column("system")
    planets.add_columns({c: [sysrow.get(str(s), {}).get(c) for s in planet_systems]   # each planet row
                         for c in extra})                                # carries its system's columns for --where
    names = {c: ("col", c) for c in planets.columns}
    names.update({"n_planets": ("sys", "n_planets"), "system": ("sys", "system")})
    nodes = [parse_where(w, names) for w in where]
    pair_rows = {}
    for i in range(pairs.n_rows):
        r = pairs.row(i)
        pair_rows.setdefault(str(r["system"]), []).append(r)
    groups, _ = group_systems(planets, "system")
    docs = []
    for g in groups:
        if nodes and not select(g, nodes):
            continue
        srow = sysrow.get(g.system, {})
        pls = []
        for _, r in g.rows:
            pl = {"name": str(r["planet"])}
            for key in ("a_au", "period_days", "ecc", "mass_mearth", "msini_mearth"):
                v = _num(r.get(f"{key}_median"))
                if v is not None:
                    pl[key] = {"median": v, "lo": _num(r.get(f"{key}_lo")), "hi": _num(r.get(f"{key}_hi"))}
            pls.append(pl)
        pls.sort(key=lambda pl: _med(pl.get("period_days")) or _med(pl.get("a_au")) or 0.0)
        prs = [{"inner": str(r["inner"]), "outer": str(r["outer"]),
                "hill_stable_probability": _num(r.get("hill_stable_probability")),
                "hill_separation": {"median": _num(r.get("hill_separation_median"))}}
               for r in pair_rows.get(g.system, [])]
        doc = {"system": g.system, "star": {"mass_msun": {"median": _num(srow.get("star_mass_msun_median"))}},
               "planets": pls, "pairs": prs,
               "_columns": {k: _num(v) for k, v in srow.items()}}
        gc = _num(srow.get("gap_complexity_median"))
        if gc is not None:
            doc["gap_complexity"] = {"median": gc}
        docs.append(doc)
    return docs


def collect_documents(sources, options=None, where=()):
    """Report documents for the stacked figure from system files, chains, JSON documents or survey folders.

    ``options``: :class:`archsys.pipeline.AnalysisOptions` for system files.
    ``where``: selection expressions, applied to survey folders.
    """
    docs = []
    files = []
    for src in sources:
        path = pathlib.Path(src)
        if path.is_dir():
            docs += _survey_documents(path, where)
        elif path.suffix.lower() == ".npz":
            from ..chains import load_posterior
            _, meta = load_posterior(path)
            doc = meta.get("document") or {}
            if not doc.get("planets"):
                raise InputError("chains file has no report document", source=str(path))
            docs.append(doc)
        elif path.suffix.lower() == ".json":
            from ...model.inputfile import read_input_bytes
            from ...limits import parse_json
            from ..doc_check import check_document
            try:
                text = read_input_bytes(path, "report document").decode("utf-8")
            except UnicodeDecodeError as exc:
                raise InputError(f"{path}: not a JSON report document ({exc})") from None
            data = parse_json(text, str(path), "report document")
            for d in (data if isinstance(data, list) else [data]):
                docs.append(check_document(d, str(path)))
        else:
            files.append(path)
    if files:
        from ... import read_system
        from ...pipeline import analyze
        systems = [read_system(f) for f in files]        # validate every file before any analysis
        docs += [analyze(s, options).document for s in systems]
    if where and not any(pathlib.Path(s).is_dir() for s in sources):
        raise InputError("--where selects systems of a survey folder; no survey folder was given")
    return docs


def _sort_value(doc, key):
    pls = doc.get("planets", [])
    a = [v for v in (_med(p.get("a_au")) for p in pls) if v is not None]
    P = [v for v in (_med(p.get("period_days")) for p in pls) if v is not None]
    m = [v for v in (_med(p.get("mass_mearth")) or _med(p.get("msini_mearth")) for p in pls) if v is not None]
    hs = [v for v in (_med(q.get("hill_separation")) for q in doc.get("pairs", []) or []) if v is not None]
    hp = doc.get("all_pairs_hill_stable_probability")
    if hp is None:
        probs = [q.get("hill_stable_probability") for q in doc.get("pairs", []) or []]
        hp = min([x for x in probs if x is not None], default=None)
    vals = {"name": str(doc.get("system", "")), "n_planets": len(pls),
            "star_mass": _med((doc.get("star") or {}).get("mass_msun")),
            "a_inner": min(a, default=None), "a_outer": max(a, default=None),
            "period_inner": min(P, default=None), "period_outer": max(P, default=None),
            "total_mass": sum(m) if m else None, "min_hill_separation": min(hs, default=None),
            "gap_complexity": _med(doc.get("gap_complexity")), "hill_stable_probability": _num(hp)}
    if key in vals:
        return vals[key]
    cols = doc.get("_columns") or {}
    if key in cols:
        return cols[key]
    raise InputError(f"--sort-by: unknown key {key!r}; use one of {', '.join(SORT_KEYS)} "
                     "(or a numeric column of a survey's systems.csv)", field="sort-by")


def sort_documents(docs, key=None):
    """Documents sorted by ``key`` (``-key``: descending); systems without a value go last."""
    if not key:
        return list(docs)
    desc = key.startswith("-")
    key = key.lstrip("-+")
    vals = [_sort_value(d, key) for d in docs]
    have = [(v, i) for i, v in enumerate(vals) if v is not None]
    none = [i for i, v in enumerate(vals) if v is None]
    have.sort(key=lambda t: t[0], reverse=desc)
    return [docs[i] for _, i in have] + [docs[i] for i in none]


def write_stacked_figure(docs, fig_dir, stem="architecture_stack", preset=None, limit=None):
    """Draw the stacked architecture figure (pages split to fit the preset's page) and write PDF and PNG.

    Returns the written paths.
    """
    from . import architecture_figure
    from .common import FigureItem
    from ..files import atomic_write
    from ..file_names import safe_name
    from ..style import get_preset
    if limit is not None:
        docs = docs[:limit]
    if not docs:
        raise InputError("stacked figure: no system to draw (check --where and the inputs)")
    p = get_preset(preset)
    s = p.font_pt / 8.0
    n = len(docs)
    row = (0.5 if n <= 3 else 0.42 if n <= 12 else 0.32) * s
    overhead = 1.4 * s                               # axis labels and a two-row legend
    per_page = max(1, int((p.page_height_in - overhead) / row))
    if n > per_page:                                 # several pages: compact rows
        row = 0.32 * s
        per_page = max(1, int((p.page_height_in - overhead) / row))
    pages = [docs[i:i + per_page] for i in range(0, len(docs), per_page)]
    items = []
    for k, page in enumerate(pages):
        name = safe_name(stem) if len(pages) == 1 else f"{safe_name(stem)}_{k + 1}"
        items.append(FigureItem(name, architecture_figure(page, preset=p, row_height=row), "", p))
    blobs = {}
    for it in items:
        for fmt in ("pdf", "png"):
            blobs[f"{it.name}.{fmt}"] = it.data(fmt)
    out = pathlib.Path(fig_dir)
    if out.exists() and not out.is_dir():
        raise InputError(f"figure folder {str(out)!r} exists and is not a folder")
    return [atomic_write(out / n, data, mode="wb") for n, data in blobs.items()]
