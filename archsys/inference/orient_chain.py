"""The orientation chain of the joint engine: emcee to at least N_TAU autocorrelation times."""
from __future__ import annotations

import math
import sys
import warnings

import numpy as np

from ..errors import ConvergenceWarning

__all__ = ["run_orientation_mcmc", "N_TAU", "BURN_TAU"]

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
    p0 = model.initial(rng, nwalkers)
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
