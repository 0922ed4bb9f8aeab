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

__all__ = ["packing_block", "packing_arrays", "packing_summary", "thinned", "room_intervals", "MAX_DRAWS", "MAX_DRAWS_FAST", "SHADE_PROBABILITY"]

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
        return packing.default_test_mass(m_in, m_out)
    return np.full(m_in.shape, float(test_mass_mearth) * MEARTH_MSUN)


def _test_mass_note(test_mass_mearth):
    if test_mass_mearth is None:
        return "geometric mean of the neighbours' masses"
    return f"{test_mass_mearth:g} Earth masses (given)"


def thinned(n, max_draws):
    """Indices of the draws the room grid uses: at most ``max_draws`` of ``n``, evenly thinned (as Posterior.subset)."""
    return np.arange(n) if max_draws >= n else np.linspace(0, n - 1, max_draws).round().astype(int)


def _gap_ends(P, j):
    """Ends of gap ``j``'s trial grid: the median periods of its neighbours over the draws ``P`` of one posterior."""
    return np.nanmedian(P[:, j]), np.nanmedian(P[:, j + 1])


def packing_arrays(post, test_mass_mearth=None, min_hill=packing.MIN_HILL_SEPARATION,
                   max_draws=MAX_DRAWS, n_trial=packing.N_TRIAL, segments=None):
    """Per-draw room arrays of a posterior (or of posteriors stacked one after the other), or None.

    ``segments``: the number of draws of each stacked posterior (None: one posterior).  Each
    posterior is thinned to ``max_draws`` draws (:func:`thinned`) and gets its own trial grid per
    gap (log-spaced between its median neighbour periods); every returned array has a row per draw
    of ``post`` and is NaN (False) on the draws left out by the thinning, so a posterior's rows
    depend on its own draws only.

    Returns
    -------
    dict of arrays, ``(n_draws, n_gaps)`` unless stated: ``room_any_fit`` (1/0, NaN where the draw is
    unusable or thinned out), ``room_p_lo``/``room_p_hi`` [day] (NaN where nothing fits),
    ``room_m_test`` [M_sun], ``room_hill_any``/``room_gladman_any`` (1/0, NaN where not tested) and
    ``room_fit_lo``/``room_fit_hi`` (first and last index of the gap's trial grid where the test planet
    fits, :func:`~archsys.physics.packing.gap_room`; NaN where not tested) and ``room_grid_in``/
    ``room_grid_out`` (the ends of the posterior's trial grid: its median neighbour periods [day]).
    """
    if post.system.n_planets < 2:
        return None
    n_all = post.n_draws
    segs = tuple(segments) if segments else (n_all,)
    starts = np.cumsum((0,) + segs)[:-1]
    picks = [thinned(k, max_draws) for k in segs]
    rows = np.concatenate([s0 + p for s0, p in zip(starts, picks)])
    sub = post.take(rows) if rows.size != n_all else post
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
    n_gaps = P.shape[1] - 1
    sizes = [p.size for p in picks]
    sub_edges = np.cumsum([0] + sizes)
    out = {k: np.full((n_all, n_gaps), np.nan) for k in
           ("room_any_fit", "room_p_lo", "room_p_hi", "room_m_test", "room_hill_any", "room_gladman_any",
            "room_fit_lo", "room_fit_hi", "room_grid_in", "room_grid_out")}
    for j in range(n_gaps):
        # one grid per posterior, from its own (thinned) draws; rows of the stack take their posterior's
        ends = [_gap_ends(P[lo:hi], j) for lo, hi in zip(sub_edges[:-1], sub_edges[1:])]
        grids = [packing.trial_periods(p_in, p_out, n_trial) for p_in, p_out in ends]
        grid = grids[0][None, :] if len(grids) == 1 else np.repeat(np.stack(grids), sizes, axis=0)
        out["room_grid_in"][rows, j] = np.repeat([e[0] for e in ends], sizes)
        out["room_grid_out"][rows, j] = np.repeat([e[1] for e in ends], sizes)
        m_t = _test_mass_msun(m[:, j], m[:, j + 1], test_mass_mearth)
        out["room_m_test"][rows, j] = m_t
        ok = usable & np.isfinite(m_t) & (m_t > 0)
        if ok.any():
            g = grid[0] if grid.shape[0] == 1 else grid[ok]
            room = packing.gap_room(g, a[ok, j], a[ok, j + 1], m[ok, j], m[ok, j + 1], e[ok, j], e[ok, j + 1],
                                    ms[ok], m_t[ok], c_tot[ok], min_hill=min_hill)
            lo_i, hi_i = room["fit_lo"], room["fit_hi"]
            fits = lo_i <= hi_i
            p_lo = g[lo_i.clip(max=n_trial - 1)] if g.ndim == 1 else np.take_along_axis(
                g, lo_i.clip(max=n_trial - 1)[:, None], axis=1)[:, 0]
            p_hi = g[hi_i.clip(min=0)] if g.ndim == 1 else np.take_along_axis(g, hi_i.clip(min=0)[:, None], axis=1)[:, 0]
            r = rows[ok]
            out["room_any_fit"][r, j] = fits
            out["room_p_lo"][r, j] = np.where(fits, p_lo, np.nan)
            out["room_p_hi"][r, j] = np.where(fits, p_hi, np.nan)
            out["room_hill_any"][r, j] = room["hill_spacing"]
            out["room_gladman_any"][r, j] = room["gladman"]
            out["room_fit_lo"][r, j], out["room_fit_hi"][r, j] = lo_i, hi_i
    return out


def _grid_of(arr, row, j, n_trial):
    """Gap ``j``'s trial grid, from the ends :func:`packing_arrays` recorded on the posterior's draw ``row``."""
    return packing.trial_periods(arr["room_grid_in"][row, j], arr["room_grid_out"][row, j], n_trial)


def _shade_interval(grid, lo, hi):
    """[P_lo, P_hi] where the test planet fits in >= SHADE_PROBABILITY of the draws, or None.

    ``lo``, ``hi``: per tested draw, the first and last grid index where it fits (``lo > hi``: nowhere).
    """
    if lo is None:
        return None
    idx = np.arange(grid.size)
    frac = ((idx >= lo[:, None]) & (idx <= hi[:, None])).mean(axis=0)
    inside = np.flatnonzero(frac >= SHADE_PROBABILITY)
    if inside.size == 0:
        return None
    return [float(grid[inside[0]]), float(grid[inside[-1]])]


def _assumptions(min_hill):
    return ("test planet on a circular orbit in the reference plane; fits where it is at least "
            f"{min_hill:g} mutual Hill radii from both neighbours, Hill stable with both "
            "(Gladman 1993) and the new pairs are AMD stable (Laskar & Petit 2017); "
            "masses are m sin i where the true mass is unknown; analytic criteria, not a guarantee")


def packing_summary(post, arr, test_mass_mearth=None, min_hill=packing.MIN_HILL_SEPARATION,
                    max_draws=MAX_DRAWS, n_trial=packing.N_TRIAL):
    """JSON-ready keys of one posterior from its :func:`packing_arrays` rows (see :func:`packing_block`)."""
    rows = thinned(post.n_draws, max_draws)
    mass_note = _test_mass_note(test_mass_mearth)
    pairs, fit_cols = [], []
    for j in range(arr["room_any_fit"].shape[1]):
        any_fit = arr["room_any_fit"][rows, j]
        p_lo, p_hi = arr["room_p_lo"][rows, j], arr["room_p_hi"][rows, j]
        known = np.isfinite(any_fit)
        fits = any_fit[known] > 0.5
        fit_cols.append(any_fit)
        entry = {"room_fit_probability": probability(fits) if known.any() else None,
                 "room_fit_period_min_day": summarize(p_lo) if np.isfinite(p_lo).any() else None,
                 "room_fit_period_max_day": summarize(p_hi) if np.isfinite(p_hi).any() else None,
                 "room_fit_interval_day": _shade_interval(
                     _grid_of(arr, rows[0], j, n_trial), *((arr["room_fit_lo"][rows[known], j], arr["room_fit_hi"][rows[known], j])
                                                 if known.any() else (None, None))),
                 "room_test_mass_mearth": summarize(arr["room_m_test"][rows, j] / MEARTH_MSUN),
                 "room_test_mass_basis": mass_note}
        if known.any():
            for k, key in (("hill_spacing", "room_hill_any"), ("gladman", "room_gladman_any")):
                entry[f"room_{k}_pass_probability"] = probability(arr[key][rows[known], j] > 0.5)
        pairs.append(entry)
    cols = np.stack(fit_cols, axis=1)                                  # (n, n_gaps)
    known = np.all(np.isfinite(cols), axis=1)
    system = {"packing": {
        "packed_probability": probability(packing.packed(cols[known] > 0.5)) if known.any() else None,
        "draws": int(known.sum()),
        "assumptions": _assumptions(min_hill),
        "citation": CITATION,
    }}
    return pairs, system


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
    return packing_summary(post, arr, test_mass_mearth, min_hill, max_draws)


def room_intervals(document):
    """Period intervals [day] where a test planet fits in at least half the draws, from a report document.

    For the architecture figure's shading: a list of ``[start, end]`` pairs, one per gap with room.
    """
    return [list(q["room_fit_interval_day"]) for q in document.get("pairs", []) or []
            if q.get("room_fit_interval_day")]


_D = dict(unit="d", unit_latex="d", unit_astropy="d")


class RoomForPlanetsScore(Score):
    table_group = "predictions"      # tables: the pair/planet predictions table (output.table_model)
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

    @staticmethod
    def _settings(opts):
        fast = str(getattr(getattr(opts, "mode", None), "value", getattr(opts, "mode", ""))) == "fast"
        return getattr(opts, "test_planet_mass", None), (MAX_DRAWS_FAST if fast else MAX_DRAWS)

    def batch_key(self, ctx):
        return self._settings(ctx.options)

    def per_draw(self, ctx):
        mass, max_draws = self._settings(ctx.options)
        return packing_arrays(ctx.post, mass, max_draws=max_draws, segments=ctx.segments)

    def summarise(self, ctx, arrays):
        if "room_any_fit" not in arrays:
            return ScoreResult()
        mass, max_draws = self._settings(ctx.options)
        pairs, system = packing_summary(ctx.post, arrays, mass, max_draws=max_draws)
        return ScoreResult(pairs=pairs, system=system)

    def verdicts(self, ctx):
        p = (ctx.system.get("packing") or {}).get("packed_probability")
        if p is None:
            return []
        return [verdict("system_packed", p, ctx.names,
                        criterion="no gap can hold a test planet (Hill spacing, Gladman and AMD criteria)",
                        citation="Barnes & Raymond 2004; Fang & Margot 2013")]


register(RoomForPlanetsScore)
