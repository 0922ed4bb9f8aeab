"""Corner-plot parameters taken from posterior draws, and the author's choice of them.

Each :class:`CornerParam` carries its values in display units (degrees, Earth
masses), a short key the author types to choose it (``e_b``, ``omega_b``,
``i_b``, ``psi_b``, ``m_b``, ``sigma``, ``Phi_bc``), its physical bounds and
its group (orbit shape, orientation, mass), which decides how a system too
large for one figure is split.
"""
from __future__ import annotations

import fnmatch
from dataclasses import dataclass

import numpy as np

from ...errors import InputError
from ...physics.constants import MEARTH_MSUN
from ...inference.summary import angle_branch, wrap_angle
from ..file_names import safe_name
from .common import letter, mathrm

__all__ = ["CornerParam", "planet_parameters", "system_parameters", "usable_parameters",
           "choose_parameters", "LOG_SPREAD"]


@dataclass
class CornerParam:
    """One corner-plot parameter: mathtext symbol and unit, values in display units."""

    name: str               # e.g. "mass_0" (internal, index based)
    symbol: str             # mathtext without $, e.g. r"m_\mathrm{b}"
    unit: str               # mathtext without $, e.g. r"M_\oplus" ("" if none)
    values: np.ndarray
    log: bool = False       # draw on a log axis
    key: str = ""           # what an author types to choose it, e.g. "m_b"
    lower: float = None     # physical bounds in display units (None: unbounded)
    upper: float = None
    circular: bool = False  # an angle defined modulo 360 deg
    group: str = "other"    # orbit / orientation / mass: how large sets are split
    limit: dict = None      # {"upper", "probability"}: shown as a limit, as in the tables (ecc_limit)

    def __post_init__(self):
        if not self.key:
            self.key = self.name

    @property
    def angle(self):
        return self.unit == "^\\circ"

    @property
    def label(self):
        sym = f"\\log_{{10}}\\,{self.symbol}" if self.log else self.symbol
        return f"${sym}$" if not self.unit else f"${sym}\\,[{self.unit}]$"

    def axis_label(self, two_lines=False):
        """The label, optionally with the unit on a second line (narrow corner panels)."""
        if not (two_lines and self.unit):
            return self.label
        sym = f"\\log_{{10}}\\,{self.symbol}" if self.log else self.symbol
        return f"${sym}$\n$[{self.unit}]$"

    def plotted(self):
        """Values on the plot axis: log10 of the values for a log parameter."""
        v = np.asarray(self.values, dtype=float)
        if not self.log:
            return v
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(v > 0, np.log10(np.where(v > 0, v, 1.0)), np.nan)

    def replace(self, **kw):
        d = dict(self.__dict__)
        d.update(kw)
        return CornerParam(**d)


#: The tables' marks of estimates (output.table_model.MARKS) as mathtext superscripts of corner labels.
ESTIMATE_MARKS = {"prior_dominated": "^{\\dagger}", "mass_radius_relation": "^{\\ddagger}",
                  "prior_inclination": "^{\\S}"}


def _col(draws, key, j=None):
    a = draws.get(key) if draws is not None else None
    if a is None:
        return None
    a = np.asarray(a, dtype=float)
    if j is None:
        return a if a.ndim == 1 else None
    return a[:, j] if a.ndim == 2 and j < a.shape[1] else None


#: A positive parameter whose 84th/16th percentile ratio exceeds this is shown as log10.
LOG_SPREAD = 5.0


def _spread(x):
    x = x[np.isfinite(x) & (x > 0)]
    if x.size < 10:
        return 1.0
    lo, hi = np.quantile(x, (0.16, 0.84))
    return hi / lo if lo > 0 else np.inf


def _compact_angle(deg):
    """Angles on the branch of the one angle convention (:func:`archsys.inference.summary.angle_branch`),
    the same branch as the tables and the JSON document."""
    return wrap_angle(deg, angle_branch(deg))


def planet_parameters(draws, document, j):
    """Corner parameters of planet ``j``: e, ω, i (sky), ψ (tilt), mass (or m sin i).

    Only quantities the document reports for this planet are included (e.g. no
    ω for an orbit assumed circular, where ω is meaningless).
    """
    pl = document["planets"][j]
    lt = letter(pl["name"], document.get("system"))
    x, k = mathrm(lt), safe_name(lt)
    out = []
    est = {key: ESTIMATE_MARKS.get(code, "") for key, code in (pl.get("estimated") or {}).items()}
    for key in pl.get("not_constrained_by_data") or []:
        est.setdefault(key, ESTIMATE_MARKS["prior_dominated"])
    e = _col(draws, "ecc", j)
    if "ecc" in pl and e is not None:
        out.append(CornerParam(f"e_{j}", f"e_{{{x}}}{est.get('ecc', '')}", "", e, key=f"e_{k}", lower=0.0,
                               upper=1.0, group="orbit", limit=pl.get("ecc_limit")))
    w = _col(draws, "omega", j)
    if "omega_deg" in pl and w is not None:
        v = _compact_angle(np.degrees(w))
        lo = -180.0 if np.nanmin(v) < 0 else 0.0
        out.append(CornerParam(f"omega_{j}", f"\\omega_{{{x}}}{est.get('omega_deg', '')}", "^\\circ", v,
                               key=f"omega_{k}", lower=lo,
                               upper=lo + 360.0, circular=True, group="orbit"))
    inc = _col(draws, "inc", j)
    if "inclination_deg" in pl and inc is not None:
        v = np.degrees(inc)
        out.append(CornerParam(f"inc_{j}", f"i_{{{x}}}{est.get('inclination_deg', '')}", "^\\circ", v,
                               log=_spread(v) > LOG_SPREAD, key=f"i_{k}",
                               lower=0.0, upper=180.0, group="orientation"))
    psi = _col(draws, "psi", j)
    if psi is not None and np.isfinite(psi).any():
        v = np.degrees(psi)
        out.append(CornerParam(f"psi_{j}", f"\\psi_{{{x}}}", "^\\circ", v, log=_spread(v) > LOG_SPREAD,
                               key=f"psi_{k}", lower=0.0, upper=180.0, group="orientation"))
    m, ms = _col(draws, "mass", j), _col(draws, "msini", j)
    if "mass_mearth" in pl and m is not None:
        v = m / MEARTH_MSUN
        out.append(CornerParam(f"mass_{j}", f"m_{{{x}}}{est.get('mass_mearth', '')}", "M_\\oplus", v,
                               log=_spread(v) > LOG_SPREAD,
                               key=f"m_{k}", lower=0.0, group="mass"))
    elif "msini_mearth" in pl and ms is not None:
        v = ms / MEARTH_MSUN
        out.append(CornerParam(f"msini_{j}", f"m_{{{x}}}\\sin i", "M_\\oplus", v, log=_spread(v) > LOG_SPREAD,
                               key=f"m_{k}", lower=0.0, group="mass"))
    return out


def _mutual_inclination(i1, i2, n1, n2):
    """Angle between two orbit normals from inclinations and nodes on the same plane (rad)."""
    c = np.cos(i1) * np.cos(i2) + np.sin(i1) * np.sin(i2) * np.cos(n1 - n2)
    return np.arccos(np.clip(c, -1.0, 1.0))


def system_parameters(draws, document):
    """System corner parameters: σ (mutual-inclination dispersion), adjacent mutual
    inclinations Φ (where sky inclinations and nodes are both known) and masses."""
    out = []
    sig = _col(draws, "sigma_mutual")
    if sig is not None and np.isfinite(sig).any():
        out.append(CornerParam("sigma_mutual", "\\sigma_\\mathrm{mut}", "^\\circ", np.degrees(sig),
                               log=_spread(np.degrees(sig)) > LOG_SPREAD, key="sigma", lower=0.0, upper=180.0,
                               group="orientation"))
    planets = document.get("planets", [])
    sysname = document.get("system")
    for j in range(len(planets) - 1):
        i1, i2 = _col(draws, "inc", j), _col(draws, "inc", j + 1)
        n1, n2 = _col(draws, "node", j), _col(draws, "node", j + 1)
        if any(a is None for a in (i1, i2, n1, n2)):
            continue
        ok = np.isfinite(i1) & np.isfinite(i2) & np.isfinite(n1) & np.isfinite(n2)
        if not ok.any():
            continue
        phi = np.full(i1.shape, np.nan)
        phi[ok] = np.degrees(_mutual_inclination(i1[ok], i2[ok], n1[ok], n2[ok]))
        x1 = letter(planets[j]["name"], sysname)
        x2 = letter(planets[j + 1]["name"], sysname)
        out.append(CornerParam(f"imut_{j}", f"\\Phi_{{{mathrm(x1 + x2)}}}", "^\\circ", phi,
                               log=_spread(phi) > LOG_SPREAD, key=f"Phi_{safe_name(x1)}{safe_name(x2)}",
                               lower=0.0, upper=180.0, group="orientation"))
    for j, pl in enumerate(planets):
        for p in planet_parameters(draws, document, j):
            if p.group == "mass":
                out.append(p)
    return out


def usable_parameters(params):
    """(kept, skipped): drop parameters with no finite draws or no dynamic range.

    ``corner`` cannot draw a parameter whose draws are all equal; such
    parameters are skipped and listed as ``(label, reason)``.
    """
    kept, skipped = [], []
    for p in params:
        v = np.asarray(p.values, dtype=float)
        fin = v[np.isfinite(v)]
        if fin.size == 0:
            skipped.append((p.label, "no finite draws"))
        elif fin.size < 0.5 * v.size:
            skipped.append((p.label, "undefined in most draws"))
        elif np.ptp(fin) <= 1e-12 * max(1.0, abs(fin[0])):
            skipped.append((p.label, f"constant ({fin[0]:.4g})"))
        else:
            if p.log and not (fin > 0).all():
                p = p.replace(log=False)
            kept.append(p)
    return kept, skipped


def all_parameters(draws, document):
    """Every corner parameter of the analysis, each key once (system σ and Φ, then per planet)."""
    seen, out = set(), []
    sets = [system_parameters(draws, document)] + [
        planet_parameters(draws, document, j) for j in range(len(document.get("planets", [])))]
    for params in sets:
        for p in params:
            if p.key not in seen:
                seen.add(p.key)
                out.append(p)
    return out


def choose_parameters(draws, document, keys):
    """The parameters an author chose for the paper figure, in the order given.

    ``keys``: a list or a comma-separated string of keys such as ``e_b``,
    ``omega_b``, ``i_b``, ``psi_b``, ``m_b``, ``sigma``, ``Phi_bc``; shell-style
    patterns choose several (``e_*`` every eccentricity, ``m_*`` every mass).
    An unknown key is an :class:`InputError` that lists the available ones.
    """
    if isinstance(keys, str):
        keys = [k for k in keys.split(",")]
    keys = [k.strip() for k in keys if k and k.strip()]
    if not keys:
        raise InputError("--corner-params: no parameter named", field="corner-params")
    avail = all_parameters(draws, document)
    out, seen = [], set()
    for k in keys:
        hits = [p for p in avail if fnmatch.fnmatchcase(p.key, k)]
        if not hits:
            raise InputError(f"--corner-params: no parameter {k!r} in {document.get('system', 'the system')}; "
                             f"available: {', '.join(p.key for p in avail)}", field="corner-params")
        for p in hits:
            if p.key not in seen:
                seen.add(p.key)
                out.append(p)
    return out
