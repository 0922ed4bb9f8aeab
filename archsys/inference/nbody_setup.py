"""N-body initial conditions from posterior draws (input of :func:`archsys.physics.nbody.integrate_draws`).

One common epoch for all planets (:mod:`archsys.inference.phases`): each draw's mean anomalies
``mean_anomaly`` at ``post.phases["epoch"]``, drawn uniformly for planets without a phase.
Orientations are the posterior's sky inclinations and nodes; where a posterior has none (RV-only
direct draws) the orbits are coplanar and edge-on (inclination 90 deg, node 0), and the record says
so.  Masses are the true masses where known, else m sin i (then the integration is of the minimum
masses, which the record says too).
"""
from __future__ import annotations

import numpy as np

from ..physics.constants import TWO_PI
from .phases import add_phases

__all__ = ["initial_conditions"]


def initial_conditions(post, n_draws):
    """Elements of up to ``n_draws`` evenly spaced posterior draws for the N-body engine.

    Returns
    -------
    elements : dict
        ``m_star`` (n,), and (n, n_planets) arrays ``m`` [M_sun], ``a`` [au], ``e``, ``inc``,
        ``omega``, ``Omega``, ``M0`` [rad] in the sky frame (observer along +z), keyword arguments of
        :func:`~archsys.physics.nbody.integrate_draws`.
    info : dict
        ``draws`` (indices into ``post``'s draws), ``epoch`` [day] (None without phases),
        ``phase_source`` (planet -> source), ``uniform_phases`` (planet names), ``mass_basis``
        ("true" or "minimum (m sin i)" per planet), ``orientation`` (text), ``dropped`` (draws without
        a mass for every planet).
    """
    if "mean_anomaly" not in post.draws:
        add_phases(post)
    n_all = post.n_draws
    idx = np.arange(n_all) if n_draws >= n_all else np.linspace(0, n_all - 1, int(n_draws)).round().astype(int)
    d = {k: np.asarray(v)[idx] for k, v in post.draws.items()}
    mass, msini = np.asarray(d["mass"], dtype=float), np.asarray(d["msini"], dtype=float)
    m = np.where(np.isfinite(mass), mass, msini)
    ok = np.all(np.isfinite(m) & (m > 0), axis=1) & np.all(np.isfinite(d["a"]) & (d["a"] > 0), axis=1)
    inc = np.asarray(d["inc"], dtype=float)
    node = np.asarray(d["node"], dtype=float)
    have_orient = bool(np.isfinite(inc).all() and np.isfinite(node).all())
    if have_orient:
        orientation = "posterior inclinations and nodes (sky frame)"
    else:
        orientation = "coplanar and edge-on where the posterior has no orientation (inclination 90 deg, node 0)"
    inc = np.where(np.isfinite(inc), inc, 0.5 * np.pi)
    node = np.where(np.isfinite(node), node, 0.0)
    M0 = np.mod(np.asarray(d["mean_anomaly"], dtype=float), TWO_PI)
    names = post.system.planet_names
    basis = {nm: ("true" if np.isfinite(mass[:, j]).all() else "minimum (m sin i)") for j, nm in enumerate(names)}
    elements = dict(m_star=np.asarray(d["m_star"], dtype=float)[ok], m=m[ok], a=np.asarray(d["a"], dtype=float)[ok],
                    e=np.asarray(d["ecc"], dtype=float)[ok], inc=inc[ok], omega=np.asarray(d["omega"], dtype=float)[ok],
                    Omega=node[ok], M0=M0[ok])
    info = {"draws": idx[ok], "epoch": post.phases.get("epoch"), "phase_source": dict(post.phases.get("source", {})),
            "uniform_phases": list(post.phases.get("uniform", [])), "mass_basis": basis,
            "orientation": orientation, "dropped": int((~ok).sum())}
    return elements, info
