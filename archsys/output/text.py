"""Terminal text report, rendered from the report document.

Layout of our own: a header line, the star, a planet table, a pair table, the
system verdicts in plain language, and the statistical caveat.  Colour (ANSI)
only when writing to a terminal.
"""
from __future__ import annotations

from .numbers import fmt_summary

__all__ = ["render_text"]


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


def _pct(p):
    return "—" if p is None else f"{100 * p:.0f} %"


def _verdict(p, st, yes="likely", no="unlikely"):
    if p is None:
        return "unknown"
    if p >= 0.95:
        return st.good(yes)
    if p <= 0.05:
        return st.bad(no)
    return st.warn("uncertain")


def _short(name, system):
    return name[len(system):].strip() if name.startswith(system) and name != system else name


def render_text(doc, colour=False) -> str:
    st = _Style(colour)
    sysname = doc["system"]
    L = [st.head(f"{sysname} — system architecture") + st.dim(f"   (archsys {doc['provenance']['package_version']})"), ""]
    s = doc["star"]
    star = [f"M* = {fmt_summary(s['mass_msun'])} M_sun"]
    if "radius_rsun" in s:
        star.append(f"R* = {fmt_summary(s['radius_rsun'])} R_sun")
    if "density_gcc" in s:
        star.append(f"rho* = {fmt_summary(s['density_gcc'])} g/cm3")
    L.append(st.head("Star    ") + "   ".join(star))
    smp = doc.get("sampler", {})
    L.append(st.head("Draws   ") + f"{doc['provenance']['draws']} ({smp.get('method', '?')}), seed {doc['provenance']['seed']}")
    if smp.get("converged") is False:
        L.append(st.warn("        warning: the chain did not reach 50 autocorrelation times; treat intervals as rough"))
    L += ["", st.head("Planets") + st.dim("   median and 68 % interval")]
    rows = []
    for p in doc["planets"]:
        if "mass_mearth" in p:
            mass = fmt_summary(p["mass_mearth"]) + ("" if p["mass_basis"].startswith("true") else " *")
        elif "msini_mearth" in p:
            mass = fmt_summary(p["msini_mearth"]) + " (min)"
        else:
            mass = "—"
        ecc = fmt_summary(p["ecc"]) if "ecc" in p else "0 (assumed)"
        inc = fmt_summary(p["inclination_deg"]) if "inclination_deg" in p else "—"
        rows.append([_short(p["name"], sysname), fmt_summary(p["period_days"]), fmt_summary(p["a_au"]),
                     mass, ecc, inc])
    L += _table(rows, ["planet", "P [d]", "a [au]", "mass [M_E]", "e", "i_sky [deg]"], st)
    notes = sorted({p["mass_basis"] for p in doc["planets"] if "mass_mearth" in p and not p["mass_basis"].startswith("true")})
    for n in notes:
        L.append(st.dim(f"  * mass {n}"))
    if doc["pairs"]:
        L += ["", st.head("Adjacent pairs")]
        rows = []
        for q in doc["pairs"]:
            row = [f"{_short(q['inner'], sysname)}–{_short(q['outer'], sysname)}", fmt_summary(q["period_ratio"])]
            row.append((q.get("nearest_mmr") or "— (wide)") + (f" ({100 * q['mmr_offset']['median']:+.2f} %)" if q.get("mmr_offset") else ""))
            row.append(fmt_summary(q["hill_separation"]))
            row.append(_pct(q.get("hill_stable_probability")))
            if "amd_stable_probability" in q:
                row.append(_pct(q.get("amd_stable_probability")))
            if "mutual_inclination_deg" in q:
                row.append(fmt_summary(q["mutual_inclination_deg"]))
            elif "mutual_inclination_lower_bound_deg" in q:
                row.append("≥ " + fmt_summary(q["mutual_inclination_lower_bound_deg"]))
            rows.append(row)
        header = ["pair", "P_out/P_in", "nearest MMR (offset)", "Δ [R_H,mutual]", "P(Hill stable)"]
        if any("amd_stable_probability" in q for q in doc["pairs"]):
            header.append("P(AMD stable)")
        if any("mutual_inclination_deg" in q or "mutual_inclination_lower_bound_deg" in q for q in doc["pairs"]):
            header.append("mutual incl. [deg]")
        L += _table(rows, header, st)
    L += ["", st.head("Verdicts")]
    p_all = doc.get("all_pairs_hill_stable_probability")
    if doc["pairs"]:
        L.append(f"  Every adjacent pair Hill stable (Gladman 1993): {_verdict(p_all, st)} ({_pct(p_all)} of draws)")
    else:
        L.append("  Single planet: no pair scores.")
    fl = doc.get("flatness")
    if fl and "mutual_inclination_sigma_deg" in fl:
        L.append(f"  Mutual-inclination dispersion sigma = {fmt_summary(fl['mutual_inclination_sigma_deg'])} deg; "
                 f"largest mutual inclination {fmt_summary(fl['max_mutual_inclination_deg'])} deg")
    elif fl:
        L.append(st.dim("  Flatness: " + fl["basis"]))
    if "gap_complexity" in doc:
        L.append(f"  Gap complexity (Gilbert & Fabrycky 2020): {fmt_summary(doc['gap_complexity'])}")
    if any(p["mass_basis"].startswith("minimum") for p in doc["planets"]):
        L.append(st.dim("  Planets with only m sin i use it as their mass: their Hill spacings are upper limits."))
    for extra in doc.get("verdicts", []):
        L.append("  " + extra)
    L += ["", st.dim("Note: " + doc["disclaimer"])]
    return "\n".join(L) + "\n"
