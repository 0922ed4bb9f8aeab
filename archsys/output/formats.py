"""Report formats: one table model of the document, rendered as Markdown, HTML or LaTeX.

:func:`document_tables` turns the report document into format-neutral tables
(planets, adjacent pairs, system quantities) whose cells are already rounded
by their uncertainty (:func:`archsys.output.numbers.round_uncertain`).  Keys it
does not know are shown too, labelled from the key and its unit suffix
(``_deg``, ``_au``, ``_days``, ``_mearth``, ``_probability``, ...), so the
renderers keep up with a document that gains keys.

:func:`write_outputs` renders every format, the chains file, the provenance
sidecar and the figures in memory and only then writes them, each atomically.
"""
from __future__ import annotations

import json
import math
import os
import pathlib
from dataclasses import dataclass, field

from ..errors import InputError
from .numbers import fmt_plain, round_uncertain

__all__ = ["Column", "Table", "Tables", "document_tables", "format_cell", "short_name",
           "verdict_lines", "FORMATS", "render", "write_outputs", "document_of"]

FORMATS = ("markdown", "html", "latex", "json", "text")
_ALIASES = {"md": "markdown", "tex": "latex", "htm": "html", "txt": "text"}


@dataclass(frozen=True)
class Column:
    """One table column: the document key, its labels and units (plain and LaTeX)."""

    key: str
    label: str
    latex: str
    unit: str = ""
    unit_latex: str = ""
    scale: float = 1.0


@dataclass
class Table:
    columns: list
    rows: list = field(default_factory=list)     # each row: list of cells (see format_cell)


@dataclass
class Tables:
    planets: Table
    pairs: Table | None
    star: list          # [(Column, cell)]
    system: list        # [(Column, cell)]
    notes: list         # plain-text notes on the basis of values


# --- units and labels ------------------------------------------------------
_SUFFIX_UNITS = {   # key suffix -> (plain unit, LaTeX unit, scale)
    "_days": ("d", "d", 1.0), "_day": ("d", "d", 1.0),
    "_au": ("au", "au", 1.0),
    "_mearth": ("M⊕", r"$M_\oplus$", 1.0), "_rearth": ("R⊕", r"$R_\oplus$", 1.0),
    "_mjup": ("M_J", r"$M_\mathrm{J}$", 1.0), "_rjup": ("R_J", r"$R_\mathrm{J}$", 1.0),
    "_msun": ("M☉", r"$M_\odot$", 1.0), "_rsun": ("R☉", r"$R_\odot$", 1.0),
    "_gcc": ("g cm⁻³", r"g\,cm$^{-3}$", 1.0),
    "_deg": ("deg", "deg", 1.0),
    "_ms": ("m s⁻¹", r"m\,s$^{-1}$", 1.0),
    "_percent": ("%", r"\%", 1.0),
}

_PLANET_COLUMNS = [
    Column("period_days", "P", "$P$", "d", "d"),
    Column("a_au", "a", "$a$", "au", "au"),
    Column("mass_mearth", "M", r"$M_\mathrm{p}$", "M⊕", r"$M_\oplus$"),
    Column("msini_mearth", "M sin i", r"$M_\mathrm{p}\sin i$", "M⊕", r"$M_\oplus$"),
    Column("radius_rearth", "R", r"$R_\mathrm{p}$", "R⊕", r"$R_\oplus$"),
    Column("ecc", "e", "$e$"),
    Column("omega_deg", "ω", r"$\omega$", "deg", "deg"),
    Column("inclination_deg", "i (sky)", r"$i_\mathrm{sky}$", "deg", "deg"),
    Column("psi_deg", "ψ (tilt)", r"$\psi$", "deg", "deg"),
]
_PLANET_SKIP = {"name", "mass_basis", "ecc_basis", "inclination_basis", "transiting"}

_PAIR_COLUMNS = [
    Column("period_ratio", "P_out/P_in", r"$P_\mathrm{out}/P_\mathrm{in}$"),
    Column("nearest_mmr", "nearest MMR", "MMR"),
    Column("mmr_order", "order", "order"),
    Column("mmr_offset", "offset", r"$\delta$", "%", r"\%", 100.0),
    Column("near_resonance_probability", "P(near MMR)", r"$P_\mathrm{MMR}$"),
    Column("resonance_overlap_probability", "P(MMR overlap)", r"$P_\mathrm{ovl}$"),
    Column("hill_separation", "Δ", r"$\Delta$", "R_H,m", r"$R_\mathrm{H,m}$"),
    Column("hill_stable_probability", "P(Hill stable)", r"$P_\mathrm{Hill}$"),
    Column("amd_beta", "β_AMD", r"$\beta_\mathrm{AMD}$"),
    Column("amd_stable_probability", "P(AMD stable)", r"$P_\mathrm{AMD}$"),
    Column("mutual_inclination_deg", "i_mut", r"$i_\mathrm{mut}$", "deg", "deg"),
]
_PAIR_SKIP = {"inner", "outer"}

_STAR_COLUMNS = [
    Column("mass_msun", "stellar mass M★", r"Stellar mass $M_\star$", "M☉", r"$M_\odot$"),
    Column("radius_rsun", "stellar radius R★", r"Stellar radius $R_\star$", "R☉", r"$R_\odot$"),
    Column("density_gcc", "stellar density ρ★", r"Stellar density $\rho_\star$", "g cm⁻³", r"g\,cm$^{-3}$"),
]

_SYSTEM_COLUMNS = [
    Column("all_pairs_hill_stable_probability", "every adjacent pair Hill stable (Gladman 1993)",
           r"Every adjacent pair Hill stable (Gladman 1993)"),
    Column("mutual_inclination_sigma_deg", "mutual-inclination dispersion σ",
           r"Mutual-inclination dispersion $\sigma_\mathrm{mut}$", "deg", "deg"),
    Column("gap_complexity", "gap complexity C (Gilbert & Fabrycky 2020)",
           r"Gap complexity $\mathcal{C}$ (Gilbert \& Fabrycky 2020)"),
    Column("spacing_uniformity", "spacing uniformity", "Spacing uniformity"),
]
#: Document keys that are not quantities (rendered in their own sections).
META_KEYS = {"schema_version", "system", "star", "planets", "pairs", "sampler", "disclaimer",
             "provenance", "verdicts"}


def _generic_column(key, prefix=""):
    unit, unit_tex, scale = "", "", 1.0
    stem = key
    for suf, (u, ut, sc) in _SUFFIX_UNITS.items():
        if key.endswith(suf):
            unit, unit_tex, scale, stem = u, ut, sc, key[: -len(suf)]
            break
    label = (prefix + stem.replace("_", " ")).strip()
    return Column(key, label, _tex_escape(label), unit, unit_tex, scale)


def _tex_escape(s):
    from .latex import escape
    return escape(s)


def short_name(name, system):
    """A planet's name without the system prefix ('Velmora b' -> 'b')."""
    name = str(name)
    if system and name.startswith(str(system)) and name != system:
        return name[len(str(system)):].strip() or name
    return name


# --- cells -----------------------------------------------------------------
def _is_summary(v):
    return isinstance(v, dict) and "median" in v and "lo" in v and "hi" in v


def _pct(p):
    if p <= 0:
        return "0 %"
    if p >= 1:
        return "100 %"
    x = 100 * p
    if x < 1 or x > 99:
        s = f"{x:.1f}"
        s = {"100.0": "99.9", "0.0": "0.1"}.get(s, s)   # never round a fraction to a certainty
        return f"{'<' if x < 0.1 else '>' if x > 99.9 else ''}{s} %"
    return f"{x:.0f} %"


def format_cell(value, key="", scale=1.0):
    """A format-neutral cell.

    Returns one of ``("none",)``, ``("text", s)``, ``("number", s)``,
    ``("pm", value, minus, plus)`` (strings already rounded by the larger
    error; ``minus == plus`` means symmetric) or ``("percent", s)``.
    """
    if value is None:
        return ("none",)
    if isinstance(value, bool):
        return ("text", "yes" if value else "no")
    if _is_summary(value):
        v, lo, hi = (value[k] for k in ("median", "lo", "hi"))
        if v is None:
            return ("none",)
        v, lo, hi = v * scale, (lo if lo is not None else v) * scale, (hi if hi is not None else v) * scale
        minus, plus = v - lo, hi - v
        if not (minus > 0 or plus > 0):
            return ("number", fmt_plain(v, 6))
        vs, ms, ps = round_uncertain(v, minus, plus)
        return ("pm", vs, ms, ps)
    if isinstance(value, (int, float)):
        if isinstance(value, float) and not math.isfinite(value):
            return ("none",)
        if "probability" in key:
            return ("percent", _pct(float(value)))
        if isinstance(value, int):
            return ("number", str(value * scale if scale != 1 else value))
        return ("number", fmt_plain(value * scale, 4))
    if isinstance(value, str):
        return ("text", value)
    if isinstance(value, (list, tuple)):
        parts = []
        for x in value:
            if isinstance(x, (list, tuple)):
                parts.append(" – ".join(map(str, x)))
            else:
                parts.append(str(x))
        return ("text", "; ".join(parts)) if parts else ("none",)
    return ("text", json.dumps(value, sort_keys=True, default=str))


# --- tables ----------------------------------------------------------------
def _columns(entries, known, skip):
    present = set()
    order = []
    for e in entries:
        for k, v in e.items():
            if k in skip or v is None:
                continue
            if k not in present:
                present.add(k)
                order.append(k)
    cols = [c for c in known if c.key in present]
    known_keys = {c.key for c in known}
    cols += [_generic_column(k) for k in order if k not in known_keys]
    return cols


def _flatten(block, columns_known, prefix="", skip=()):
    """[(Column, cell)] for a mapping of system quantities; nested blocks flattened once."""
    known = {c.key: c for c in columns_known}
    rows = []
    for k, v in block.items():
        if k in skip or v is None:
            continue
        if isinstance(v, dict) and not _is_summary(v):
            label = k.replace("_", " ")
            rows += _flatten(v, [], prefix=f"{prefix}{label}: ")
            continue
        col = known.get(k) if not prefix else None
        col = col or _generic_column(k, prefix)
        rows.append((col, format_cell(v, k, col.scale)))
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


def document_tables(doc) -> Tables:
    """Format-neutral tables of a report document (see module docstring)."""
    sysname = doc.get("system", "")
    planets = doc.get("planets", [])
    pcols = _columns(planets, _PLANET_COLUMNS, _PLANET_SKIP)
    ptab = Table([Column("name", "planet", "Planet")] + pcols)
    for p in planets:
        ptab.rows.append([("text", short_name(p.get("name", "?"), sysname))]
                         + [format_cell(p.get(c.key), c.key, c.scale) for c in pcols])
    pairs = doc.get("pairs") or []
    qtab = None
    if pairs:
        qcols = _columns(pairs, _PAIR_COLUMNS, _PAIR_SKIP)
        qtab = Table([Column("pair", "pair", "Pair")] + qcols)
        for q in pairs:
            label = f"{short_name(q.get('inner', '?'), sysname)}–{short_name(q.get('outer', '?'), sysname)}"
            qtab.rows.append([("text", label)] + [format_cell(q.get(c.key), c.key, c.scale) for c in qcols])
    star = _flatten(doc.get("star", {}), _STAR_COLUMNS)
    rest = {k: v for k, v in doc.items() if k not in META_KEYS}
    ordered = {c.key: rest.pop(c.key) for c in _SYSTEM_COLUMNS if c.key in rest}
    ordered.update(rest)
    system = _flatten(ordered, _SYSTEM_COLUMNS)
    return Tables(ptab, qtab, star, system, basis_notes(doc))


def _word(p, yes="likely", no="unlikely"):
    if p is None:
        return "unknown"
    return yes if p >= 0.95 else no if p <= 0.05 else "uncertain"


def verdict_lines(doc):
    """Plain-language verdict sentences (the document's own ``verdicts`` included)."""
    out = []
    if doc.get("pairs"):
        p = doc.get("all_pairs_hill_stable_probability")
        pct = "" if p is None else f" ({_pct(p)} of draws)"
        out.append(f"Every adjacent pair Hill stable (Gladman 1993): {_word(p)}{pct}.")
    else:
        out.append("Single planet: no pair scores.")
    if any(str(p.get("mass_basis", "")).startswith("minimum") for p in doc.get("planets", [])):
        out.append("Planets with only m sin i use it as their mass, so their Hill spacings are upper limits.")
    out += [str(v) for v in doc.get("verdicts", []) or []]
    return out


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
        out.append((k.replace("_", " "), text))
    return out


def provenance_items(doc):
    """[(label, text)] of the provenance block for the human-readable formats."""
    prov = doc.get("provenance") or {}
    out = []
    for k in ("input_file", "input_sha256", "seed", "draws", "package_version"):
        if k in prov:
            out.append((k.replace("_", " "), str(prov[k])))
    opts = prov.get("options") or {}
    if opts:
        out.append(("options", ", ".join(f"{a}={b}" for a, b in opts.items())))
    priors = prov.get("priors") or {}
    for q, pr in priors.items():
        if isinstance(pr, dict):
            text = pr.get("name", "?") + (f" ({pr['citation']})" if pr.get("citation") else "")
            if pr.get("from_memory"):
                text += " [from memory]"
        else:
            text = str(pr)
        out.append((f"prior on {q.replace('_', ' ')}", text))
    vers = prov.get("versions") or {}
    if vers:
        out.append(("versions", ", ".join(f"{a} {b}" for a, b in vers.items())))
    for k, v in prov.items():
        if k not in {"input_file", "input_sha256", "seed", "draws", "package_version", "options",
                     "priors", "versions"}:
            out.append((k.replace("_", " "), json.dumps(v, default=str) if isinstance(v, (dict, list)) else str(v)))
    return out


def intro_line(doc):
    """'4000 draws (direct Monte Carlo), seed 0' style summary of how the numbers were made."""
    prov = doc.get("provenance") or {}
    smp = doc.get("sampler") or {}
    bits = []
    if "draws" in prov:
        bits.append(f"{prov['draws']} posterior draws")
    if smp.get("method"):
        bits.append(f"({smp['method']})")
    text = " ".join(bits)
    if "seed" in prov:
        text += f", seed {prov['seed']}"
    return text


# --- rendering entry points -------------------------------------------------
def document_of(result):
    """The report document of an :class:`~archsys.pipeline.Analysis` or a document itself."""
    if isinstance(result, dict):
        return result
    doc = getattr(result, "document", None)
    if not isinstance(doc, dict) or not doc:
        raise TypeError("expected an Analysis (with .document) or a report document dict")
    return doc


def render(result, fmt, figures=None, preset=None):
    """The report of ``result`` (Analysis or document) as a string in ``fmt``.

    ``fmt``: markdown, html, latex, json or text.  HTML embeds figures: the
    ``figures`` list of :class:`archsys.output.figures.FigureItem` if given,
    otherwise they are drawn from ``result`` (posterior draws when it is an
    Analysis, the document alone otherwise).
    """
    name = _ALIASES.get(str(fmt).lower(), str(fmt).lower())
    doc = document_of(result)
    if name == "markdown":
        from .markdown import render_markdown
        return render_markdown(doc)
    if name == "latex":
        from .latex import render_latex
        return render_latex(doc)
    if name == "json":
        return json.dumps(doc, indent=2, sort_keys=False) + "\n"
    if name == "text":
        from .text import render_text
        return render_text(doc)
    if name == "html":
        from .html import render_html
        if figures is None:
            from .figures import make_figures
            figures = make_figures(_draws_of(result), doc, preset=preset)
        return render_html(doc, figures)
    raise InputError(f"unknown report format {fmt!r}; choose one of {', '.join(FORMATS)}", field="format")


def _draws_of(result):
    post = getattr(result, "posterior", None)
    return getattr(post, "draws", None)


def _dir(path, what):
    p = pathlib.Path(path)
    if p.exists() and not p.is_dir():
        raise InputError(f"{what} {str(p)!r} exists and is not a folder")
    return p


def write_outputs(result, out_dir=None, fig_dir=None, preset=None, corner_params=None):
    """Write every report format, chains, provenance and figures of ``result``.

    Into ``out_dir``: ``<name>.json``, ``.md``, ``.html``, ``.tex``, ``.txt``,
    ``<name>.chains.npz`` and ``<name>.provenance.json``; figures (PDF and PNG)
    into ``fig_dir`` (``out_dir/figures`` when only ``out_dir`` is given).
    Everything is rendered in memory first; each file is then written
    atomically, so a failure while rendering writes nothing.  The provenance
    sidecar is written last: its presence marks a complete set.

    Returns
    -------
    written : dict
        file name -> :class:`pathlib.Path` of every file written.
    """
    from .figures import figure_files, make_figures
    from .files import atomic_write, safe_name
    from .provenance import build_provenance, provenance_json
    from .style import get_preset

    if out_dir is None and fig_dir is None:
        return {}
    preset_name = get_preset(preset).name                  # validate before any work
    doc = document_of(result)
    stem = safe_name(doc.get("system", "system"))
    out = _dir(out_dir, "output folder") if out_dir is not None else None
    figs_at = _dir(fig_dir, "figure folder") if fig_dir is not None else out / "figures"

    chosen = {"corner_params": corner_params} if corner_params else {}
    figures = make_figures(_draws_of(result), doc, preset=preset_name, **chosen)
    fig_blobs = figure_files(figures, stem)                # {file name: bytes}
    files = {}                                             # path -> (bytes or str, mode)
    for fname, blob in fig_blobs.items():
        files[figs_at / fname] = (blob, "wb")
    if out is not None:
        from .html import render_html
        from .latex import render_latex
        from .markdown import render_markdown
        from .text import render_text
        rel = _relative(figs_at, out)
        md_figs = [(f.caption, f"{rel}/{stem}_{f.name}.png") for f in figures]
        files[out / f"{stem}.json"] = (json.dumps(doc, indent=2, sort_keys=False) + "\n", "w")
        files[out / f"{stem}.md"] = (render_markdown(doc, figures=md_figs), "w")
        files[out / f"{stem}.html"] = (render_html(doc, figures), "w")
        files[out / f"{stem}.tex"] = (render_latex(doc), "w")
        files[out / f"{stem}.txt"] = (render_text(doc), "w")
        post = getattr(result, "posterior", None)
        if post is not None:
            from .chains import posterior_bytes
            files[out / f"{stem}.chains.npz"] = (posterior_bytes(post, doc), "wb")
        hashed = {_display_path(p, out): data for p, (data, _) in files.items()}
        prov = build_provenance(doc, hashed, preset=preset_name)
        files[out / f"{stem}.provenance.json"] = (provenance_json(prov), "w")
    written = {}
    for path, (data, mode) in files.items():         # the provenance sidecar comes last
        try:
            atomic_write(path, data, mode=mode)
        except OSError as exc:
            raise InputError(f"cannot write {path}: {exc.strerror or exc}") from None
        written[path.name] = path
    return written


def _display_path(p, root):
    """``p`` relative to ``root`` (POSIX), or as given when it lies elsewhere."""
    try:
        return p.resolve().relative_to(root.resolve()).as_posix()
    except ValueError:
        return str(p)


def _relative(figs_at, out):
    """Figure folder relative to the output folder, for links in the Markdown report."""
    return pathlib.PurePath(os.path.relpath(figs_at.resolve(), out.resolve())).as_posix()
