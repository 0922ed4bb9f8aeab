"""The posterior container shared by direct Monte Carlo draws and MCMC chains.

Every array is in internal units (day, M_sun, au, rad) and has shape
``(n_draws,)`` for system quantities or ``(n_draws, n_planets)`` for planet
quantities, planets sorted by period.

Keys
----
m_star, r_star (R_sun, NaN if unknown), rho_star (g/cm^3, NaN if unknown)
period, a, ecc, omega, msini, mass, inc (to the sky; NaN if unknown),
node (longitude of ascending node on the sky; NaN if unknown),
psi (tilt from the system reference plane; MCMC only), sigma_mutual (MCMC only),
mean_anomaly (at the common epoch ``phases["epoch"]``; see :mod:`archsys.inference.phases`)

``phases`` records the common epoch [day] (None when no planet gives a phase), how it was
chosen, and per planet where its phase comes from: ``transit_time``, ``periastron_time``,
``mean_longitude`` or ``uniform`` (drawn uniformly: no phase given).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["Posterior", "PLANET_KEYS", "SYSTEM_KEYS"]

PLANET_KEYS = ("period", "a", "ecc", "omega", "msini", "mass", "inc", "node", "psi", "radius", "mean_anomaly")
SYSTEM_KEYS = ("m_star", "r_star", "rho_star", "sigma_mutual", "ref_inc")


@dataclass
class Posterior:
    """Draws of a system's parameters plus how they were obtained."""

    system: object
    draws: dict
    method: str                     # "direct" (Monte Carlo) or "mcmc"
    seed: int | None = None
    notes: dict = field(default_factory=dict)   # per planet: {"mass": "minimum", ...}
    sampler: dict = field(default_factory=dict)
    prior: dict = field(default_factory=dict)
    phases: dict = field(default_factory=dict)  # epoch, epoch_source, source per planet, uniform

    @property
    def n_draws(self) -> int:
        return int(np.shape(self.draws["period"])[0])

    def __getitem__(self, key):
        return self.draws[key]

    def get(self, key, default=None):
        return self.draws.get(key, default)

    def take(self, idx, **sampler_updates):
        """A posterior of the draws ``idx`` (e.g. those that survive an N-body integration)."""
        idx = np.asarray(idx, dtype=int)
        d = {k: np.asarray(v)[idx] for k, v in self.draws.items()}
        return Posterior(self.system, d, self.method, self.seed, self.notes, {**self.sampler, **sampler_updates},
                         self.prior, self.phases)

    def subset(self, n, rng=None):
        """A posterior of at most ``n`` draws (evenly thinned, deterministic)."""
        if n >= self.n_draws:
            return self
        idx = np.linspace(0, self.n_draws - 1, n).round().astype(int)
        d = {k: np.asarray(v)[idx] for k, v in self.draws.items()}
        return Posterior(self.system, d, self.method, self.seed, self.notes, self.sampler, self.prior,
                         self.phases)
