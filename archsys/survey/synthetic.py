"""Invented planetary systems drawn from stated population laws, written as a survey catalogue.

``archsys simulate OUT.csv --systems 100000`` (or :func:`write_population`)
draws systems from the laws below and writes a planet-per-row table with the
canonical survey columns (``system``, ``planet``, ``period``, ``star_mass``,
``star_radius``, ``radius``, ``mass``, ``ecc``, ``b``, ``transiting``, each
measured quantity with ``<field>_err``), so that ``archsys survey OUT.csv``
reads it without a column map.  Uses: testing a survey pipeline on a
population whose truth is known (``--truth`` adds ``true_*`` columns), and
forecasting what a future survey would see (``--only-transiting`` keeps the
planets that transit an observer on the z axis).

Population laws (each a parameter of :class:`PopulationLaws`)
----------------------------------------------------------------
* Number of planets: fixed, or a Poisson law truncated to 1..``max_planets``
  (zero-truncated Poisson multiplicity; common practice in forward models of
  Kepler multiplicity, e.g. Fang & Margot 2012, ApJ 761, 92 -- from memory).
* Innermost period: ``dN/dlnP`` proportional to ``P^1.5`` below 10 d and flat
  above, on [1, 300] d (the rise and plateau of the occurrence rate in period;
  Youdin 2011, ApJ 742, 38; Mulders et al. 2015, ApJ 798, 112 -- exponents from
  memory).
* Spacing: adjacent planets ``Delta`` mutual Hill radii apart, ``Delta`` normal
  (mean 20, s.d. 8) truncated below at 2 sqrt(3) (Gladman 1993); about 20 mutual
  Hill radii is the typical spacing of Kepler multis (Fang & Margot 2013, ApJ
  767, 115; Weiss et al. 2018, AJ 155, 48 -- from memory).  Chambers, Wetherill &
  Boss (1996) mutual Hill radius, as in the analysis.
* Radii: log-normal with a per-system median ("peas in a pod": planets of one
  system have similar sizes, Weiss et al. 2018 -- from memory): system median
  ``ln R ~ N(ln 2 R_E, 0.45)``, planets ``ln R ~ N(system, 0.25)``, clipped to
  [0.5, 20] R_E (values a choice).
* Masses: the mass-radius relation of :mod:`archsys.physics.massradius`
  (Weiss & Marcy 2014; Chen & Kipping 2017) with its 0.15 dex log-normal scatter.
* Eccentricities: Rayleigh, ``sigma_e = 0.04`` (multi-planet systems; Van Eylen
  et al. 2019, AJ 157, 61 -- from memory), capped at 0.8.
* Orientations: system planes isotropic; each planet's orbit normal tilted from
  its system's by ``psi ~ Rayleigh(sigma_i)`` at a uniform node, ``sigma_i = 2``
  deg (Fabrycky et al. 2014, ApJ 790, 146: 1-2.2 deg -- from memory);
  arguments of periastron uniform.  An observer on the z axis sees a planet
  transit when its impact parameter ``|b| < 1`` (Winn 2010, eccentric factor).
* Stars: mass ``N(1.0, 0.15) M_sun`` clipped to [0.5, 1.4]; radius
  ``(M/M_sun)^0.8 R_sun`` (main-sequence scaling; common practice).

Measurement model (invented, stated): every listed quantity is the true value
plus a Gaussian error of the stated size (relative 1e-5 in period, 5 % in
stellar mass, 4 % in stellar radius, 5 % in planet radius, 20 % in mass, 0.03
in eccentricity, 0.05 in impact parameter), folded back into the physical
range; masses are listed for ``mass_measured`` of the planets (the others get
a mass from their radius in the analysis, flagged) and eccentricities for
``ecc_measured`` of them; impact parameters only for transiting planets.

Seeds: systems are drawn in blocks of :data:`BLOCK` from
``SeedSequence([seed, block])``, so a catalogue of n systems is the first n
systems of any larger one with the same seed and laws.
"""
from __future__ import annotations

import math
import os
import pathlib
from dataclasses import asdict, dataclass

import numpy as np

from ..errors import InputError
from ..physics import kepler
from ..physics.constants import MEARTH_MSUN, RSUN_AU
from ..physics.massradius import SCATTER_DEX, mass_from_radius_mearth

__all__ = ["PopulationLaws", "simulate_population", "write_population", "BLOCK", "COLUMNS"]

#: Systems per seeded block.
BLOCK = 10_000
GLADMAN = 2.0 * math.sqrt(3.0)


@dataclass(frozen=True)
class PopulationLaws:
    """The laws of a synthetic population (see module docstring for sources)."""

    planets: int | None = None          # fixed number of planets per system; None: truncated Poisson
    mean_planets: float = 2.5           # Poisson mean (before truncation) when planets is None
    max_planets: int = 8
    period_day: tuple = (1.0, 300.0)    # innermost planet
    period_break_day: float = 10.0
    period_slope_inner: float = 1.5     # dN/dlnP ~ P^slope below the break, flat above
    spacing_mean: float = 20.0          # mutual Hill radii
    spacing_sd: float = 8.0
    radius_median_rearth: float = 2.0
    radius_system_sd: float = 0.45      # ln R, between systems
    radius_planet_sd: float = 0.25      # ln R, within a system
    ecc_sigma: float = 0.04
    incl_sigma_deg: float = 2.0
    ecc_measured: float = 0.2           # fraction of planets with a listed eccentricity
    mass_measured: float = 0.5          # fraction of planets with a listed (true) mass
    only_transiting: bool = False

    def __post_init__(self):
        def bad(msg):
            raise InputError(f"simulate: {msg}")
        if self.planets is not None and not (1 <= int(self.planets) <= 20):
            bad(f"planets must be 1..20; got {self.planets}")
        if not (1 <= int(self.max_planets) <= 20):
            bad(f"max planets must be 1..20; got {self.max_planets}")
        if not (0.0 < self.mean_planets <= 20.0):
            bad(f"mean planets must be in (0, 20]; got {self.mean_planets}")
        lo, hi = self.period_day
        if not (0.0 < lo < hi):
            bad(f"period range must satisfy 0 < min < max; got {self.period_day}")
        for name in ("ecc_measured", "mass_measured"):
            v = getattr(self, name)
            if not (0.0 <= v <= 1.0):
                bad(f"{name.replace('_', ' ')} fraction must be in [0, 1]; got {v}")
        if not (0.0 <= self.ecc_sigma <= 0.5):
            bad(f"eccentricity sigma must be in [0, 0.5]; got {self.ecc_sigma}")
        if not (0.0 <= self.incl_sigma_deg <= 90.0):
            bad(f"inclination sigma must be in [0, 90] deg; got {self.incl_sigma_deg}")
        if not (self.spacing_mean > 0 and self.spacing_sd >= 0):
            bad("spacing mean must be > 0 and its s.d. >= 0")


COLUMNS = ("system", "planet", "star_mass", "star_mass_err", "star_radius", "star_radius_err",
           "period", "period_err", "radius", "radius_err", "mass", "mass_err", "ecc", "ecc_err",
           "b", "b_err", "transiting")
TRUTH = ("true_mass", "true_ecc", "true_psi_deg", "true_sky_inclination_deg", "true_b")


def _inner_periods(rng, n, laws):
    """Innermost periods: dN/dlnP ~ P^s below the break, flat above (inverse CDF in ln P)."""
    lo, hi = (math.log(x) for x in laws.period_day)
    br = min(max(math.log(laws.period_break_day), lo), hi)
    s = laws.period_slope_inner
    # un-normalised masses of the two pieces (in ln P): int_lo^br e^{s (x - br)} dx, and (hi - br)
    m1 = (br - lo) if s == 0 else (1.0 - math.exp(s * (lo - br))) / s
    m2 = hi - br
    u = rng.random(n) * (m1 + m2)
    inner = u < m1
    with np.errstate(divide="ignore", invalid="ignore"):
        x_in = br + (np.log(np.exp(s * (lo - br)) + s * u) / s if s != 0 else lo + u - br)
    x_out = br + (u - m1)
    return np.exp(np.where(inner, x_in, x_out))


def _block(seed, b, laws):
    """Arrays (BLOCK, K) of one block of systems; K = the largest multiplicity; ``n`` per system."""
    rng = np.random.default_rng(np.random.SeedSequence([int(seed) % 2 ** 63, int(b)]))
    S = BLOCK
    kmax = int(laws.planets) if laws.planets is not None else int(laws.max_planets)
    if laws.planets is not None:
        n = np.full(S, kmax)
    else:
        n = rng.poisson(laws.mean_planets, size=S)
        while True:                             # truncated to 1..max by redrawing
            redo = (n < 1) | (n > kmax)
            if not redo.any():
                break
            n[redo] = rng.poisson(laws.mean_planets, size=int(redo.sum()))
    ms = np.clip(rng.normal(1.0, 0.15, S), 0.5, 1.4)
    rs = ms ** 0.8
    lnr_sys = rng.normal(math.log(laws.radius_median_rearth), laws.radius_system_sd, S)
    R = np.clip(np.exp(lnr_sys[:, None] + rng.normal(0.0, laws.radius_planet_sd, (S, kmax))), 0.5, 20.0)
    M = mass_from_radius_mearth(R) * 10.0 ** rng.normal(0.0, SCATTER_DEX, (S, kmax))     # M_earth
    # spacing: Delta ~ N(mean, sd) truncated below at 2 sqrt(3), by redrawing
    D = rng.normal(laws.spacing_mean, laws.spacing_sd, (S, kmax))
    while True:
        redo = D < GLADMAN
        if not redo.any():
            break
        D[redo] = rng.normal(laws.spacing_mean, laws.spacing_sd, int(redo.sum()))
    P = np.empty((S, kmax))
    P[:, 0] = _inner_periods(rng, S, laws)
    a = np.empty((S, kmax))
    a[:, 0] = kepler.a_au(P[:, 0], ms)
    m_sun = M * MEARTH_MSUN
    for j in range(1, kmax):
        # (a2 - a1) / (k (a1 + a2) / 2) = Delta, k = ((m1 + m2) / (3 M*))^(1/3)  (Chambers et al. 1996)
        k = np.cbrt((m_sun[:, j - 1] + m_sun[:, j]) / (3.0 * ms))
        x = np.minimum(k * D[:, j] / 2.0, 0.95)
        a[:, j] = a[:, j - 1] * (1.0 + x) / (1.0 - x)
        P[:, j] = P[:, j - 1] * (a[:, j] / a[:, j - 1]) ** 1.5
    e = np.minimum(laws.ecc_sigma * np.sqrt(-2.0 * np.log1p(-rng.random((S, kmax)))), 0.8)
    w = rng.uniform(0.0, 2.0 * math.pi, (S, kmax))
    # orientations: isotropic system normal, planet normals tilted by psi ~ Rayleigh(sigma) at uniform nodes
    cos0 = rng.uniform(-1.0, 1.0, S)
    sin0 = np.sqrt(1.0 - cos0 ** 2)
    node0 = rng.uniform(0.0, 2.0 * math.pi, S)
    nref = np.stack([sin0 * np.cos(node0), sin0 * np.sin(node0), cos0], axis=-1)          # (S, 3)
    u = np.stack([np.cos(node0), np.sin(node0), np.zeros(S)], axis=-1)                     # in the sky plane
    v = np.cross(nref, u)
    sig = math.radians(laws.incl_sigma_deg)
    psi = np.minimum(sig * np.sqrt(-2.0 * np.log1p(-rng.random((S, kmax)))), math.pi)
    phi = rng.uniform(0.0, 2.0 * math.pi, (S, kmax))
    cos_i = (np.cos(psi) * nref[:, None, 2] + np.sin(psi) * (np.cos(phi) * u[:, None, 2]
                                                            + np.sin(phi) * v[:, None, 2]))
    # impact parameter with the eccentric factor (Winn 2010, eq. 7); omega from the sky plane
    b = a * np.abs(cos_i) / (rs[:, None] * RSUN_AU) * (1.0 - e ** 2) / (1.0 + e * np.sin(w))
    transit = b < 1.0
    mask = np.arange(kmax)[None, :] < n[:, None]
    if laws.only_transiting:
        mask &= transit
    return {"n": n, "mask": mask, "m_star": ms, "r_star": rs, "P": P, "R": R, "M": M, "e": e, "b": b,
            "transit": transit, "psi": psi, "cos_i": cos_i, "rng": rng}


def _observe(blk, laws, first_id, width, truth):
    """Catalogue columns of the listed planets of one block (noise from the block's generator)."""
    rng = blk.pop("rng")
    S, K = blk["P"].shape
    mask = blk["mask"]
    rows_sys, rows_pl = np.nonzero(mask)                      # row order: system, then planet
    take = (rows_sys, rows_pl)

    def noisy(x, err, lo=None, hi=None):
        y = x + err * rng.standard_normal(x.shape)
        if lo is not None:
            y = np.abs(y - lo) + lo                           # fold into the physical range
        if hi is not None:
            y = np.where(y >= hi, 2 * hi - y, y)
        return y

    ms, rs = blk["m_star"], blk["r_star"]
    ms_err, rs_err = 0.05 * ms, 0.04 * rs
    ms_obs, rs_obs = noisy(ms, ms_err, 0.0), noisy(rs, rs_err, 0.0)
    # noise is drawn for every planet of the block (listed or not), so a catalogue of n systems is
    # the first n systems of a longer one
    P, R, M, e, b = (blk[k] for k in ("P", "R", "M", "e", "b"))
    p_err, r_err, m_err = 1e-5 * P, 0.05 * R, 0.2 * M
    e_err, b_err = np.full(P.shape, 0.03), np.full(P.shape, 0.05)
    P_obs, R_obs, M_obs = noisy(P, p_err, 0.0), noisy(R, r_err, 0.0), noisy(M, m_err, 0.0)
    e_obs, b_obs = noisy(e, e_err, 0.0, 0.95), noisy(b, b_err, 0.0)
    has_m = rng.random(P.shape) < laws.mass_measured
    has_e = rng.random(P.shape) < laws.ecc_measured
    tr = blk["transit"]
    P, R, M, e, b, tr, has_m, has_e = (x[take] for x in (P, R, M, e, b, tr, has_m, has_e))
    p_err, r_err, m_err, e_err, b_err = (x[take] for x in (p_err, r_err, m_err, e_err, b_err))
    P_obs, R_obs, M_obs, e_obs, b_obs = (x[take] for x in (P_obs, R_obs, M_obs, e_obs, b_obs))
    nan = np.nan
    letters = "bcdefghijklmnopqrstu"
    # a system keeps its letters by intrinsic order (b innermost), also when only transiting ones are listed
    sys_ids = np.char.add("SYN-", np.char.zfill((first_id + rows_sys).astype(str), width))
    cols = {
        "system": sys_ids,
        "planet": np.char.add(np.char.add(sys_ids, " "), np.array(list(letters))[rows_pl]),
        "star_mass": ms_obs[rows_sys], "star_mass_err": ms_err[rows_sys],
        "star_radius": rs_obs[rows_sys], "star_radius_err": rs_err[rows_sys],
        "period": P_obs, "period_err": p_err, "radius": R_obs, "radius_err": r_err,
        "mass": np.where(has_m, M_obs, nan), "mass_err": np.where(has_m, m_err, nan),
        "ecc": np.where(has_e, e_obs, nan), "ecc_err": np.where(has_e, e_err, nan),
        "b": np.where(tr, b_obs, nan), "b_err": np.where(tr, b_err, nan),
        "transiting": tr.astype(np.int8),
    }
    if truth:
        cols.update({"true_mass": M, "true_ecc": e, "true_psi_deg": np.degrees(blk["psi"][take]),
                     "true_sky_inclination_deg": np.degrees(np.arccos(np.clip(blk["cos_i"][take], -1, 1))),
                     "true_b": b})
    return cols


def simulate_population(n_systems, laws=None, seed=0, truth=False):
    """Yield catalogue column blocks (dict name -> array) of ``n_systems`` synthetic systems.

    Each block holds up to :data:`BLOCK` systems; concatenated they are the
    rows :func:`write_population` writes.  Systems with no listed planet
    (``only_transiting`` and none transits) leave no row.
    """
    laws = laws or PopulationLaws()
    n_systems = int(n_systems)
    if n_systems < 1:
        raise InputError(f"simulate: need at least one system; got {n_systems}")
    width = max(7, len(str(n_systems)))
    for b in range(-(-n_systems // BLOCK)):
        blk = _block(seed, b, laws)
        keep = min(BLOCK, n_systems - b * BLOCK)
        if keep < BLOCK:                        # the first n systems of a longer catalogue
            blk["mask"][keep:] = False
        yield _observe(blk, laws, b * BLOCK + 1, width, truth)


def _fmt(col):
    """Cells of one column as text: integers and names as they are, numbers as %.10g, NaN empty."""
    if col.dtype.kind in "USiub":
        return col.astype(str).tolist()
    return ["" if v != v else "%.10g" % v for v in col.tolist()]


def write_population(path, n_systems, laws=None, seed=0, truth=False):
    """Write ``n_systems`` synthetic systems to ``path`` (``.csv`` or ``.parquet``); returns a summary dict.

    The file appears whole or not at all (written beside it, then renamed).
    """
    laws = laws or PopulationLaws()
    path = pathlib.Path(path)
    fmt = {".csv": "csv", ".parquet": "parquet", ".pq": "parquet"}.get(path.suffix.lower())
    if fmt is None:
        raise InputError(f"{path}: simulate writes .csv or .parquet; got '{path.suffix}'")
    if path.exists() and path.is_dir():
        raise InputError(f"{path}: is a directory")
    if not path.parent.is_dir():
        raise InputError(f"{path}: folder {path.parent} does not exist")
    names = COLUMNS + (TRUTH if truth else ())
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    rows = planets_transiting = 0
    systems = set()
    try:
        if fmt == "csv":
            with open(tmp, "w", encoding="utf-8", newline="\n") as fh:
                fh.write(",".join(names) + "\n")
                for cols in simulate_population(n_systems, laws, seed, truth):
                    text = [_fmt(cols[c]) for c in names]
                    n = len(text[0])
                    if n:
                        fh.write("\n".join(map(",".join, zip(*text))) + "\n")
                    rows += n
                    planets_transiting += int(cols["transiting"].sum())
                    systems.update(np.unique(cols["system"]).tolist())
        else:
            try:
                import pyarrow as pa
                import pyarrow.parquet as pq
            except ImportError:
                raise InputError(f"{path}: writing Parquet needs pyarrow (pip install 'archsys[parquet]')") from None
            writer = None
            try:
                for cols in simulate_population(n_systems, laws, seed, truth):
                    table = pa.table({c: cols[c].astype(str) if cols[c].dtype.kind in "US" else cols[c]
                                      for c in names})
                    if writer is None:
                        writer = pq.ParquetWriter(str(tmp), table.schema)
                    writer.write_table(table)
                    rows += table.num_rows
                    planets_transiting += int(cols["transiting"].sum())
                    systems.update(np.unique(cols["system"]).tolist())
            finally:
                if writer is not None:
                    writer.close()
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return {"path": str(path), "rows": int(rows), "systems": len(systems),
            "planets_transiting": int(planets_transiting), "seed": int(seed), "laws": asdict(laws)}
