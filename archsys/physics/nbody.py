"""Direct N-body integrations of posterior draws with rebound.

:func:`integrate_draws` is the engine of the dynamical verdicts: per draw, survival (no encounter
within one mutual Hill radius, no escape), orbit crossing, MEGNO, energy error, and libration of
resonant and three-body angles over a horizon (:func:`default_horizon`), within a time budget.
:func:`megno_draws` is the older, simpler MEGNO check (kept for its callers).

Optional: needs the ``nbody`` extra (``pip install 'archsys[nbody]'``), which
provides rebound, a general-purpose N-body library (Rein & Liu 2012).

Every posterior draw is integrated on its own with the symplectic WHFast
integrator (Rein & Tamayo 2015) and the MEGNO chaos indicator (Cincotta &
Simo 2000), in rebound's internal units set to au, days and solar masses
(``G = GM_SUN``).  Draws are independent, so they run in parallel in a
process pool; each draw has its own seed, so the result does not depend on
the number of processes.

References
----------
.. [1] Rein, H. & Liu, S.-F. 2012, A&A 537, A128 (rebound).
.. [2] Rein, H. & Tamayo, D. 2015, MNRAS 452, 376 (WHFast, variational
       equations, MEGNO in rebound).
.. [3] Cincotta, P. M. & Simo, C. 2000, A&AS 147, 205 (MEGNO).
"""
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
import math
import time

import numpy as np

from archsys.errors import InputError
from archsys.physics.constants import GM_SUN, MEARTH_MSUN, TWO_PI

__all__ = ["MEGNO_CHAOS", "STEPS_PER_ORBIT", "ESCAPE_FACTOR", "nbody_available", "MegnoResult",
           "megno_draws", "time_per_draw"]

#: MEGNO above which a draw is called chaotic.  Common practice: <Y> -> 2 for
#: quasi-periodic orbits and grows ~ t * lambda / 2 for chaotic ones; 2.5
#: leaves room for the slow convergence of short integrations.
MEGNO_CHAOS = 2.5
#: Time steps per orbit of the innermost planet (common practice: ~P/20).
STEPS_PER_ORBIT = 20
#: A draw "escapes" when a body is farther than this times the largest
#: semi-major axis from the centre of mass.
ESCAPE_FACTOR = 20.0

_MISSING = "N-body check needs the optional extra: pip install 'archsys[nbody]'"


def nbody_available():
    """True if rebound can be imported (the optional ``nbody`` extra)."""
    try:
        import rebound  # noqa: F401
    except ImportError:
        return False
    return True


def _rebound():
    try:
        import rebound
    except ImportError as exc:
        raise InputError(_MISSING) from exc
    return rebound


@dataclass(frozen=True)
class MegnoResult:
    """Per-draw outcome of :func:`megno_draws`; every field has shape (n_draws,).

    Attributes
    ----------
    megno : ndarray of float
        MEGNO <Y> when the integration stopped (end, encounter or escape).
    chaotic : ndarray of bool
        ``megno > MEGNO_CHAOS``, non-finite MEGNO, an encounter or an escape.
    encounter : ndarray of bool
        Two planets came closer than the encounter distance (or a planet
        reached the star); see ``encounter_factor`` of :func:`megno_draws`.
    escape : ndarray of bool
        A body went farther than ``ESCAPE_FACTOR`` times the largest a.
    t_stop_orbits : ndarray of float
        Time at which the integration stopped, in inner-planet orbits.
    """

    megno: np.ndarray
    chaotic: np.ndarray
    encounter: np.ndarray
    escape: np.ndarray
    t_stop_orbits: np.ndarray


def _integrate_one(task):
    """Integrate one draw; module level so that worker processes can run it."""
    (m_star, m, a, e, inc, omega, Omega, M0, n_orbits, seed,
     steps_per_orbit, encounter_factor) = task
    rebound = _rebound()
    order = np.argsort(a)
    m, a, e, inc, omega, Omega, M0 = (x[order] for x in (m, a, e, inc, omega, Omega, M0))
    sim = rebound.Simulation()
    sim.G = GM_SUN  # au^3 / (M_sun day^2): times in days
    sim.add(m=m_star)
    for k in range(len(m)):  # Jacobi elements, rebound's default for add()
        sim.add(m=m[k], a=a[k], e=e[k], inc=inc[k], omega=omega[k], Omega=Omega[k], M=M0[k])
    sim.move_to_com()
    period_inner = TWO_PI * math.sqrt(a[0] ** 3 / (GM_SUN * (m_star + m[0])))
    sim.integrator = "whfast"
    sim.dt = period_inner / steps_per_orbit
    # Close encounters: give planet i the radius encounter_factor * r_H,i / 2,
    # so that a pair "collides" when closer than encounter_factor times the
    # mean of the two Hill radii.  rebound's "line" search tests the straight
    # path of each step, so fast passes between two steps are not missed.
    sim.collision = "line"
    sim.collision_resolve = "halt"
    r_hill = a * np.cbrt(m / (3.0 * m_star))
    for k in range(len(m)):
        sim.particles[k + 1].r = 0.5 * encounter_factor * float(r_hill[k])
    sim.exit_max_distance = ESCAPE_FACTOR * float(a[-1])
    sim.init_megno(seed=seed)
    encounter = escape = False
    try:
        sim.integrate(n_orbits * period_inner, exact_finish_time=0)
    except (rebound.Collision, rebound.Encounter):
        encounter = True
    except rebound.Escape:
        escape = True
    return float(sim.megno()), encounter, escape, sim.t / period_inner


def megno_draws(m_star, m, a, e, inc, omega, Omega, M0, n_orbits=1000, jobs=1,
                seed=0, steps_per_orbit=STEPS_PER_ORBIT, encounter_factor=1.0,
                megno_threshold=MEGNO_CHAOS):
    """MEGNO and close-encounter check of each posterior draw with rebound.

    Parameters
    ----------
    m_star : array_like, shape (n_draws,) or scalar
        Stellar mass [M_sun].
    m, a, e, inc, omega, Omega, M0 : array_like, shape (n_draws, n_planets)
        Planet masses [M_sun], semi-major axes [au], eccentricities,
        inclination, argument of pericentre, longitude of node and mean
        anomaly [rad].  Planets are sorted by a within each draw and added
        as Jacobi elements (rebound's default).
    n_orbits : float
        Integration length in orbits of the innermost planet.
    jobs : int
        Worker processes (``concurrent.futures.ProcessPoolExecutor``); 1 runs
        in this process.  The result does not depend on ``jobs``.
    seed : int
        Root seed; draw k gets its own child seed for rebound's MEGNO
        variational particles (``numpy.random.SeedSequence.spawn``).
    steps_per_orbit : int
        WHFast time step is ``P_inner / steps_per_orbit`` (common practice: 20).
    encounter_factor : float
        Close encounter when two planets pass closer than this times the mean
        of their single-planet Hill radii, ``a (m / 3 M_star)^(1/3)`` (default
        1: about 0.8 mutual Hill radii for equal masses), or a planet comes
        within ``encounter_factor * r_H / 2`` of the star's centre.  Detected with rebound's
        ``"line"`` collision search (planet radius ``encounter_factor * r_H / 2``,
        ``collision_resolve = "halt"``), which checks the straight path of each
        step, so fast eccentric passes between two steps are not missed.
    megno_threshold : float
        Draws with MEGNO above it are chaotic; default :data:`MEGNO_CHAOS`
        (common practice: <Y> -> 2 for quasi-periodic orbits).

    Returns
    -------
    MegnoResult

    Raises
    ------
    archsys.errors.InputError
        If rebound is not installed.
    ValueError
        If the arrays are inconsistent or out of range.
    """
    _rebound()
    arrays = [np.atleast_2d(np.asarray(x, dtype=float)) for x in (m, a, e, inc, omega, Omega, M0)]
    try:
        arrays = np.broadcast_arrays(*arrays)
    except ValueError as exc:
        raise ValueError(f"planet arrays must share the shape (n_draws, n_planets): {exc}") from None
    m, a, e, inc, omega, Omega, M0 = arrays
    if m.ndim != 2:
        raise ValueError(f"planet arrays must be 2-D (n_draws, n_planets); got shape {m.shape}")
    n_draws = m.shape[0]
    m_star = np.broadcast_to(np.asarray(m_star, dtype=float), (n_draws,))
    if np.any(~(m_star > 0)) or np.any(~(m >= 0)) or np.any(~(a > 0)):
        raise ValueError("m_star and a must be positive and m non-negative in every draw")
    if np.any(~((e >= 0) & (e < 1))):
        raise ValueError("eccentricities must be in [0, 1) in every draw")
    if not (n_orbits > 0 and int(jobs) >= 1 and steps_per_orbit > 0):
        raise ValueError("n_orbits and steps_per_orbit must be positive and jobs >= 1")
    seeds = [int(s.generate_state(1)[0] & 0x7FFFFFFF)
             for s in np.random.SeedSequence(seed).spawn(n_draws)]
    tasks = [(float(m_star[k]), m[k], a[k], e[k], inc[k], omega[k], Omega[k], M0[k],
              float(n_orbits), seeds[k], int(steps_per_orbit), float(encounter_factor))
             for k in range(n_draws)]
    jobs = min(int(jobs), max(n_draws, 1))
    if jobs == 1:
        out = [_integrate_one(t) for t in tasks]
    else:
        with ProcessPoolExecutor(max_workers=jobs) as pool:
            out = list(pool.map(_integrate_one, tasks, chunksize=max(1, n_draws // (4 * jobs))))
    megno = np.array([o[0] for o in out], dtype=float)
    encounter = np.array([o[1] for o in out], dtype=bool)
    escape = np.array([o[2] for o in out], dtype=bool)
    t_stop = np.array([o[3] for o in out], dtype=float)
    chaotic = encounter | escape | ~np.isfinite(megno) | (megno > megno_threshold)
    return MegnoResult(megno, chaotic, encounter, escape, t_stop)


def time_per_draw(n_draws=4, n_orbits=1000, jobs=1, seed=0):
    """Wall-clock seconds per MEGNO integration of a six-planet system.

    For benchmarks and printed figures only (nothing asserts on it).  The
    system: a 1 M_sun star with six 5 M_E planets from 0.1 au, spaced by 20
    mutual Hill radii (typical of Kepler multis, Fang & Margot 2013), with
    small random eccentricities (< 0.02), inclinations (< 0.02 rad) and angles
    drawn from ``seed``.

    Returns
    -------
    seconds : float
        Elapsed time of :func:`megno_draws` divided by ``n_draws``.
    """
    rng = np.random.default_rng(seed)
    n_planets, mass, spacing = 6, 5.0 * MEARTH_MSUN, 20.0
    k = spacing * np.cbrt(2.0 * mass / 3.0) / 2.0  # a_{i+1} = a_i (1 + k) / (1 - k)
    a_row = 0.1 * ((1.0 + k) / (1.0 - k)) ** np.arange(n_planets)
    shape = (n_draws, n_planets)
    args = dict(m=np.full(shape, mass), a=np.broadcast_to(a_row, shape),
                e=rng.uniform(0.0, 0.02, shape), inc=rng.uniform(0.0, 0.02, shape),
                omega=rng.uniform(0.0, TWO_PI, shape), Omega=rng.uniform(0.0, TWO_PI, shape),
                M0=rng.uniform(0.0, TWO_PI, shape))
    start = time.perf_counter()
    megno_draws(1.0, n_orbits=n_orbits, jobs=jobs, seed=seed, **args)
    return (time.perf_counter() - start) / n_draws


# =========================================================================== integrate_draws
# The richer engine: close encounters measured in mutual Hill radii, orbit crossing, escapes,
# energy error, resonant and three-body angles sampled at snapshots, horizons, a time budget
# and a persistent process pool.


