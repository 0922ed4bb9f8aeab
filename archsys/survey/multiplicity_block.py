"""The survey's ``transit_multiplicity`` block: observed transit counts -> population mutual inclinations.

Which planets count
-------------------
Among the systems the survey selected (``--where``), a planet counts as a
transiting planet when the row expression :attr:`MultiplicitySettings.planets`
holds (``--transit-planets``, the ``--where`` language evaluated on the
planet's row; default ``transiting == true``, the column map's transit flag;
e.g. ``transiting == true and method == transit``) and it passes the
geometric detectability cut (period, radius; default period range: that of
the counted planets, no radius cut).  Nothing is dropped silently: planets
without a period, planets cut by period or radius, planets with unknown radius
(kept: the radius cut cannot be tested) and planets left out of the planet
pool (no stellar mass or radius) are counted in ``excluded``.

Each system contributes its number ``k >= 1`` of counted planets; the
counts ``n_k`` are fitted by :mod:`.multiplicity_fit` with the forward model
of :mod:`.multiplicity`.  The block also sets this population answer beside
the survey's per-system tilt fit (``mutual_inclination_population``) with the
assumptions of each.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from ..errors import InputError
from ..physics.constants import R_EARTH_M, R_SUN_M
from .catalog import evaluate, parse_where
from .column_map import system_mapping, where_names
from .multiplicity import (GLADMAN_HILL, K_MAX, N_MAX, PERIOD_JITTER_DEX, Detectability, MultiplicityModel,
                           PlanetPool, adjacent_ratios)
from .multiplicity_fit import (MBAR_MAX, SIGMA_RANGE_DEG, CountModel, count_summary, fit_counts,
                               posterior_predictive, single_excess)

__all__ = ["MultiplicitySettings", "check_settings", "observed_transits", "transit_multiplicity", "summary_lines",
           "MIN_SYSTEMS"]

#: Fewer observed transiting systems than this (or no system with k >= 2): no fit, a reason instead.
MIN_SYSTEMS = 20
#: Fewer observed adjacent period ratios than this: the model packs planets to the Hill minimum instead.
MIN_RATIOS = 10
SPACING_OBSERVED = ("adjacent period ratios resampled from the counted multis of the catalogue. A non-transiting "
                    "planet between two transiting ones makes an observed ratio wider than the true one, so the "
                    "model's systems are, if anything, spaced too widely and sigma is then slightly low")
SPACING_PACKED = ("too few observed adjacent period ratios: planets packed to the Hill minimum (period ratios "
                  "near 1.1, tighter than observed multis); such systems transit together more often, so sigma is "
                  "overestimated (checked with an independent simulator: medians about 1.7x the truth for "
                  "sigma >= 1.5 deg, upper bounds still above the truth)")
_UNITS = {"period": "day", "radius": "earthRad", "star_mass": "solMass", "star_radius": "solRad"}
_DEFAULT_UNITS = {"period": "day", "radius": "earthRad", "mass": "solMass"}
ASSUMPTIONS = [
    "geometric transit only: |cos i_sky| < (R* + Rp)/a, grazing transits included; no pipeline completeness "
    "(signal-to-noise, number of transits, duty cycle) is modelled",
    "circular orbits",
    "orbit normals tilted from one reference plane per system by psi ~ Rayleigh(sigma) at uniform nodes; "
    "isotropic observers",
    "flat population: zero-truncated Poisson multiplicity (truncated at n_max); second population (fraction f): "
    "one planet only (intrinsically single or dynamically hot; 'single') or the same multiplicity law with "
    "mutually isotropic orbits ('isotropic'), see model.second_population",
    "periods, radii and hosts resampled from the counted planets weighted by a/(R* + Rp) (inverse transit "
    "probability), periods jittered; spacing: see model.spacing; adjacent planets at least min_hill mutual Hill "
    "radii apart (masses from radii, Weiss & Marcy 2014)",
    "the same detectability cut (period, radius) applied to simulated and observed planets",
]


@dataclass(frozen=True)
class MultiplicitySettings:
    """Options of the transit-multiplicity block (``None`` for ``planets`` switches it off)."""

    planets: str | None = "transiting == true"
    period_day: tuple | None = None          # None: the range of the counted planets
    radius_rearth: tuple | None = None       # None: no radius cut
    min_hill: float = GLADMAN_HILL
    n_per_multiplicity: int = 10000
    n_grid: int = 40
    n_steps: int = 2000
    n_burn: int = 500
    off_reason: str = "switched off (--transit-planets off)"
    second_population: str = "single"        # or "isotropic" (see multiplicity_fit.SECOND_POPULATIONS)

    @classmethod
    def from_cli(cls, planets=None, period=None, radius=None, second=None):
        """Settings from ``--transit-planets`` (``off`` switches the block off), ``--transit-period``,
        ``--transit-radius`` (MIN MAX pairs); one-line InputError on bad values."""
        for name, rng in (("--transit-period", period), ("--transit-radius", radius)):
            if rng is not None and not (len(rng) == 2 and 0 <= rng[0] < rng[1]):
                raise InputError(f"{name} needs MIN MAX with 0 <= MIN < MAX; got {' '.join(map(str, rng))}")
        if planets is not None and planets.strip().lower() == "off":
            return cls(planets=None)
        return cls(planets=planets or cls.planets, period_day=tuple(period) if period else None,
                   radius_rearth=tuple(radius) if radius else None, second_population=second or "single")


def check_settings(settings, cmap, cat_columns):
    """Fail early (before the per-system analysis) on a --transit-planets expression that does not parse.

    Returns the settings to use: the default expression is switched off, with
    a reason, when the table has no transit flag to evaluate it on.
    """
    st = settings or MultiplicitySettings()
    if not st.planets:
        return st
    names = where_names(cmap, cat_columns)
    if st.planets == MultiplicitySettings.planets and "transiting" not in names:
        return replace(st, planets=None, off_reason="the table has no transit flag (map 'transiting' in the "
                                                   "column map, or give --transit-planets EXPR)")
    parse_where(st.planets, names, where=f"--transit-planets {st.planets!r}")
    return st


def _convert(q, field, cache):
    """Value of a system-file quantity in archsys' unit for ``field`` (None for limits/absent)."""
    if not q or "value" not in q:
        return None
    unit = q.get("unit")
    if unit is None:
        return float(q["value"])
    key = (unit, _UNITS[field])
    if key not in cache:
        import astropy.units as u
        cache[key] = float(u.Unit(unit).to(u.Unit(_UNITS[field])))
    return float(q["value"]) * cache[key]


def observed_transits(groups, cmap, cat_columns, cat_units, planets_expr):
    """Counted planets of every selected system.

    Returns
    -------
    rows : list of dict
        One per counted planet: ``system``, ``period``, ``radius`` (R_earth,
        NaN unknown), ``star_mass``, ``star_radius`` (NaN unknown).
    info : dict
        Planets examined and excluded, by reason.
    """
    node = parse_where(planets_expr, where_names(cmap, cat_columns), where=f"--transit-planets {planets_expr!r}")
    cache, out = {}, []
    info = {"planets_in_selected_systems": 0, "planets_matching": 0, "no_period": 0}
    for g in groups:
        if not g.n_planets:         # every row of the system unreadable: listed in rejects.csv by the survey
            continue
        data, _problems, rows_of = system_mapping(g, cmap, cat_units)
        g_rows = g.rows             # unpacked once (SystemRows keeps its rows packed)
        cells = [c for _, c in g_rows]
        index = {rownum: i for i, (rownum, _) in enumerate(g_rows)}
        sysvars = {"n_planets": g.n_planets, "system": g.system}
        star = data["star"]
        try:
            ms = _convert(star.get("mass"), "star_mass", cache)
            rs = _convert(star.get("radius"), "star_radius", cache)
        except Exception:  # noqa: BLE001 - a unit that does not convert: the star is unknown here
            ms = rs = None
        info["planets_in_selected_systems"] += g.n_planets
        for pl in data["planet"]:
            i = index.get(rows_of.get(pl["name"]))
            if i is None or not evaluate(node, cells, i, sysvars):
                continue
            info["planets_matching"] += 1
            try:
                P = _convert(pl.get("period"), "period", cache)
                R = _convert(pl.get("radius"), "radius", cache)
            except Exception:  # noqa: BLE001
                P = R = None
            if R is None and pl.get("ror") and "value" in pl["ror"] and rs:
                R = float(pl["ror"]["value"]) * rs * R_SUN_M / R_EARTH_M     # IAU 2015 B3 nominal radii
            if P is None or not (P > 0 and math.isfinite(P)):
                info["no_period"] += 1
                continue
            out.append({"system": g.system, "period": P, "radius": R if R and R > 0 else math.nan,
                        "star_mass": ms if ms and ms > 0 else math.nan,
                        "star_radius": rs if rs and rs > 0 else math.nan})
    return out, info


def _bins(k):
    c = np.bincount(np.minimum(np.asarray(k, dtype=int), K_MAX), minlength=K_MAX + 1)[1:]
    return c


def _labels():
    return [str(k) for k in range(1, K_MAX)] + [f"{K_MAX}+"]


def _side_by_side(per_system, sigma_pop):
    ray = (per_system or {}).get("rayleigh") if isinstance(per_system, dict) else None
    return {
        "per_system_posteriors": {
            "sigma_deg": ray.get("sigma_deg") if ray else None,
            "n_planets": (per_system or {}).get("n_planets"),
            "assumptions": "tilts psi of the planets of transiting multis sampled per system by the joint model "
                           "and fitted as independent objects with the Hogg, Myers & Bovy (2010) estimator "
                           "(approximate: the planets of one system share a dispersion); uses the impact "
                           "parameters where given; only systems whose planets all transit, two or more; null "
                           "in --mode fast",
            "reason": None if ray else (per_system or {}).get("reason")},
        "transit_multiplicity": {
            "sigma_deg": sigma_pop,
            "assumptions": "counts of systems by number of transiting planets forward-modelled through transit "
                           "geometry (see 'model.assumptions'); uses every counted system, singles included; "
                           "no light-curve information"},
    }


def transit_multiplicity(groups, cmap, cat_columns, cat_units, settings=None, seed=0, per_system_fit=None):
    """The ``transit_multiplicity`` block of population.json (see module docstring); JSON-ready, no NaN."""
    from ..output.json_document import _finite
    return _finite(_block(groups, cmap, cat_columns, cat_units, settings, seed, per_system_fit))


def _block(groups, cmap, cat_columns, cat_units, settings, seed, per_system_fit):
    st = settings or MultiplicitySettings()
    if not st.planets:
        return {"fit": None, "reason": st.off_reason, "side_by_side": _side_by_side(per_system_fit, None)}
    rows, info = observed_transits(groups, cmap, cat_columns, cat_units, st.planets)
    P = np.array([r["period"] for r in rows], dtype=float)
    R = np.array([r["radius"] for r in rows], dtype=float)
    if st.period_day is None:
        prange = (float(P.min()), float(P.max())) if P.size else (0.0, math.inf)
    else:
        prange = tuple(float(x) for x in st.period_day)
    rrange = tuple(float(x) for x in st.radius_rearth) if st.radius_rearth else (0.0, math.inf)
    det = Detectability(prange, rrange)
    keep = det.passes(P, R) if P.size else np.zeros(0, bool)
    info["cut_by_period"] = int(np.sum(~((P >= prange[0]) & (P <= prange[1]))))
    info["cut_by_radius"] = int(np.sum(~keep)) - info["cut_by_period"]
    info["radius_unknown_kept"] = int(np.sum(keep & np.isnan(R)))
    kept = [r for r, k in zip(rows, keep) if k]
    systems = sorted({r["system"] for r in kept})
    pos = {s: i for i, s in enumerate(systems)}
    k = np.bincount([pos[r["system"]] for r in kept], minlength=len(systems))
    counts = _bins(k) if len(systems) else np.zeros(K_MAX, int)
    in_pool = [r for r in kept if math.isfinite(r["star_mass"]) and math.isfinite(r["star_radius"])]
    info["not_in_pool_no_star_mass_or_radius"] = len(kept) - len(in_pool)
    block = {
        "question": "how flat are planetary systems? population mutual-inclination dispersion from the numbers "
                    "of systems with k = 1, 2, ... transiting planets",
        "planets": st.planets,
        "systems": "the survey's --where selection (a selection on the number of planets biases these counts)",
        "detectability": {"period_day": list(prange), "radius_rearth": list(rrange) if st.radius_rearth else None,
                          "kind": "geometric only: no pipeline completeness"},
        "observed": {"labels": _labels(), "counts": counts.tolist(), "n_systems": int(len(systems)),
                     "n_planets": int(len(kept))},
        "excluded": info,
        "model": {"assumptions": ASSUMPTIONS, "n_max": N_MAX, "k_bins": _labels(), "min_hill": st.min_hill,
                  "periods": "resampled from the counted planets (weights a/(R* + Rp), jitter "
                             f"{PERIOD_JITTER_DEX} dex)",
                  "second_population": st.second_population, "pool_planets": len(in_pool), "systems_per_multiplicity": st.n_per_multiplicity,
                  "sigma_grid": {"n": st.n_grid, "deg": list(SIGMA_RANGE_DEG), "interpolation": "linear in ln sigma"},
                  "likelihood": "multinomial over k = 1..7+ conditioned on k >= 1, probabilities simulated with "
                                "common random numbers (fixed seed)",
                  "priors": {"sigma": f"log-uniform on [{SIGMA_RANGE_DEG[0]}, {SIGMA_RANGE_DEG[1]}] deg",
                             "mean_multiplicity": f"uniform on [1, {MBAR_MAX}] (flat population)",
                             "single_fraction": "uniform on [0, 1]"},
                  "sigma_definition": "Rayleigh dispersion of each planet's tilt from its system's reference "
                                      "plane; mutual inclinations of pairs then scatter with about sqrt(2) sigma",
                  "seed": int(seed)},
    }
    if len(systems) < MIN_SYSTEMS or counts[1:].sum() == 0 or not in_pool:
        block.update(fit=None, reason=f"{len(systems)} systems with counted transiting planets, "
                                      f"{int(counts[1:].sum())} with two or more, {len(in_pool)} pool planets "
                                      f"(need {MIN_SYSTEMS}, 1 and 1)",
                     side_by_side=_side_by_side(per_system_fit, None))
        return block
    pool = PlanetPool.from_transits([r["period"] for r in in_pool], [r["radius"] for r in in_pool],
                                    [r["star_mass"] for r in in_pool], [r["star_radius"] for r in in_pool])
    ratios = adjacent_ratios([r["system"] for r in kept], [r["period"] for r in kept])
    use = ratios if ratios.size >= MIN_RATIOS else None
    block["model"]["spacing"] = {
        "kind": "observed_ratios" if use is not None else "hill_packed", "n_ratios": int(ratios.size),
        "median_ratio": float(np.median(ratios)) if ratios.size else None,
        "assumption": SPACING_OBSERVED if use is not None else SPACING_PACKED}
    model = MultiplicityModel(pool, det, n_per_multiplicity=st.n_per_multiplicity, min_hill=st.min_hill,
                              seed=seed, spacing=use)
    cm = CountModel(model, n_grid=st.n_grid, second=st.second_population)
    rng = np.random.default_rng(np.random.SeedSequence([int(seed), 0x5EE]))
    n = int(counts.sum())
    kw = {"n_steps": st.n_steps, "n_burn": st.n_burn}
    mix = fit_counts(cm, counts, mixture=True, seed=seed + 1, **kw)
    one = fit_counts(cm, counts, mixture=False, seed=seed + 2, **kw)
    multis = fit_counts(cm, counts, mixture=False, bins=np.arange(1, K_MAX), seed=seed + 3, **kw)

    def public(fit):
        out = {k: v for k, v in fit.items() if k not in ("samples", "theta")}
        out["posterior_predictive"] = count_summary(posterior_predictive(cm, fit["theta"], n, rng))
        return out

    if mix["sigma_deg"]["lo95"] < 2.0 * SIGMA_RANGE_DEG[0]:
        block["sigma_follows_prior"] = True
        block["sigma_note"] = ("the counts do not resolve sigma below the width of the transit band (about R*/a): "
                               "the lower part of the sigma posterior follows the log-uniform prior down to "
                               f"{SIGMA_RANGE_DEG[0]} deg; quote the upper bounds (hi, hi95)")
    block["fit"] = {"two_populations": public(mix), "one_population": public(one),
                    "one_population_multis_only": {k: v for k, v in multis.items() if k not in ("samples", "theta")}}
    block["single_excess"] = single_excess(cm, counts, multis, rng)
    block["single_transit_probability"] = cm.single
    block["side_by_side"] = _side_by_side(per_system_fit, mix["sigma_deg"])
    return block


def summary_lines(pop):
    """Lines for the survey summary: the two mutual-inclination answers side by side, each with the counts
    it rests on, its assumptions' effect and its warnings; the 95 % upper bound where the posterior's lower
    part follows the prior."""
    b = pop.get("transit_multiplicity") or {}
    sbs = b.get("side_by_side") or {}
    out = []
    per = dict(sbs.get("per_system_posteriors") or {})
    full = pop.get("mutual_inclination_population") or {}
    per.update({k: full[k] for k in ("n_planets", "n_systems", "ess_warning") if full.get(k) is not None})
    ps = per.get("sigma_deg")
    tm = (sbs.get("transit_multiplicity") or {}).get("sigma_deg")

    def fmt(s):
        return f"{s['median']:.2g} deg (68 %: {s['lo']:.2g}-{s['hi']:.2g})" if s else "not available"
    if not sbs:
        return out
    line = f"mutual-inclination dispersion, per-system posteriors of transiting multis: {fmt(ps)}"
    if ps:
        line += f" from {_count_phrase(per)}"
    out.append(line)
    if ps and per.get("ess_warning"):
        out.append(f"warning: per-system posteriors: {per['ess_warning']}")
    obs = b.get("observed") or {}
    if tm and b.get("sigma_follows_prior") and tm.get("hi95") is not None:
        line = (f"mutual-inclination dispersion, transit multiplicity (geometric only): sigma < {tm['hi95']:.2g} deg "
                f"(95 % upper bound; below it the posterior follows the prior)")
    else:
        line = f"mutual-inclination dispersion, transit multiplicity (geometric only): {fmt(tm)}"
    if tm:
        sp = (b.get("model") or {}).get("spacing") or {}
        line += f" from {obs.get('n_systems', '?')} systems ({obs.get('n_planets', '?')} planets)"
        if sp.get("kind") == "observed_ratios":
            line += f"; spacing from {sp['n_ratios']} observed adjacent period ratios (median {sp['median_ratio']:.2f})"
        elif sp:
            line += "; spacing packed to the Hill minimum (sigma overestimated; see model.spacing)"
    out.append(line)
    return out


def _count_phrase(block):
    """'N planets in M systems' of a per-system fit block (what a population number rests on)."""
    n_pl, n_sys = block.get("n_planets"), block.get("n_systems")
    text = f"{n_pl if n_pl is not None else '?'} planets"
    if n_sys is not None:
        text += f" in {n_sys} systems"
    return text
