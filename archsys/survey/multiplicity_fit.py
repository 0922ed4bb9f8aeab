"""Inference of the mutual-inclination dispersion, mean multiplicity and single fraction from transit counts.

Likelihood
----------
The data are the numbers ``n_k`` of systems with ``k = 1, ..., K`` transiting
detectable planets (last bin ``k >= K``).  Stars with no transiting planet are
not in a catalogue, so the counts are multinomial with the probabilities
conditioned on ``k >= 1``:

.. math:: \\log L(\\sigma, \\bar m, f) = \\sum_k n_k \\log p_k, \\quad
          p_k = \\frac{q_k}{\\sum_j q_j}, \\quad
          q_k = (1 - f) \\sum_N \\pi_N(\\bar m) A_{kN}(\\sigma) + f\\, S\\, \\delta_{k1}

with ``A`` the simulated tables of :class:`~.multiplicity.MultiplicityModel`
(linear interpolation in ``ln sigma``), ``pi_N`` the truncated Poisson law of
mean ``mbar`` (tabulated on a fine ``mbar`` grid) and ``S`` the transit
probability of a single planet; with the isotropic second population the last
term is ``f sum_N pi_N H_kN`` instead (``H`` from
:meth:`~.multiplicity.MultiplicityModel.hot_tables`).  The
``p_k`` are Monte Carlo estimates with common random numbers; they are floored
at :data:`P_FLOOR` so that a bin the simulation never fills excludes a
parameter value strongly instead of infinitely.

Priors (choices, stated in the output): ``ln sigma`` uniform on
:data:`SIGMA_RANGE_DEG`, ``mbar`` uniform on [1, :data:`MBAR_MAX`], ``f``
uniform on [0, 1].  Sampled with emcee (differential-evolution moves, all
walkers in one vectorised call).

Excess of single-transit systems
--------------------------------
The one-population model (``f = 0``) is fitted to the systems with ``k >= 2``
only (their shape fixes ``sigma`` and ``mbar``); it then predicts the number
of single-transit systems ``n_1 = N_{>=2} p_1 / (1 - p_1)``.  The excess is the
observed ``n_1`` over that prediction (ratio and difference, with intervals
over the posterior), the quantity behind the "Kepler dichotomy" (Lissauer et
al. 2011; Johansen et al. 2012).
"""
from __future__ import annotations

import math

import numpy as np

from .hierarchical import interval
from .multiplicity import poisson_rate_for_mean, truncated_poisson_pmf

__all__ = ["CountModel", "SECOND_POPULATIONS", "fit_counts", "single_excess", "posterior_predictive", "SIGMA_RANGE_DEG",
           "MBAR_MAX", "P_FLOOR"]

#: Prior range of the tilt dispersion sigma [deg] (log-uniform; a choice).
SIGMA_RANGE_DEG = (0.1, 45.0)
#: Upper end of the uniform prior on the mean multiplicity of the flat population.
MBAR_MAX = 8.0
#: Second populations: one planet per system, or mutually isotropic orbits (same multiplicity law).
SECOND_POPULATIONS = ("single", "isotropic")
#: Floor of the simulated multinomial probabilities.
P_FLOOR = 1e-9
_N_GRID = 48


class CountModel:
    """Tables on a sigma grid and the vectorised multinomial log-likelihood of (ln sigma, mbar, f)."""

    def __init__(self, model, n_grid=_N_GRID, sigma_range_deg=SIGMA_RANGE_DEG, second="single"):
        if second not in SECOND_POPULATIONS:
            raise ValueError(f"second population must be one of {', '.join(SECOND_POPULATIONS)}; got {second!r}")
        self.model, self.second = model, second
        self.hot = model.hot_tables() if second == "isotropic" else None
        self.log_sig = np.linspace(math.log(math.radians(sigma_range_deg[0])),
                                   math.log(math.radians(sigma_range_deg[1])), n_grid)
        self.tables = model.tables(np.exp(self.log_sig))                 # (G, n_max, K)
        self.single = model.single_transit_probability()
        self.n_max, self.k_max = model.n_max, model.k_max
        self._mbar = np.linspace(1.0, MBAR_MAX, 1401)        # pmf tabulated in mbar, linear interpolation
        self._pmf_tab = truncated_poisson_pmf(poisson_rate_for_mean(self._mbar, self.n_max), self.n_max)

    def _pmf(self, mbar):
        x = np.interp(mbar, self._mbar, np.arange(self._mbar.size))
        i = np.minimum(x.astype(int), self._mbar.size - 2)
        t = (x - i)[:, None]
        return (1.0 - t) * self._pmf_tab[i] + t * self._pmf_tab[i + 1]

    def probabilities(self, log_sigma, mbar, f):
        """p_k (W, K) for walkers (W,), normalised over k = 1..K."""
        ls = np.clip(np.atleast_1d(log_sigma), self.log_sig[0], self.log_sig[-1])
        x = np.interp(ls, self.log_sig, np.arange(self.log_sig.size))
        i = np.minimum(x.astype(int), self.log_sig.size - 2)
        t = (x - i)[:, None, None]
        A = (1.0 - t) * self.tables[i] + t * self.tables[i + 1]              # (W, n_max, K)
        pi = self._pmf(np.atleast_1d(mbar))
        q = (1.0 - np.atleast_1d(f))[:, None] * np.einsum("wn,wnk->wk", pi, A)
        if self.hot is None:
            q[:, 0] += np.atleast_1d(f) * self.single
        else:
            q += np.atleast_1d(f)[:, None] * (pi @ self.hot)
        return q / q.sum(axis=1, keepdims=True)

    def log_like(self, theta, counts, bins=None):
        """sum_k n_k log p_k (conditioned on the bins used, e.g. k >= 2) for theta (W, 3)."""
        theta = np.atleast_2d(theta)
        p = self.probabilities(theta[:, 0], theta[:, 1], theta[:, 2])
        if bins is not None:
            p = p[:, bins] / p[:, bins].sum(axis=1, keepdims=True)
            counts = np.asarray(counts)[bins]
        return np.log(np.maximum(p, P_FLOOR)) @ np.asarray(counts, dtype=float)


def _log_prior(theta, lo, hi, free_f):
    ok = (theta[:, 0] > lo) & (theta[:, 0] < hi) & (theta[:, 1] > 1.0) & (theta[:, 1] < MBAR_MAX)
    ok &= (theta[:, 2] >= 0.0) & (theta[:, 2] < 1.0) if free_f else theta[:, 2] == 0.0
    return ok


def fit_counts(cm, counts, mixture=True, bins=None, seed=0, n_walkers=32, n_steps=2000, n_burn=500):
    """Posterior samples of (sigma [deg], mbar, f) given counts n_1..n_K.

    Parameters
    ----------
    cm : CountModel
    counts : array (K,)
    mixture : bool
        Fit the single fraction ``f``; False fixes ``f = 0`` (one population).
    bins : array of int, optional
        Bins (0-based: 0 is k = 1) the likelihood uses; default all.

    Returns
    -------
    dict with ``samples`` (n, 3: sigma_deg, mbar, f), interval summaries and
    sampler diagnostics.
    """
    import emcee
    from scipy import optimize
    counts = np.asarray(counts, dtype=float)
    lo, hi = cm.log_sig[0], cm.log_sig[-1]
    free = [0, 1, 2] if mixture else [0, 1]

    def full(x):
        x = np.atleast_2d(x)
        th = np.zeros((len(x), 3))
        th[:, free] = x
        return th

    def log_prob(x):
        th = full(x)
        ok = _log_prior(th, lo, hi, mixture)
        out = np.full(len(th), -np.inf)
        if ok.any():
            out[ok] = cm.log_like(th[ok], counts, bins)
        return out

    # start at the best point of a coarse grid, then polish (deterministic)
    gs, gm, gf = np.meshgrid(cm.log_sig[1:-1:2], np.linspace(1.05, MBAR_MAX - 0.1, 25),
                             np.linspace(0.0, 0.95, 20) if mixture else [0.0], indexing="ij")
    grid = np.stack([gs.ravel(), gm.ravel(), gf.ravel()], axis=1)
    best = grid[np.argmax(log_prob(grid[:, free]))][free]
    res = optimize.minimize(lambda x: -log_prob(x)[0] if np.isfinite(log_prob(x)[0]) else 1e300, best,
                            method="Nelder-Mead", options={"xatol": 1e-4, "fatol": 1e-4})
    start = res.x if np.isfinite(log_prob(res.x)[0]) else best
    rng = np.random.default_rng(np.random.SeedSequence([int(seed), 0x3C7]))
    scale = np.array([0.05, 0.05, 0.02])[free]
    p0 = start + scale * rng.standard_normal((n_walkers, len(free)))
    box_lo = np.array([lo, 1.0, 0.0])[free] + 1e-6
    box_hi = np.array([hi, MBAR_MAX, 1.0])[free] - 1e-6
    p0 = np.clip(p0, box_lo, box_hi)
    # differential-evolution moves: the posterior is a curved, degenerate ridge in (sigma, mbar, f)
    moves = [(emcee.moves.DEMove(), 0.8), (emcee.moves.DESnookerMove(), 0.2)]
    sampler = emcee.EnsembleSampler(n_walkers, len(free), log_prob, vectorize=True, moves=moves)
    sampler.random_state = np.random.RandomState(int(rng.integers(2 ** 31))).get_state()
    sampler.run_mcmc(p0, n_steps, progress=False)
    x = sampler.get_chain(discard=n_burn, flat=True)
    try:
        tau = [float(t) for t in sampler.get_autocorr_time(discard=n_burn, quiet=True, tol=0)]
    except Exception:  # pragma: no cover - estimate failed
        tau = [None] * len(free)
    th = full(x)
    samples = np.column_stack([np.degrees(np.exp(th[:, 0])), th[:, 1], th[:, 2]])
    out = {"samples": samples, "theta": th,
           "sigma_deg": interval(samples[:, 0]), "mean_multiplicity": interval(samples[:, 1]),
           "max_log_likelihood": float(-res.fun) if np.isfinite(res.fun) else None,
           "diagnostics": {"walkers": n_walkers, "steps": n_steps, "burn_in": n_burn,
                           "acceptance_fraction": float(np.mean(sampler.acceptance_fraction)),
                           "autocorrelation_time": tau,
                           "kept_steps_over_max_tau": ((n_steps - n_burn) / max(tau)
                                                       if all(t is not None and t > 0 for t in tau) else None)}}
    if mixture:
        out["single_fraction"] = interval(samples[:, 2])
        out["mean_multiplicity_all_systems"] = interval((1 - samples[:, 2]) * samples[:, 1] + samples[:, 2])
    return out


def posterior_predictive(cm, theta, n_systems, rng, n_draws=2000):
    """Replicated counts (n_draws, K): multinomial draws of ``n_systems`` at posterior samples ``theta``."""
    take = rng.choice(len(theta), size=min(n_draws, len(theta)), replace=False)
    p = cm.probabilities(theta[take, 0], theta[take, 1], theta[take, 2])
    return np.stack([rng.multinomial(int(n_systems), pk) for pk in p])


def _count_summary(rep):
    lo, med, hi, lo95, hi95 = np.percentile(rep, [15.8655, 50, 84.1345, 2.5, 97.5], axis=0)
    return {"median": med.tolist(), "lo": lo.tolist(), "hi": hi.tolist(), "lo95": lo95.tolist(),
            "hi95": hi95.tolist()}


def single_excess(cm, counts, fit_multis, rng):
    """Observed single-transit systems over the one-population prediction fitted to k >= 2."""
    counts = np.asarray(counts, dtype=float)
    th = fit_multis["theta"]
    take = rng.choice(len(th), size=min(4000, len(th)), replace=False)
    p = cm.probabilities(th[take, 0], th[take, 1], th[take, 2])
    n_multi = counts[1:].sum()
    pred = n_multi * p[:, 0] / np.maximum(1.0 - p[:, 0], 1e-12)
    n1 = counts[0]
    return {"observed_single_transit_systems": int(n1), "systems_with_2_or_more": int(n_multi),
            "predicted_by_one_population": interval(pred),
            "ratio_observed_to_predicted": interval(n1 / np.maximum(pred, 1e-12)),
            "excess_systems": interval(n1 - pred),
            "method": "one population (f = 0) fitted to the k >= 2 counts only; its p_1/(1 - p_1) "
                      "times the number of systems with k >= 2 is the predicted number of singles"}


def count_summary(rep):
    """Median and 68/95 % ranges per bin of replicated counts."""
    return _count_summary(rep)
