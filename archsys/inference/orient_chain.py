"""The orientation chain of the joint engine: emcee to at least N_TAU autocorrelation times."""
from __future__ import annotations

import math
import sys
import warnings

import numpy as np

from ..errors import ConvergenceWarning

__all__ = ["run_orientation_mcmc", "initial_walkers", "N_TAU", "BURN_TAU"]

#: Required orientation-chain length in integrated autocorrelation times.
N_TAU = 50
#: Burn-in of the orientation chain, in autocorrelation times.
BURN_TAU = 3
_BLOCK = 250


def run_orientation_mcmc(model, rng, n_draws, max_steps=None, quiet=True, name=""):
    """emcee on the orientation block to >= N_TAU autocorrelation times.

    Returns (flat chain after burn-in (m, ndim), info dict).
    """
    import emcee
    nwalkers = max(2 * model.ndim + 2, 48, int(math.ceil(1.1 * n_draws / (N_TAU - BURN_TAU))))
    nwalkers += nwalkers % 2
    p0 = initial_walkers(model, rng, nwalkers)
    if p0 is None:
        return None, None
    moves = [(emcee.moves.DEMove(), 0.8), (emcee.moves.StretchMove(), 0.2)]
    smp = emcee.EnsembleSampler(nwalkers, model.ndim, model.log_prob, vectorize=True, moves=moves)
    smp._random = np.random.RandomState(int(rng.integers(2 ** 31)))
    cap = max_steps or 20000
    steps, state, converged = 0, p0, False
    tau = np.full(model.ndim, np.inf)
    progress = _Progress(not quiet, name)
    stride = max(1, nwalkers // 32)      # tau from a subset of walkers: the FFTs cost O(steps)
    nstep = 2 * _BLOCK
    while steps < cap:
        nstep = min(nstep, cap - steps)
        with np.errstate(all="ignore"):
            state = smp.run_mcmc(state, nstep, progress=False, skip_initial_state_check=True)
        steps += nstep
        with np.errstate(all="ignore"):
            tau = emcee.autocorr.integrated_time(smp.get_chain()[steps // 3:, ::stride], tol=0, quiet=True)
        tmax = float(np.max(tau))
        progress.update(steps, N_TAU * tmax)
        if np.all(np.isfinite(tau)) and steps - BURN_TAU * tmax >= N_TAU * tmax and steps >= 300:
            converged = True
            break
        # next check where the current tau says the chain would be long enough (at least a block)
        need = (N_TAU + BURN_TAU) * tmax * 1.05 - steps if np.isfinite(tmax) else steps
        nstep = int(max(_BLOCK, min(need, max(steps, _BLOCK))))
    progress.close()
    tmax = float(np.max(tau)) if np.all(np.isfinite(tau)) else steps / 10.0
    burn = int(min(BURN_TAU * tmax, steps // 2))
    flat = smp.get_chain(discard=burn, flat=True)
    lp = smp.get_log_prob(discard=burn, flat=True)
    flat = flat[np.isfinite(lp)]
    n_after = (steps - burn) * nwalkers
    info = {
        "walkers": nwalkers, "steps": steps, "burn_in": burn, "thin": 1,
        "autocorrelation_time": {k: round(float(v), 2) for k, v in zip(model.names, tau)},
        "max_autocorrelation_time": round(tmax, 2),
        "chain_length_in_tau": round(steps / tmax, 1),
        "n_eff": {k: round(float(n_after / t), 1) for k, t in zip(model.names, tau)},
        "converged": converged, "target_tau_multiple": N_TAU,
        "acceptance_fraction": round(float(np.mean(smp.acceptance_fraction)), 3),
        "log_prob_evaluations": int(steps * nwalkers), "parameters": list(model.names),
    }
    if not converged:
        warnings.warn(f"{name}: orientation chain stopped at the cap of {cap} steps, {steps / tmax:.0f} "
                      f"autocorrelation times (< {N_TAU}); intervals are rough", ConvergenceWarning, stacklevel=3)
    return flat, info


class _Progress:
    """A tqdm bar on standard error while the orientation chain runs (only when asked)."""

    def __init__(self, enabled, name):
        self.bar = None
        if enabled:
            try:
                from tqdm import tqdm
                self.bar = tqdm(total=100, desc=f"{name} orientations", unit="%", file=sys.stderr,
                                mininterval=0.5 if sys.stderr.isatty() else 10.0, leave=False)
            except ImportError:
                self.bar = None

    def update(self, steps, target):
        if self.bar is not None and np.isfinite(target) and target > 0:
            self.bar.n = min(100, int(100 * steps / target))
            self.bar.refresh()

    def close(self):
        if self.bar is not None:
            self.bar.close()


def initial_walkers(self, rng, nwalkers, n_try=4096, rounds=10):
    """Walker starts for the orientation block ``self`` (an OrientationModel): broad draws filtered by
    its log-density, best-first."""
    cand = []
    for _ in range(rounds):
        th = np.empty((n_try, self.ndim))
        th[:, self.ix["logsigma"]] = np.log(np.radians(10 ** rng.uniform(-0.7, 1.3, n_try)))
        th[:, self.ix["cosI"]] = rng.uniform(self.cosI_lo, 1.0, n_try)
        if self.node_info:
            th[:, self.ix["node_ref"]] = rng.uniform(-np.pi, np.pi, n_try)
        us = []
        b_start, incl_start = {}, {}
        for j, k in enumerate(self.kinds):
            p = self.system.planets[j]
            if k == "b" and j not in self.b_fixed:
                if "b" in p.quantities:
                    bj = np.clip(p.quantities["b"].sample(rng, n_try), 0.0, 1.0 + self.ror[j])
                else:
                    bj = rng.uniform(0.0, 1.0 + self.ror[j], n_try)
                b_start[j] = bj
                us.append(bj * self.g0[j])
            elif k == "incl":
                cj = np.cos(np.radians(p.quantities["inclination"].sample(rng, n_try)))
                incl_start[j] = cj
                us.append(cj)
            elif k == "fixed":
                us.append(np.full(n_try, self.fixed_cos[j]))
            if f"z{j}" in self.ix:
                th[:, self.ix[f"z{j}"]] = rng.standard_normal(n_try)
            if f"w{j}" in self.ix:
                th[:, self.ix[f"w{j}"]] = rng.standard_normal(n_try)
        if us:   # start the reference plane among the known orientations
            pick = np.stack(us, axis=1)[np.arange(n_try), rng.integers(0, len(us), n_try)]
            jitter = np.radians(10 ** rng.uniform(-1.0, 0.7, n_try)) * rng.standard_normal(n_try)
            th[:, self.ix["cosI"]] = np.clip(pick + jitter, self.cosI_lo, 1.0)
        sig = np.exp(th[:, self.ix["logsigma"]])
        cos_start = th[:, self.ix["cosI"]].copy()
        for j, bj in b_start.items():
            if self.b_std:
                mean, sd = self._beta_conditional(j, cos_start, sig)
                th[:, self.ix[f"beta{j}"]] = (bj - mean) / sd
            else:
                th[:, self.ix[f"beta{j}"]] = bj
        for j, cj in incl_start.items():
            if self.b_std:
                k = list(self._vec["ji"]).index(j)
                mean, sd = self._gauss_conditional(self._gi_y[k], self._gi_s[k], 1.0, cos_start, sig)
                th[:, self.ix[f"cosi{j}"]] = (cj - mean) / sd
            else:
                th[:, self.ix[f"cosi{j}"]] = cj
        if self._ref_info:
            mean, sd = self._ref_conditional(sig)
            th[:, self.ix["cosI"]] = (cos_start - mean) / sd
        lp = self.log_prob(th)
        good = np.isfinite(lp)
        if good.any():
            cand.append((th[good], lp[good]))
        if sum(len(x[0]) for x in cand) >= 8 * nwalkers:
            break
    if not cand:
        return None
    th = np.concatenate([x[0] for x in cand])
    lp = np.concatenate([x[1] for x in cand])
    order = np.argsort(-lp)[: 4 * nwalkers]
    if len(order) < nwalkers:
        pick = rng.choice(order, nwalkers, replace=True)
        return th[pick] + 1e-6 * rng.standard_normal((nwalkers, self.ndim)) * np.maximum(np.abs(th[pick]), 1e-3)
    return th[rng.choice(order, nwalkers, replace=False)]
