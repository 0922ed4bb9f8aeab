"""Room for unseen planets in each gap, and the probability that the system is packed.

For each adjacent gap and posterior draw, a test planet is placed at trial
periods between the neighbours and kept where it passes the Hill-spacing
threshold, the Gladman (1993) criterion and AMD stability
(:func:`archsys.physics.packing.gap_fit`).  Reported per gap: the probability
that it fits somewhere, the posterior of the lowest and highest period where it
fits, and the period interval where it fits in at least half of the draws (the
interval shaded on the architecture figure).  The system is "packed" in a draw
when no gap can hold one (Barnes & Raymond 2004; Fang & Margot 2013).
"""
from __future__ import annotations

import numpy as np

from ..inference.summary import probability, summarize
from ..physics import amd, packing
from ..physics.constants import MEARTH_MSUN
from ..inference.stability import amd_inclinations
from .common import effective_mass
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["packing_block", "packing_arrays", "room_intervals", "MAX_DRAWS", "MAX_DRAWS_FAST", "SHADE_PROBABILITY"]

#: Draws used (evenly thinned): the grid costs n_draws x N_TRIAL per gap.
MAX_DRAWS = 1000
#: Draws used in the survey's fast mode (probabilities to about +/- 3 %).
MAX_DRAWS_FAST = 250
#: A trial period is shaded on the figure where the test planet fits in at
#: least this fraction of the draws.
SHADE_PROBABILITY = 0.5

CITATION = "Barnes & Raymond 2004; Fang & Margot 2013; criteria: Gladman 1993, Laskar & Petit 2017"


def _test_mass_msun(m_in, m_out, test_mass_mearth):
    if test_mass_mearth is None:
        return packing.default_test_mass(m_in, m_out), "geometric mean of the neighbours' masses"
    return np.full(m_in.shape, float(test_mass_mearth) * MEARTH_MSUN), f"{test_mass_mearth:g} Earth masses (given)"


def packing_arrays(post, test_mass_mearth=None, min_hill=packing.MIN_HILL_SEPARATION,
                   max_draws=MAX_DRAWS, n_trial=packing.N_TRIAL):
    """Per-gap arrays over a thinned set of draws, or None with fewer than two planets.

    Returns
    -------
    dict with ``gaps`` (list of dicts: ``p_test`` (n_trial,), ``flags`` from
    :func:`~archsys.physics.packing.gap_fit` restricted to usable draws,
    ``any_fit``/``p_lo``/``p_hi`` (n_draws,) with NaN rows for unusable draws,
    ``m_test`` [M_sun]) and ``mass_basis``.
    """
    if post.system.n_planets < 2:
        return None
    sub = post.subset(max_draws)
    m = effective_mass(sub)                                            # (n, n_planets) M_sun
    a, e, P = sub["a"], sub["ecc"], sub["period"]
    inc, _ = amd_inclinations(sub, m)                                  # from the invariable plane
    ms = np.asarray(sub["m_star"], dtype=float)
    usable = (np.all(np.isfinite(m) & (m > 0), axis=1) & np.all(np.isfinite(a) & np.isfinite(e), axis=1)
              & np.all(np.diff(a, axis=1) > 0, axis=1) & np.all(np.isfinite(inc), axis=1))
    n = m.shape[0]
    c_tot = np.full(n, np.nan)
    if usable.any():
        c_tot[usable] = amd.system_amd(m[usable], a[usable], e[usable], inc[usable], ms[usable])
    gaps = []
    for j in range(P.shape[1] - 1):
        p_in, p_out = np.nanmedian(P[:, j]), np.nanmedian(P[:, j + 1])
        grid = packing.trial_periods(p_in, p_out, n_trial)
        m_t, mass_note = _test_mass_msun(m[:, j], m[:, j + 1], test_mass_mearth)
        any_fit = np.full(n, np.nan)
        lo, hi = np.full(n, np.nan), np.full(n, np.nan)
        flags = None
        ok = usable & np.isfinite(m_t) & (m_t > 0)
        if ok.any():
            flags = packing.gap_fit(grid, a[ok, j], a[ok, j + 1], m[ok, j], m[ok, j + 1], e[ok, j], e[ok, j + 1],
                                    ms[ok], m_t[ok], c_tot[ok], min_hill=min_hill)
            f, lo[ok], hi[ok] = packing.fit_range(grid, flags["fits"])
            any_fit[ok] = f
        gaps.append({"p_test": grid, "flags": flags, "any_fit": any_fit, "p_lo": lo, "p_hi": hi,
                     "m_test": m_t, "mass_note": mass_note})
    return {"gaps": gaps, "usable": usable}


def _shade_interval(grid, flags):
    """[P_lo, P_hi] where the test planet fits in >= SHADE_PROBABILITY of the draws, or None."""
    if flags is None:
        return None
    frac = flags["fits"].mean(axis=0)
    inside = np.flatnonzero(frac >= SHADE_PROBABILITY)
    if inside.size == 0:
        return None
    return [float(grid[inside[0]]), float(grid[inside[-1]])]


def packing_block(post, test_mass_mearth=None, min_hill=packing.MIN_HILL_SEPARATION, max_draws=MAX_DRAWS):
    """JSON-ready keys: (one mapping per adjacent pair, system-level ``{"packing": ...}``), or None.

    Pair keys: ``room_fit_probability``, ``room_fit_period_min_day`` and
    ``room_fit_period_max_day`` (posteriors over the draws where it fits),
    ``room_fit_interval_day`` ([start, end] where it fits in at least half the
    draws, or None), ``room_test_mass_mearth``, ``room_test_mass_basis``,
    ``room_hill_spacing_pass_probability``, ``room_gladman_pass_probability``.
    """
    arr = packing_arrays(post, test_mass_mearth, min_hill, max_draws=max_draws)
    if arr is None:
        return None
    pairs = []
    fit_cols = []
    for g in arr["gaps"]:
        known = np.isfinite(g["any_fit"])
        fits = g["any_fit"][known] > 0.5
        fit_cols.append(g["any_fit"])
        entry = {"room_fit_probability": probability(fits) if known.any() else None,
                 "room_fit_period_min_day": summarize(g["p_lo"]) if np.isfinite(g["p_lo"]).any() else None,
                 "room_fit_period_max_day": summarize(g["p_hi"]) if np.isfinite(g["p_hi"]).any() else None,
                 "room_fit_interval_day": _shade_interval(g["p_test"], g["flags"]),
                 "room_test_mass_mearth": summarize(g["m_test"] / MEARTH_MSUN),
                 "room_test_mass_basis": g["mass_note"]}
        if g["flags"] is not None:
            for k in ("hill_spacing", "gladman"):
                entry[f"room_{k}_pass_probability"] = probability(g["flags"][k].any(axis=1))
        pairs.append(entry)
    cols = np.stack(fit_cols, axis=1)                                  # (n, n_gaps)
    known = np.all(np.isfinite(cols), axis=1)
    system = {"packing": {
        "packed_probability": probability(packing.packed(cols[known] > 0.5)) if known.any() else None,
        "draws": int(known.sum()),
        "assumptions": ("test planet on a circular orbit in the reference plane; fits where it is at least "
                        f"{min_hill:g} mutual Hill radii from both neighbours, Hill stable with both "
                        "(Gladman 1993) and the new pairs are AMD stable (Laskar & Petit 2017); "
                        "masses are m sin i where the true mass is unknown; analytic criteria, not a guarantee"),
        "citation": CITATION,
    }}
    return pairs, system


def room_intervals(document):
    """Period intervals [day] where a test planet fits in at least half the draws, from a report document.

    For the architecture figure's shading: a list of ``[start, end]`` pairs, one per gap with room.
    """
    return [list(q["room_fit_interval_day"]) for q in document.get("pairs", []) or []
            if q.get("room_fit_interval_day")]


_D = dict(unit="d", unit_latex="d", unit_astropy="d")


class RoomForPlanetsScore(Score):
    name = "room_for_planets"
    order = 86
    columns = (
        Column("room_fit_probability", "room for a planet", "Room for a planet", fmt="percent",
               description="draws in which a test planet fits in the gap (Barnes & Raymond 2004)"),
        Column("room_fit_period_min_day", "room from P", r"Room from $P$", **_D,
               description="lowest period where the test planet fits (draws where it fits)"),
        Column("room_fit_period_max_day", "room up to P", r"Room up to $P$", **_D,
               description="highest period where the test planet fits (draws where it fits)"),
        Column("room_fit_interval_day", "room interval", "Room interval", fmt="text", show=False,
               description="[start, end] where it fits in at least half the draws (shaded on the figure)"),
        Column("room_test_mass_mearth", "test-planet mass", r"$M_\mathrm{test}$", "M⊕", r"$M_\oplus$",
               unit_astropy="earthMass"),
        Column("room_test_mass_basis", "test-planet mass basis", "Test-planet mass basis", fmt="text", show=False),
        Column("room_hill_spacing_pass_probability", "room by Hill spacing", "Room by Hill spacing",
               fmt="percent", show=False),
        Column("room_gladman_pass_probability", "room by Gladman", "Room by Gladman", fmt="percent", show=False),
        Column("packing.packed_probability", "system packed (no gap holds a test planet)",
               "System packed (no gap holds a test planet)", fmt="percent", table="system"),
        Column("packing.draws", "packing draws", "Packing draws", fmt="integer", table="system", show=False),
        Column("packing.assumptions", "packing assumptions", "Packing assumptions", fmt="text", table="system"),
        Column("packing.citation", "packing citation", "Packing citation", fmt="text", table="system",
               show=False),
    )

    def summarise(self, ctx, arrays):
        opts = ctx.options
        fast = str(getattr(getattr(opts, "mode", None), "value", getattr(opts, "mode", ""))) == "fast"
        res = packing_block(ctx.post, test_mass_mearth=getattr(opts, "test_planet_mass", None),
                            max_draws=MAX_DRAWS_FAST if fast else MAX_DRAWS)
        if res is None:
            return ScoreResult()
        return ScoreResult(pairs=res[0], system=res[1])

    def verdicts(self, ctx):
        p = (ctx.system.get("packing") or {}).get("packed_probability")
        if p is None:
            return []
        return [verdict("system_packed", p, ctx.names,
                        criterion="no gap can hold a test planet (Hill spacing, Gladman and AMD criteria)",
                        citation="Barnes & Raymond 2004; Fang & Margot 2013")]


register(RoomForPlanetsScore)
