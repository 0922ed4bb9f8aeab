"""Independent draws of the orientation block from a Gaussian approximation (importance proposal).

In the standardised coordinates of :class:`~archsys.inference.orientation.OrientationModel`
the orientation posterior is close to a product of simple pieces when the
small-angle, Gaussian approximation holds (each planet with orientation data has
|cos i| ~ N(cos I, sigma^2 + s_j^2), s_j the width of its datum in |cos i|):

* log sigma: its marginal in that approximation (cos I integrated analytically)
  times the sigma prior, tabulated on a grid;
* the standardised reference plane and impact parameters: unit Student-t;
* node and tilt coordinates of planets without data: Student-t of the prior width
  (a tilt psi ~ Rayleigh(sigma) gives Omega - Omega_ref ~ N(0, (sigma / sin I)^2),
  i.e. w ~ N(0, (1 / (2 sin I))^2), and z ~ N(0, (1 / sin I)^2)).

Draws from this proposal, weighted by the exact density over the proposal
density, are independent; the engine uses them when the importance weights are
healthy (Pareto-smoothed importance sampling diagnostic k-hat < 0.7, Vehtari et
al. 2024, and a usable effective sample size) and falls back to the MCMC
otherwise.  Student-t tails (``NU`` degrees of freedom) keep the weights bounded
where the Gaussian approximation is too narrow.
"""
from __future__ import annotations

import numpy as np
from scipy import optimize, special, stats

__all__ = ["OrientationProposal", "pareto_khat", "NU"]

#: Degrees of freedom of the Student-t pieces of the proposal.
NU = 5.0
_N_GRID = 512


#: log of the Student-t density's normalisation at NU degrees of freedom, as scipy.stats.t computes it
_T_LOGNORM = float(np.log(special.poch(0.5 * NU, 0.5)) - 0.5 * (np.log(NU) + np.log(np.pi)))
_T_HALF = (NU + 1) / 2


def _t_logpdf(x, scale):
    """``scipy.stats.t.logpdf(x, NU, scale=scale)`` for finite positive scales, without its argument
    handling: the same operations in the same order, so the same numbers (tests/test_joint.py)."""
    y = x / scale
    return _T_LOGNORM - _T_HALF * np.log1p(y * y / NU) - np.log(scale)


def _gpd_nll(theta, x):
    """The objective ``scipy.stats.genpareto.fit(x, floc=0)`` minimises (its penalised negative
    log-likelihood at shape ``theta[0]`` and scale ``theta[1]``), the same operations in the same order
    for finite data x >= 0 (pareto_khat's exceedances), so the same numbers: x / scale is then never
    NaN and never below 0, and every point is inside the support when the shape is >= 0."""
    c, scale = theta[0], theta[1]
    if not np.isfinite(c) or scale <= 0:
        return np.inf
    x = x / scale
    n_log_scale = len(x) * np.log(scale)
    n_bad = 0
    if c < 0:
        inside = x <= -1.0 / c
        n_bad = x.size - np.count_nonzero(inside)
        if n_bad > 0:
            x = x[inside]
    if c != 0:
        lp = -special.xlog1py(c + 1., c * x) / c
    else:
        lp = -x
    finite = np.isfinite(lp)
    n_inf = finite.size - np.count_nonzero(finite)
    if n_inf:
        n_bad += n_inf
        lp = lp[finite]
    return -np.sum(lp) + n_bad * _LOGXMAX * 100 + n_log_scale


_LOGXMAX = np.log(np.finfo(float).max)


def _gpd_shape(exc):
    """Shape of ``scipy.stats.genpareto.fit(exc, floc=0.0)``: its start point and its Nelder-Mead
    search (scipy.optimize.fmin) on the same objective, without the per-evaluation overhead of the
    distribution machinery (the same numbers: tests/test_joint.py)."""
    c0, _, scale0 = stats.genpareto._fitstart(exc)
    vals = optimize.fmin(_gpd_nll, [c0, scale0], args=(exc,), disp=0)
    if not (np.isfinite(vals[0]) and vals[1] > 0):
        raise stats.FitError("Optimization converged to parameters that are outside the range allowed by "
                             "the distribution.")
    return float(vals[0])


def pareto_khat(logw):
    """Shape k of a generalised Pareto fit to the largest importance weights (Vehtari et al. 2024).

    k < 0.5: the weights have a finite variance; k < 0.7: estimates are reliable in
    practice; larger k: the proposal misses part of the posterior.  Returns inf when
    fewer than 2 finite weights.
    """
    lw = np.asarray(logw, float)
    lw = lw[np.isfinite(lw)]
    n = lw.size
    if n < 2:
        return np.inf
    m = int(min(0.2 * n, 3.0 * np.sqrt(n)))
    if m < 5:
        return np.inf
    w = np.exp(lw - lw.max())
    w.sort()
    tail, cut = w[-m:], w[-m - 1]
    exc = tail - cut
    if not np.any(exc > 0):
        return 0.0
    return _gpd_shape(exc)


class OrientationProposal:
    """Independent proposal for the parameters of an :class:`OrientationModel` (standardised)."""

    def __init__(self, model):
        if not model.b_std:
            raise ValueError("the proposal needs the standardised coordinates")
        self.model = model
        ix = model.ix
        # log sigma grid over the prior support (degrees -> radians)
        sp = model.sigma_prior
        lo, hi = sp.ppf(1e-6), sp.ppf(1.0 - 1e-9)
        self.grid = np.linspace(np.log(np.radians(lo)), np.log(np.radians(hi)), _N_GRID + 1)
        mid = 0.5 * (self.grid[1:] + self.grid[:-1])
        sig = np.exp(mid)
        logp = sp.logpdf(np.degrees(sig)) + mid
        if model._ref_info:
            y, s2 = model._ref_y, model._ref_s2
            w = 1.0 / (sig[:, None] ** 2 + s2[None, :] + 1e-300)
            W = w.sum(axis=1)
            ybar = (w * y).sum(axis=1) / W
            logp = logp + 0.5 * np.sum(np.log(w), axis=1) - 0.5 * np.log(W) \
                - 0.5 * np.sum(w * (y[None, :] - ybar[:, None]) ** 2, axis=1)
        logp = np.where(np.isfinite(logp), logp, -np.inf)
        p = np.exp(logp - logp.max())
        # a floor keeps every bin reachable (the exact posterior may differ from the approximation)
        p = p / p.sum()
        p = 0.9 * p + 0.1 / p.size
        self.p = p / p.sum()
        self.cdf = np.concatenate([[0.0], np.cumsum(self.p)])
        self.width = np.diff(self.grid)
        self.cols = {"logsigma": ix["logsigma"], "cosI": ix["cosI"]}
        self.std_cols = [ix[n] for n in model.names if n.startswith("beta") or n.startswith("cosi")]
        if model._ref_info:
            self.std_cols.append(ix["cosI"])
        self.w_cols = [ix[n] for n in model.names if n.startswith("w")]
        self.z_cols = [ix[n] for n in model.names if n.startswith("z")]
        self.i_cols = []      # sky inclinations are standardised like impact parameters
        self.node_ref = "node_ref" in ix

    def _prior_scales(self, cosI):
        sinI = np.sqrt(np.clip(1.0 - cosI * cosI, 0.0, 1.0))
        s = 1.0 / np.maximum(sinI, 0.05)
        return 0.5 * s, s

    def sample(self, rng, n):
        """(theta (n, ndim), log proposal density (n,))."""
        m = self.model
        th = np.zeros((n, m.ndim))
        # log sigma: piecewise-uniform on the grid
        k = np.searchsorted(self.cdf, rng.uniform(size=n), side="right") - 1
        k = np.clip(k, 0, self.p.size - 1)
        th[:, self.cols["logsigma"]] = self.grid[k] + self.width[k] * rng.uniform(size=n)
        logq = np.log(self.p[k] / self.width[k])
        for col in self.std_cols:
            th[:, col] = rng.standard_t(NU, n)
            logq += _t_logpdf(th[:, col], 1.0)
        if not m._ref_info:
            th[:, self.cols["cosI"]] = rng.uniform(m.cosI_lo, 1.0, n)
            logq -= np.log(1.0 - m.cosI_lo)
        for col in self.i_cols:     # sky inclination summaries: from the summary
            j = int(m.names[col][4:])
            meas = m.system.planets[j].quantities["inclination"]
            i0, si = np.radians(meas.center), max(np.radians(meas.sigma), 1e-6)
            x = np.cos(i0) + abs(np.sin(i0)) * si * 2.0 * rng.standard_t(NU, n)
            th[:, col] = x
            logq += _t_logpdf(x - np.cos(i0), max(abs(np.sin(i0)) * si * 2.0, 1e-9))
        if self.node_ref:
            th[:, m.ix["node_ref"]] = rng.uniform(-np.pi, np.pi, n)
            logq -= np.log(2 * np.pi)
        # cos I in physical units is needed for the prior widths of the remaining coordinates
        sw, sz = self._prior_scales(m.cos_ref(th))
        for col in self.w_cols:
            th[:, col] = sw * rng.standard_t(NU, n)
            logq += _t_logpdf(th[:, col], sw)
        for col in self.z_cols:
            th[:, col] = sz * rng.standard_t(NU, n)
            logq += _t_logpdf(th[:, col], sz)
        return th, logq

    def log_density(self, theta):
        """Log proposal density at ``theta`` (for checks)."""
        m = self.model
        th = np.atleast_2d(theta)
        ls = th[:, self.cols["logsigma"]]
        k = np.clip(np.searchsorted(self.grid, ls, side="right") - 1, 0, self.p.size - 1)
        inside = (ls >= self.grid[0]) & (ls <= self.grid[-1])
        logq = np.where(inside, np.log(self.p[k] / self.width[k]), -np.inf)
        for col in self.std_cols:
            logq += _t_logpdf(th[:, col], 1.0)
        if not m._ref_info:
            logq -= np.log(1.0 - m.cosI_lo)
        sw, sz = self._prior_scales(m.cos_ref(th))
        for col in self.w_cols:
            logq += _t_logpdf(th[:, col], sw)
        for col in self.z_cols:
            logq += _t_logpdf(th[:, col], sz)
        if self.i_cols:
            for col in self.i_cols:
                j = int(m.names[col][4:])
                meas = m.system.planets[j].quantities["inclination"]
                i0, si = np.radians(meas.center), max(np.radians(meas.sigma), 1e-6)
                logq += _t_logpdf(th[:, col] - np.cos(i0), max(abs(np.sin(i0)) * si * 2.0, 1e-9))
        if self.node_ref:
            logq -= np.log(2 * np.pi)
        return logq

