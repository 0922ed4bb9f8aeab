"""Forward model of transit multiplicity: how many planets of a system does a random observer see transit?

Intrinsic systems
-----------------
* Multiplicity: a fraction ``1 - f`` of the planet-hosting stars holds a
  *flat* system whose number of planets ``N`` follows a Poisson law truncated
  to ``1 <= N <= n_max`` (zero-truncated Poisson, also truncated above); its
  mean ``mbar`` is a model parameter.  The other fraction ``f`` holds one
  planet only: intrinsically single planets, or dynamically hot systems whose
  other planets never transit with it (the two are the same for transit
  counts to first order).  ``f = 0`` is the one-population model.  As an
  alternative second population (``second="isotropic"``), the fraction ``f``
  holds dynamically hot systems with the same multiplicity law whose orbit
  normals are mutually isotropic (:meth:`MultiplicityModel.hot_tables`).
* Planets: ``(P, Rp)`` pairs resampled from a pool of observed transiting
  planets with weights ``1/epsilon = a/(R* + Rp)`` (inverse geometric transit
  probability, so the pool stands for the intrinsic distribution), each period
  jittered by :data:`PERIOD_JITTER_DEX` (log-normal); or periods from a broken
  power law :class:`PeriodLaw`.  Each system's star (mass, radius) is drawn
  from the pool's hosts with the same weights.
* Spacing: with ``spacing`` (an array of observed adjacent period ratios,
  e.g. of the catalogue's multi-transit systems) each system's periods are a
  chain of ratios resampled from it, anchored at one planet (a random slot)
  whose period comes from the pool; without it the periods are independent
  pool draws.  Either way the planets are then sorted by period and outer
  planets pushed out until adjacent pairs are at least ``min_hill`` mutual
  Hill radii apart (Gladman 1993); masses from radii (Weiss & Marcy 2014
  relation of :mod:`archsys.physics.massradius`; unknown radius: the pool's
  median).  Packing to the Hill minimum alone gives period ratios near 1.1,
  much tighter than observed multis (ratios mostly above 1.3), which makes
  systems transit together more often and inflates sigma.
* Orientation: each orbit normal is tilted from a reference plane by ``psi ~
  Rayleigh(sigma)`` at a uniform node; observers are isotropic (sampled with
  the band importance weight of :mod:`archsys.physics.multitransit`).
* Detection: geometric transit ``|cos i_sky| < (R* + Rp)/a``, circular orbits,
  and a user-given detectability cut in period and radius.  **Geometric
  only**: no pipeline completeness (signal-to-noise, number of transits,
  duty cycle) is modelled.

Arrays
------
Systems of one multiplicity ``N`` are dense ``(n_systems, N)`` arrays, so no
slot is padding; Python loops run only over ``N <= n_max``, over the planet
slots of the spacing step and over the sigma grid, never over systems.

Tables
------
Given ``N``, the distribution of the number ``k`` of transiting detectable
planets does not depend on ``mbar`` or ``f``; only ``sigma`` needs
simulation.  :meth:`MultiplicityModel.tables` computes ``A[s, N, k] = P(k
transits | N planets, sigma_s)`` on a grid of ``sigma`` with common random
numbers (the same base variates for every ``sigma``: tilts are ``sigma``
times one fixed standard Rayleigh draw), so the tables are smooth in
``sigma``; ``mbar`` and ``f`` enter analytically.

References
----------
.. [1] Lissauer, J. J. et al. 2011, ApJS 197, 8
.. [2] Fang, J. & Margot, J.-L. 2012, ApJ 761, 92
.. [3] Gladman, B. 1993, Icarus 106, 247
.. [4] Weiss, L. M. & Marcy, G. W. 2014, ApJ 783, L6
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..physics.constants import MEARTH_MSUN
from ..physics.massradius import mass_from_radius_mearth
from ..physics.multitransit import (band_halfwidth, enforce_spacing, semi_major_axis_au, transit_halfwidth,
                                    transit_mask)

__all__ = ["PlanetPool", "PeriodLaw", "Detectability", "MultiplicityModel", "truncated_poisson_pmf",
           "poisson_rate_for_mean", "simulate_counts", "N_MAX", "K_MAX", "PERIOD_JITTER_DEX",
           "GLADMAN_HILL", "adjacent_ratios", "check_ratios"]

#: Largest intrinsic multiplicity simulated (the Poisson law is truncated there).
N_MAX = 10
#: Transit multiplicities are counted in bins 1, ..., K_MAX - 1 and ">= K_MAX".
K_MAX = 7
#: Log-normal jitter of resampled periods [dex] (avoids identical periods; a choice).
PERIOD_JITTER_DEX = 0.02
#: Default minimum spacing: 2 sqrt(3) mutual Hill radii (Gladman 1993, two planets on circular orbits).
GLADMAN_HILL = 2.0 * math.sqrt(3.0)


@dataclass(frozen=True)
class PlanetPool:
    """Observed transiting planets that stand for the intrinsic (P, Rp) and host distributions.

    ``weight`` is normalised to 1; :meth:`from_transits` sets it to the inverse
    geometric transit probability ``a / (R* + Rp)``.
    """

    period_day: np.ndarray
    radius_rearth: np.ndarray      # NaN where unknown
    star_mass_msun: np.ndarray
    star_radius_rsun: np.ndarray
    weight: np.ndarray

    @classmethod
    def from_transits(cls, period_day, radius_rearth, star_mass_msun, star_radius_rsun):
        P, R, M, S = (np.asarray(x, dtype=float) for x in (period_day, radius_rearth, star_mass_msun,
                                                            star_radius_rsun))
        if P.size == 0:
            raise ValueError("the planet pool is empty: no transiting planet with period and host mass/radius")
        if not (np.all(np.isfinite(P) & (P > 0)) and np.all(np.isfinite(M) & (M > 0))
                and np.all(np.isfinite(S) & (S > 0))):
            raise ValueError("pool periods, stellar masses and radii must be finite and positive")
        w = 1.0 / transit_halfwidth(semi_major_axis_au(P, M), S, R)
        return cls(P, R, M, S, w / w.sum())

    @property
    def size(self):
        return int(self.period_day.size)


@dataclass(frozen=True)
class PeriodLaw:
    """Broken power law ``dN/dlnP ~ P^alpha1`` below ``p_break``, ``P^alpha2`` above, on [p_lo, p_hi] (days).

    The default shape (rising to about 10 d, flat beyond) follows the common
    description of Kepler occurrence rates (from memory, e.g. Youdin 2011);
    it is a choice to be stated, not a fit.
    """

    p_lo: float = 0.5
    p_break: float = 10.0
    p_hi: float = 500.0
    alpha1: float = 1.5
    alpha2: float = 0.0

    def sample(self, u):
        """Inverse-CDF draws for uniforms ``u`` (any shape)."""
        x0, xb, x1 = math.log(self.p_lo), math.log(self.p_break), math.log(self.p_hi)

        def seg(a, lo, hi):       # integral of exp(a x) over [lo, hi], relative to exp(a xb)
            return (hi - lo) if a == 0 else (math.exp(a * (hi - xb)) - math.exp(a * (lo - xb))) / a

        def inv(a, lo, v):        # x such that seg(a, lo, x) = v
            return lo + v if a == 0 else xb + np.log(np.exp(a * (lo - xb)) + a * v) / a

        w1, w2 = seg(self.alpha1, x0, xb), seg(self.alpha2, xb, x1)
        v = np.asarray(u, dtype=float) * (w1 + w2)
        x = np.where(v < w1, inv(self.alpha1, x0, np.minimum(v, w1)), inv(self.alpha2, xb, np.maximum(v - w1, 0)))
        return np.exp(np.clip(x, x0, x1))


@dataclass(frozen=True)
class Detectability:
    """Geometric-only detectability cut: period and radius limits (inclusive).

    A planet without a known radius passes the radius cut (it cannot be
    tested); the block counts such planets.
    """

    period_day: tuple = (0.0, math.inf)
    radius_rearth: tuple = (0.0, math.inf)

    def passes(self, period_day, radius_rearth):
        P = np.asarray(period_day, dtype=float)
        R = np.asarray(radius_rearth, dtype=float)
        ok_r = np.isnan(R) | ((R >= self.radius_rearth[0]) & (R <= self.radius_rearth[1]))
        return (P >= self.period_day[0]) & (P <= self.period_day[1]) & ok_r


def truncated_poisson_pmf(lam, n_max=N_MAX):
    """P(N) for N = 1..n_max of a Poisson(lam) truncated to [1, n_max]; ``lam`` shaped (W,) -> (W, n_max)."""
    lam = np.atleast_1d(np.asarray(lam, dtype=float))
    n = np.arange(1, n_max + 1)
    from scipy.special import gammaln
    logp = n[None, :] * np.log(np.maximum(lam, 1e-300))[:, None] - gammaln(n + 1)[None, :]
    logp -= logp.max(axis=1, keepdims=True)
    p = np.exp(logp)
    return p / p.sum(axis=1, keepdims=True)


_LAM_GRID = np.geomspace(1e-6, 400.0, 6000)


def _mean_table(n_max):
    return truncated_poisson_pmf(_LAM_GRID, n_max) @ np.arange(1, n_max + 1)


_MEANS = {}


def poisson_rate_for_mean(mean, n_max=N_MAX):
    """The Poisson rate whose [1, n_max]-truncated law has the given mean (vectorised; monotone inverse)."""
    if n_max not in _MEANS:
        _MEANS[n_max] = np.maximum.accumulate(_mean_table(n_max))
    return np.interp(np.asarray(mean, dtype=float), _MEANS[n_max], _LAM_GRID)


# --------------------------------------------------------------------------
# drawing systems of one multiplicity
# --------------------------------------------------------------------------

def _draw_group(n, m, pool, detect, rng, min_hill, periods, spacing=None):
    """Everything about ``m`` systems of ``n`` planets that does not depend on sigma."""
    cdf = np.cumsum(pool.weight)
    cdf /= cdf[-1]
    host = np.minimum(np.searchsorted(cdf, rng.random(m)), pool.size - 1)          # (m,)
    idx = np.minimum(np.searchsorted(cdf, rng.random((m, n))), pool.size - 1)      # (m, n)
    if isinstance(periods, PeriodLaw):
        P = periods.sample(rng.random((m, n)))
    else:
        P = pool.period_day[idx] * 10.0 ** (PERIOD_JITTER_DEX * rng.standard_normal((m, n)))
    if spacing is not None and n >= 2:
        # a chain of observed adjacent ratios, anchored at a random slot whose period is the pool draw
        logr = np.log(np.asarray(spacing, dtype=float))[rng.integers(0, len(spacing), (m, n - 1))]
        chain = np.concatenate([np.zeros((m, 1)), np.cumsum(logr, axis=1)], axis=1)
        anchor = rng.integers(0, n, m)
        P = P[np.arange(m), anchor][:, None] * np.exp(chain - chain[np.arange(m), anchor][:, None])
    R = pool.radius_rearth[idx]
    Ms, Rs = pool.star_mass_msun[host], pool.star_radius_rsun[host]
    r_fill = np.nanmedian(pool.radius_rearth) if np.any(np.isfinite(pool.radius_rearth)) else 2.0
    mass = mass_from_radius_mearth(np.where(np.isfinite(R), R, r_fill)) * MEARTH_MSUN
    P, order = enforce_spacing(P, mass, Ms, min_hill)
    R = np.take_along_axis(R, order, axis=1)
    eps = transit_halfwidth(semi_major_axis_au(P, Ms[:, None]), Rs[:, None], R)
    rayleigh = np.sqrt(-2.0 * np.log1p(-rng.random((m, n))))                       # standard Rayleigh
    return {"eps": eps, "asin_eps": np.arcsin(eps), "det": detect.passes(P, R), "ray": rayleigh,
            "node": 2.0 * np.pi * rng.random((m, n)), "u": rng.random(m)}


def check_ratios(spacing):
    """Adjacent period ratios as a float array (None stays None); each must be finite and > 1."""
    if spacing is None:
        return None
    r = np.asarray(spacing, dtype=float).ravel()
    if r.size == 0 or not np.all(np.isfinite(r) & (r > 1.0)):
        raise ValueError("spacing: adjacent period ratios must be finite and > 1")
    return r


def adjacent_ratios(systems, periods):
    """Period ratios of adjacent planets (sorted by period) within each system of several planets."""
    by = {}
    for s, p in zip(systems, periods):
        by.setdefault(s, []).append(float(p))
    out = []
    for ps in by.values():
        ps = np.sort(ps)
        r = ps[1:] / ps[:-1]
        out.extend(r[r > 1.0].tolist())          # equal periods (duplicates) are not a spacing
    return np.array(out)


def _counts(g, sigma_rad, k_max, isotropic_observers=False):
    """Weighted counts of systems by number of transiting detectable planets (index 0..k_max)."""
    psi = sigma_rad * g["ray"]
    if isotropic_observers:
        w = np.ones(len(g["u"]))
        sin_beta = 2.0 * g["u"] - 1.0
    else:
        w = np.sin(band_halfwidth(psi, g["asin_eps"], g["det"]))
        sin_beta = (2.0 * g["u"] - 1.0) * w
    k = transit_mask(psi, g["node"], sin_beta, g["eps"], g["det"]).sum(axis=1)
    return np.bincount(np.minimum(k, k_max), weights=w, minlength=k_max + 1)


def _hot_counts(g, k_max):
    """Mean Poisson-binomial P(k), k = 1..k_max (last bin >= k_max), of independent transits with p = eps * det."""
    p = np.where(g["det"], g["eps"], 0.0)                                          # (m, n)
    prob = np.zeros((p.shape[0], k_max + 1))
    prob[:, 0] = 1.0
    for j in range(p.shape[1]):
        pj = p[:, j:j + 1]
        moved = prob * pj
        prob *= 1.0 - pj
        prob[:, 1:] += moved[:, :-1]
        prob[:, -1] += moved[:, -1]                  # the top bin keeps k >= k_max
    return prob.mean(axis=0)[1:]


class MultiplicityModel:
    """Pre-drawn systems of each multiplicity 1..n_max (common random numbers) and their transit tables.

    Parameters
    ----------
    pool : PlanetPool
    detect : Detectability
    n_per_multiplicity : int
        Systems drawn for each intrinsic multiplicity N.
    min_hill : float
        Minimum spacing of adjacent planets in mutual Hill radii (0: none).
    periods : "observed" or PeriodLaw
    spacing : array of adjacent period ratios or None
        Observed adjacent period ratios to build each system's period chain from (None: independent
        period draws, packed to ``min_hill`` only).
    """

    def __init__(self, pool, detect, n_per_multiplicity=20000, n_max=N_MAX, k_max=K_MAX,
                 min_hill=GLADMAN_HILL, periods="observed", seed=0, spacing=None):
        if k_max > n_max:
            raise ValueError(f"k_max ({k_max}) must not exceed n_max ({n_max})")
        self.pool, self.detect = pool, detect
        self.n_max, self.k_max, self.m = int(n_max), int(k_max), int(n_per_multiplicity)
        self.min_hill, self.periods = float(min_hill), periods
        self.spacing = check_ratios(spacing)
        ss = np.random.SeedSequence([int(seed), 0x7A5])
        self._groups = [_draw_group(n, self.m, pool, detect, np.random.default_rng(s), self.min_hill, periods,
                                    self.spacing)
                        for n, s in zip(range(1, self.n_max + 1), ss.spawn(self.n_max))]

    def tables(self, sigma_rad):
        """``A[s, N-1, k-1] = P(k transiting detectable planets | N planets, sigma_s)``, k = 1..k_max.

        The last k bin holds ``k >= k_max``.  Shape (len(sigma), n_max, k_max).
        """
        sig = np.atleast_1d(np.asarray(sigma_rad, dtype=float))
        out = np.zeros((sig.size, self.n_max, self.k_max))
        for j, g in enumerate(self._groups):
            if j == 0:            # one planet: P(transit) = epsilon whatever its tilt
                out[:, 0, :] = (_counts(g, 0.0, self.k_max)[1:] / self.m)[None, :]
                continue
            for i, s in enumerate(sig):
                out[i, j, :] = _counts(g, s, self.k_max)[1:] / self.m
        return out

    def hot_tables(self):
        """``H[N-1, k-1]``: P(k transiting detectable planets | N planets with independent isotropic orbit normals).

        For mutually isotropic orbits every planet transits independently with
        probability ``epsilon_j``, so k follows a Poisson-binomial law, computed
        exactly per system (recursion over the planet slots) and averaged.
        """
        return np.stack([_hot_counts(g, self.k_max) for g in self._groups])

    def single_transit_probability(self):
        """P(the one planet of an intrinsically single system transits and is detectable)."""
        return float(_counts(self._groups[0], 0.0, self.k_max)[1] / self.m)


def simulate_counts(pool, detect, sigma_rad, mean_multiplicity, single_fraction, n_systems, rng,
                    min_hill=GLADMAN_HILL, periods="observed", k_max=K_MAX, n_max=N_MAX,
                    isotropic_observers=False, spacing=None):
    """Simulate ``n_systems`` planet-hosting stars from scratch and count their transiting planets.

    Returns
    -------
    counts : array (k_max + 1,)
        Systems with 0, 1, ..., >= k_max transiting detectable planets.  With
        ``isotropic_observers`` these are integer counts of one isotropic
        observer per system (a synthetic catalogue); otherwise importance
        weights (expected counts for k >= 1; index 0 is not meaningful).
    """
    lam = poisson_rate_for_mean(mean_multiplicity, n_max)
    pmf = truncated_poisson_pmf(lam, n_max)[0]
    single = rng.random(n_systems) < single_fraction
    N = np.where(single, 1, 1 + np.searchsorted(np.cumsum(pmf)[:-1], rng.random(n_systems), side="right"))
    per_n = np.bincount(N, minlength=n_max + 1)
    out = np.zeros(k_max + 1)
    for n in range(1, n_max + 1):
        if per_n[n]:
            g = _draw_group(n, int(per_n[n]), pool, detect, rng, min_hill, periods, check_ratios(spacing))
            out += _counts(g, sigma_rad, k_max, isotropic_observers)
    if isotropic_observers:
        return out.round().astype(int)
    return out
