"""Orbital phases of every posterior draw at one common epoch.

A planet's phase comes from its ``transit_time``, ``periastron_time`` or
``mean_longitude`` (at the system's ``epoch``); each is drawn from its summary
and turned into the mean anomaly at the common epoch with that draw's own
period, eccentricity and argument of periastron
(:mod:`archsys.physics.phases`):

* transit time t_c: true anomaly f = pi/2 - omega at t_c (observer along +z),
  f -> E -> M, then M(epoch) = M_c + 2 pi (epoch - t_c) / P;
* periastron time t_p: M(epoch) = 2 pi (epoch - t_p) / P;
* mean longitude lambda at the epoch: M = lambda - omega - Omega, with Omega the
  measured ``ascending_node`` where the planet gives one and 0 otherwise (the
  radial-velocity convention, lambda = M + omega).

Planets without a phase get a mean anomaly drawn uniformly on [0, 2 pi), and
the posterior records it (``Posterior.phases["source"]``).

The common epoch is the system's ``epoch`` when given; otherwise the median of
the central values of the given transit and periastron times (so that the
epoch lies among the data and the propagated phases lose the least precision);
with no phase at all it is undefined (``None``) and every phase is uniform.

Phases are drawn from their own random stream, spawned from the run's seed,
after every other quantity: the other draws of a seed are unchanged by them,
and the same seed gives the same phases.  Nothing else in the model couples to
a phase, so drawing them after the joint engine's resampling is exact.
"""
from __future__ import annotations

import numpy as np

from ..physics.constants import TWO_PI
from ..physics.phases import mean_anomaly_at_transit, propagate_mean_anomaly, wrap_angle

__all__ = ["phase_draws", "add_phases", "common_epoch", "PHASE_SOURCES", "PHASE_STREAM"]

#: Values of ``Posterior.phases["source"][planet]``.
PHASE_SOURCES = ("transit_time", "periastron_time", "mean_longitude", "uniform")
#: Entropy word that separates the phase stream from the engines' streams of the same seed.
PHASE_STREAM = 0x5048


def common_epoch(system):
    """(epoch [day] or None, how it was chosen) for ``system``."""
    if getattr(system, "epoch", None) is not None:
        return float(system.epoch), "system epoch"
    times = [p.quantities[k].center for p in system.planets
             for k in ("transit_time", "periastron_time") if k in p.quantities]
    if not times:
        return None, "none (no phase given)"
    return float(np.median(times)), "median of the given transit and periastron times"


def phase_draws(system, draws, seed):
    """Mean anomalies at the common epoch for every draw.

    Parameters
    ----------
    system : archsys.model.system.System
    draws : dict
        Posterior draws with ``period`` [day], ``ecc`` and ``omega`` [rad], shape (n, n_planets);
        ``node`` [rad] is used only for a mean longitude of a planet with a measured node.
    seed : int or None

    Returns
    -------
    mean_anomaly : ndarray, shape (n, n_planets), in [0, 2 pi)
    info : dict
        ``epoch`` (day or None), ``epoch_source``, ``source`` (planet name -> one of
        :data:`PHASE_SOURCES`), ``uniform`` (names of the planets drawn uniformly).
    """
    P = np.asarray(draws["period"], dtype=float)
    e = np.asarray(draws["ecc"], dtype=float)
    w = np.asarray(draws["omega"], dtype=float)
    n, npl = P.shape
    rng = np.random.default_rng(np.random.SeedSequence([int(seed or 0) & 0xFFFFFFFF, PHASE_STREAM]))
    epoch, how = common_epoch(system)
    M = np.empty((n, npl))
    source = {}
    for j, pl in enumerate(system.planets):
        q = pl.quantities
        if "transit_time" in q:
            tc = q["transit_time"].sample(rng, n)
            M[:, j] = propagate_mean_anomaly(mean_anomaly_at_transit(e[:, j], w[:, j]), tc, epoch, P[:, j])
            source[pl.name] = "transit_time"
        elif "periastron_time" in q:
            tp = q["periastron_time"].sample(rng, n)
            M[:, j] = propagate_mean_anomaly(0.0, tp, epoch, P[:, j])
            source[pl.name] = "periastron_time"
        elif "mean_longitude" in q:
            lam = np.radians(q["mean_longitude"].sample(rng, n))
            node = np.zeros(n)
            if "ascending_node" in q and "node" in draws:
                node = np.nan_to_num(np.asarray(draws["node"], dtype=float)[:, j])
            M[:, j] = wrap_angle(lam - w[:, j] - node)
            source[pl.name] = "mean_longitude"
        else:
            M[:, j] = rng.uniform(0.0, TWO_PI, n)
            source[pl.name] = "uniform"
    info = {"epoch": epoch, "epoch_source": how, "source": source,
            "uniform": [nm for nm, s in source.items() if s == "uniform"]}
    return M, info


def add_phases(post):
    """Put ``mean_anomaly`` (n, n_planets) into ``post.draws`` and the record into ``post.phases``;
    returns ``post``."""
    M, info = phase_draws(post.system, post.draws, post.seed)
    post.draws["mean_anomaly"] = M
    post.phases = info
    for name, src in info["source"].items():
        post.notes.setdefault(name, {})["phase"] = src
    return post
