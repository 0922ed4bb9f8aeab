"""Room for unseen planets: could a test planet sit stably in a gap?

The packed-planetary-systems hypothesis (Barnes & Raymond 2004) says that
systems tend to be filled to capacity: no gap can hold another planet without
making the system unstable.  Fang & Margot (2013) asked the same question of
the Kepler multis with Hill-spacing criteria.  Here a test planet is put at
trial periods inside each gap, draw by draw, and kept where it passes every
criterion the tool already uses for real pairs:

* mutual Hill spacing at least ``min_hill`` from both neighbours
  (Chambers, Wetherill & Boss 1996 mutual Hill radius; :mod:`.hill`);
* the Gladman (1993) two-planet Hill criterion with both neighbours, with
  the neighbours' eccentricities (:func:`.hill.gladman_margin`);
* AMD stability (Laskar & Petit 2017 with the MMR-overlap correction of
  Petit, Laskar & Boue 2017) of the two new pairs, with the system's total
  AMD (:mod:`.amd`).

Assumptions (stated in every output): the test planet is on a circular orbit
in the system's reference plane, so it adds no AMD; its mass is given, by
default the geometric mean of its neighbours' masses.  Stability is judged by
these analytic criteria only, so a "fits" is a statistical estimate, not a
guarantee, and a test planet that passes them may still be destabilised over
Gyr by secular or resonant effects.

Internal units: day, au, M_sun, rad.  Draw arrays are ``(n_draws,)`` per
planet; trial periods add a trailing axis ``(n_draws, n_trial)``.

References
----------
.. [1] Barnes, R. & Raymond, S. N. 2004, ApJ 617, 569 (packed planetary systems).
.. [2] Fang, J. & Margot, J.-L. 2013, ApJ 767, 115 ("Are planetary systems filled to capacity?").
.. [3] Gladman, B. 1993, Icarus 106, 247.
.. [4] Laskar, J. & Petit, A. C. 2017, A&A 605, A72.
.. [5] Pu, B. & Wu, Y. 2015, ApJ 807, 44 (about 10 mutual Hill radii for Gyr stability).
"""
from __future__ import annotations

import numpy as np

from . import amd, hill, kepler

__all__ = ["MIN_HILL_SEPARATION", "N_TRIAL", "default_test_mass", "trial_periods", "gap_fit", "gap_room",
           "fit_range", "packed"]

#: Minimum spacing of the test planet from each neighbour, in mutual Hill radii.
#: About 10 R_H,m is the spacing below which circular, coplanar multi-planet
#: systems go unstable within Gyr (Pu & Wu 2015; Chambers, Wetherill & Boss 1996:
#: "systems with Delta < 10 are also unstable"); the same threshold as the
#: tool's spacing heuristic.
MIN_HILL_SEPARATION = 10.0
#: Trial periods per gap, log-spaced between the neighbours (resolution
#: ln(P_out/P_in)/N_TRIAL in ln P: 0.5 % for a factor-2 gap).
N_TRIAL = 128


def default_test_mass(m_in, m_out):
    """Geometric mean of the neighbours' masses, :math:`\\sqrt{m_{in} m_{out}}` [same unit]."""
    return np.sqrt(np.asarray(m_in, dtype=float) * np.asarray(m_out, dtype=float))


def trial_periods(p_in, p_out, n=N_TRIAL):
    """``n`` log-spaced periods strictly inside (p_in, p_out) (midpoints in ln P), shape (n,)."""
    if not (np.isfinite(p_in) and np.isfinite(p_out) and 0 < p_in < p_out):
        raise ValueError(f"need 0 < p_in < p_out; got {p_in!r}, {p_out!r}")
    x = (np.arange(n) + 0.5) / n
    return p_in * (p_out / p_in) ** x


def gap_fit(p_test, a_in, a_out, m_in, m_out, e_in, e_out, m_star, m_test, amd_total,
            min_hill=MIN_HILL_SEPARATION):
    """Which trial periods of one gap can hold the test planet, per draw and criterion.

    Parameters
    ----------
    p_test : array_like, shape (n_trial,) or (n_draws, n_trial)
        Trial periods [day], shared by every draw or one grid per draw.
    a_in, a_out, m_in, m_out, e_in, e_out : array_like, shape (n_draws,)
        Semi-major axes [au], masses [M_sun] and eccentricities of the inner
        and outer neighbour.
    m_star : array_like, shape (n_draws,)
        Stellar mass [M_sun].
    m_test : array_like, shape (n_draws,) or scalar
        Test-planet mass [M_sun].
    amd_total : array_like, shape (n_draws,)
        Total AMD of the system [M_sun au^2 / day] (:func:`.amd.system_amd`);
        the circular, coplanar test planet adds none.
    min_hill : float
        Minimum spacing from each neighbour [mutual Hill radii].

    Returns
    -------
    flags : dict of ndarray of bool, each (n_draws, n_trial)
        ``"hill_spacing"``, ``"gladman"``, ``"amd"`` and ``"fits"`` (all three).
        ``"amd"`` is evaluated only where both Hill criteria hold (False elsewhere).
    """
    col = [np.asarray(x, dtype=float)[..., None] for x in (a_in, a_out, m_in, m_out, e_in, e_out, m_star,
                                                             m_test, amd_total)]
    a1, a2, m1, m2, e1, e2, ms, mt, c_tot = col                           # (n_draws, 1)
    P = np.asarray(p_test, dtype=float)                                   # (n_trial,)
    at = kepler.a_au(P, ms + mt)                                          # (n_draws, n_trial)
    inside = (at > a1) & (at < a2)
    # keep the kernels' strict input checks away from trial points outside the gap
    at_ok = np.where(inside, at, 0.5 * (a1 + a2))
    d_in = hill.hill_separation(a1, at_ok, m1, mt, ms)
    d_out = hill.hill_separation(at_ok, a2, mt, m2, ms)
    hill_ok = inside & (d_in >= min_hill) & (d_out >= min_hill)
    glad_ok = inside & (hill.gladman_margin(a1, at_ok, m1, mt, ms, e1, 0.0) > 0.0) & (
        hill.gladman_margin(at_ok, a2, mt, m2, ms, 0.0, e2) > 0.0)
    # AMD stability of the two new pairs (inner, test) and (test, outer): beta = C / (Lambda' C_crit)
    # AMD stability of the two new pairs (inner, test) and (test, outer): beta = C / (Lambda' C_crit);
    # a zero critical AMD (first-order MMR overlap, Petit, Laskar & Boue 2017) is unstable, as in
    # amd.amd_beta.  Evaluated only where the Hill criteria pass (the bisection is the costly part);
    # the "amd" flag is therefore meaningful only where "hill_spacing" and "gladman" hold.
    cand = hill_ok & glad_ok
    amd_ok = np.zeros(cand.shape, dtype=bool)
    if cand.any():
        b = np.broadcast_arrays(a1, a2, m1, m2, ms, mt, c_tot, at_ok)
        A1, A2, M1, M2, MS, MT, C, AT = (x[cand] for x in b)
        den_in = amd.lambda_circ(MT, AT, MS) * amd.pair_critical_amd(A1 / AT, M1 / MT, (M1 + MT) / MS)
        den_out = amd.lambda_circ(M2, A2, MS) * amd.pair_critical_amd(AT / A2, MT / M2, (MT + M2) / MS)
        with np.errstate(divide="ignore", invalid="ignore"):
            beta_in = np.where(den_in > 0.0, C / den_in, np.inf)
            beta_out = np.where(den_out > 0.0, C / den_out, np.inf)
        amd_ok[cand] = (beta_in < 1.0) & (beta_out < 1.0)
    return {"hill_spacing": hill_ok, "gladman": glad_ok, "amd": amd_ok,
            "fits": hill_ok & glad_ok & amd_ok}


def _first_true(pred, lo, hi):
    """Per row, the first index in [lo, hi) where a predicate that is False ... False True ... True holds.

    ``pred(rows, idx)`` evaluates it at index ``idx[k]`` of row ``rows[k]``; ``hi`` where it never
    holds.  Bisection: ceil(log2(hi - lo + 1)) evaluations per row instead of hi - lo.
    """
    lo, hi = lo.copy(), hi.copy()
    rows = np.flatnonzero(lo < hi)
    while rows.size:
        mid = (lo[rows] + hi[rows]) // 2
        ok = pred(rows, mid)
        hi[rows[ok]] = mid[ok]
        lo[rows[~ok]] = mid[~ok] + 1
        rows = rows[lo[rows] < hi[rows]]
    return lo


def gap_room(p_test, a_in, a_out, m_in, m_out, e_in, e_out, m_star, m_test, amd_total,
             min_hill=MIN_HILL_SEPARATION):
    """Where the test planet fits on the trial grid of one gap, per draw, found by bisection.

    The same answer as :func:`gap_fit` (same arguments and criteria), without evaluating every
    trial period.  Every criterion with the inner neighbour holds from some trial period outwards
    (spacing, Gladman and AMD all grow with the distance from it) and every criterion with the outer
    neighbour up to some period, so each flag of :func:`gap_fit` is an interval of the grid, found from
    its two ends by bisection: about 2 x 3 x log2(n_trial) criterion evaluations per draw instead of
    n_trial x 6.  ``tests/test_packing.py`` checks it against :func:`gap_fit` draw by draw.

    Returns
    -------
    dict of ndarray, shape (n_draws,):
        ``fit_lo``/``fit_hi`` (int: first and last grid index where it fits; ``fit_lo > fit_hi`` where
        nowhere, their values then meaning nothing else), ``hill_spacing`` and ``gladman`` (bool: the criterion holds somewhere in the gap).
    """
    col = [np.asarray(x, dtype=float) for x in (a_in, a_out, m_in, m_out, e_in, e_out, m_star, m_test,
                                                amd_total)]
    a1, a2, m1, m2, e1, e2, ms, mt, c_tot = np.broadcast_arrays(*col)
    P = np.asarray(p_test, dtype=float)
    n = a1.shape[0]
    n_trial = P.shape[-1]

    def period(rows, idx):
        return P[idx] if P.ndim == 1 else P[rows, idx]

    def inner(kind):
        def pred(rows, idx):
            A1, A2, M1, MS, MT = a1[rows], a2[rows], m1[rows], ms[rows], mt[rows]
            at = kepler.a_au(period(rows, idx), MS + MT)
            out = at > A1
            at_ok = np.where(out, at, 0.5 * (A1 + A2))
            if kind == "hill":
                return out & (hill.hill_separation(A1, at_ok, M1, MT, MS) >= min_hill)
            if kind == "gladman":
                return out & (hill.gladman_margin(A1, at_ok, M1, MT, MS, e1[rows], 0.0) > 0.0)
            den = amd.lambda_circ(MT, at_ok, MS) * amd.pair_critical_amd(A1 / at_ok, M1 / MT, (M1 + MT) / MS)
            with np.errstate(divide="ignore", invalid="ignore"):
                beta = np.where(den > 0.0, c_tot[rows] / den, np.inf)
            return out & (beta < 1.0)
        return pred

    def outer(kind):
        # evaluated on the reversed grid, so that it also reads False ... False True ... True
        def pred(rows, ridx):
            idx = n_trial - 1 - ridx
            A1, A2, M2, MS, MT = a1[rows], a2[rows], m2[rows], ms[rows], mt[rows]
            at = kepler.a_au(period(rows, idx), MS + MT)
            out = at < A2
            at_ok = np.where(out, at, 0.5 * (A1 + A2))
            if kind == "hill":
                return out & (hill.hill_separation(at_ok, A2, MT, M2, MS) >= min_hill)
            if kind == "gladman":
                return out & (hill.gladman_margin(at_ok, A2, MT, M2, MS, 0.0, e2[rows]) > 0.0)
            den = amd.lambda_circ(M2, A2, MS) * amd.pair_critical_amd(at_ok / A2, MT / M2, (MT + M2) / MS)
            with np.errstate(divide="ignore", invalid="ignore"):
                beta = np.where(den > 0.0, c_tot[rows] / den, np.inf)
            return out & (beta < 1.0)
        return pred

    start, stop = np.zeros(n, dtype=np.intp), np.full(n, n_trial, dtype=np.intp)
    lo = {k: _first_true(inner(k), start, stop) for k in ("hill", "gladman")}
    hi = {k: n_trial - 1 - _first_true(outer(k), start, stop) for k in ("hill", "gladman")}
    # AMD (the costly criterion) only inside the interval both Hill criteria allow, from its two ends
    first = np.maximum(lo["hill"], lo["gladman"])
    last = np.minimum(hi["hill"], hi["gladman"])
    fit_lo = _first_true(inner("amd"), first, np.maximum(last + 1, first))
    fit_hi = n_trial - 1 - _first_true(outer("amd"), n_trial - 1 - last, np.maximum(n_trial - fit_lo, n_trial - 1 - last))
    return {"fit_lo": fit_lo, "fit_hi": fit_hi, "hill_spacing": lo["hill"] <= hi["hill"],
            "gladman": lo["gladman"] <= hi["gladman"]}


def fit_range(p_test, fits):
    """Per draw: does anything fit, and the lowest and highest trial period that fits.

    Parameters
    ----------
    p_test : array_like, shape (n_trial,) or (n_draws, n_trial)
        Trial periods, shared by every draw or one grid per draw.
    fits : array_like of bool, shape (n_draws, n_trial)

    Returns
    -------
    any_fit : ndarray of bool, shape (n_draws,)
    p_lo, p_hi : ndarray, shape (n_draws,)
        NaN where nothing fits.  The criteria are monotonic in the test
        planet's distance from each neighbour, so the fitting periods form one
        interval [p_lo, p_hi] (to the trial-grid resolution).
    """
    P = np.asarray(p_test, dtype=float)
    f = np.asarray(fits, dtype=bool)
    any_fit = f.any(axis=-1)
    first = np.argmax(f, axis=-1)
    last = f.shape[-1] - 1 - np.argmax(f[..., ::-1], axis=-1)
    if P.ndim == 1:
        p_first, p_last = P[first], P[last]
    else:
        p_first = np.take_along_axis(P, first[..., None], axis=-1)[..., 0]
        p_last = np.take_along_axis(P, last[..., None], axis=-1)[..., 0]
    return any_fit, np.where(any_fit, p_first, np.nan), np.where(any_fit, p_last, np.nan)


def packed(any_fit_per_gap):
    """System "packed" per draw: no gap can hold a test planet.

    Parameters
    ----------
    any_fit_per_gap : array_like of bool, shape (n_draws, n_gaps)

    Returns
    -------
    ndarray of bool, shape (n_draws,)
    """
    return ~np.any(np.asarray(any_fit_per_gap, dtype=bool), axis=-1)
