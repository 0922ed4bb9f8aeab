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
import atexit
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
import math
import time

import numpy as np

from archsys.errors import InputError
from archsys.physics.constants import GM_SUN, MEARTH_MSUN, TWO_PI

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

#: Close encounter: two planets closer than this many mutual Hill radii
#: R_H,m = ((m_i + m_j) / (3 M_star))^(1/3) (a_i + a_j) / 2 (Chambers et al. 1996, eq. 2).
HILL_ENCOUNTER = 1.0
#: Relative energy error |dE / E| at a snapshot above which a draw switches from WHFast to IAS15.
ENERGY_SWITCH = 1e-4
#: MEGNO above which a draw is clearly chaotic: its MEGNO is kept and the integration continues
#: without the chaos indicator (survival only: two to three times faster).  MEGNO grows about
#: linearly in time for chaotic orbits (Cincotta & Simo 2000), so a draw past twice the threshold
#: stays above it.
MEGNO_DROP = 2.0 * MEGNO_CHAOS
#: Order of WHFast's symplectic corrector (Wisdom, Holman & Touma 1996; Rein & Tamayo 2015) where
#: WHFast runs with safe_mode 0 (0: none).  Correctors act only at the snapshots.
WHFAST_CORRECTOR = 0
#: How MEGNO is computed by default: "variational" (rebound's variational equations, Rein & Tamayo
#: 2016; needs WHFast's safe_mode 1) or "shadow" (finite differences with a shadow trajectory, both in
#: safe_mode 0; see _Shadow).
MEGNO_METHOD = "shadow"
#: Shortest default horizon in orbits of the innermost planet and of the outermost planet.
MIN_INNER_ORBITS = 1e4
MIN_OUTER_ORBITS = 100.0
#: A sampled angle "librates" when the samples leave an empty arc wider than LIBRATION_GAP on the
#: circle (its range stays below 2 pi - LIBRATION_GAP) and its unwrapped secular drift over the
#: integration (least-squares line) is below LIBRATION_DRIFT (common practice; see libration_test).
LIBRATION_GAP = 0.5 * math.pi
LIBRATION_DRIFT = 0.5 * math.pi


@dataclass(frozen=True)
class NbodyResult:
    """Outcome of :func:`integrate_draws`; arrays have shape (n_draws,) unless stated.

    Draws the time budget left out (``completed`` False) hold NaN / False and count nowhere;
    use ``completed`` (or ``n_draws_integrated``) to select the draws that were integrated.

    Attributes
    ----------
    megno : MEGNO <Y> when the integration stopped, or when it passed ``megno_drop`` (then the
        integration continued without variational equations); NaN when not computed.
    megno_inner_orbits : time over which MEGNO was computed [initial inner orbits].
    chaotic : MEGNO > MEGNO_CHAOS, non-finite MEGNO, or an encounter or escape.
    encounter : two planets closer than ``hill_factor`` mutual Hill radii, or a planet within its
        encounter radius of the star.
    escape : a planet went beyond ESCAPE_FACTOR x the largest initial a, or became unbound
        (e >= 1 at a snapshot).
    crossing : at a snapshot the osculating orbits of two planets crossed
        (a_i (1 + e_i) > a_j (1 - e_j) for some i, j with a_i < a_j at the start).
    survived : completed, no encounter and no escape.
    t_stop_inner_orbits : time the integration stopped, in initial orbits of the innermost planet.
    energy_error : largest relative energy error |E - E0| / |E0| over the snapshots.
    integrator : per draw, "whfast", "whfast+ias15" (switched after the energy error exceeded
        ENERGY_SWITCH) or "" (not integrated).
    librating : spec (i, j, p, q) -> bool array: some resonant angle of that pair librates (False
        for draws stopped by an encounter or escape, or with fewer than 8 snapshots).
    libration_amplitude : spec -> float array [rad]: half the range of the best (least wide)
        resonant angle; NaN when none librates.
    laplace_librating : spec (i, j, k, c_i, c_j, c_k) -> bool array.
    laplace_amplitude : spec -> float array [rad].
    completed : the draw ran to the horizon or stopped on an event within the time budget.
    n_inner_orbits : requested horizon in orbits of the innermost planet.
    n_draws_integrated : number of completed draws.
    truncated : True when the time budget left some draws out.
    seconds : wall-clock time of the call.
    hill_factor : encounter distance in mutual Hill radii.
    n_snapshots : snapshots per draw.
    """

    megno: np.ndarray
    megno_inner_orbits: np.ndarray
    chaotic: np.ndarray
    encounter: np.ndarray
    escape: np.ndarray
    crossing: np.ndarray
    survived: np.ndarray
    t_stop_inner_orbits: np.ndarray
    energy_error: np.ndarray
    integrator: tuple
    librating: dict
    libration_amplitude: dict
    laplace_librating: dict
    laplace_amplitude: dict
    completed: np.ndarray
    n_inner_orbits: float
    n_draws_integrated: int
    truncated: bool
    seconds: float
    hill_factor: float = HILL_ENCOUNTER
    n_snapshots: int = 0

    @property
    def n_draws(self):
        return int(self.megno.shape[0])


def default_horizon(P, min_inner=MIN_INNER_ORBITS, min_outer=MIN_OUTER_ORBITS):
    """Default integration length in orbits of the innermost planet.

    At least ``min_inner`` (1e4) orbits of the innermost planet and at least ``min_outer`` (100)
    orbits of the outermost, with the median period ratio over the draws: MEGNO separates chaotic
    from quasi-periodic orbits after ~1e3-1e4 orbits of the pair concerned, and close encounters in
    compact systems arise within 1e3-1e4 inner orbits (Chambers et al. 1996; Obertas et al. 2017).

    Parameters
    ----------
    P : array_like, (n_planets,) or (n_draws, n_planets)
        Periods [day].
    """
    P = np.atleast_2d(np.asarray(P, dtype=float))
    ratio = float(np.nanmedian(np.nanmax(P, axis=1) / np.nanmin(P, axis=1)))
    return float(max(min_inner, min_outer * ratio))


def horizon_summary(n_inner_orbits, P):
    """The horizon in inner orbits, outer orbits and years (medians over the draws)."""
    P = np.atleast_2d(np.asarray(P, dtype=float))
    p_in = float(np.nanmedian(np.nanmin(P, axis=1)))
    p_out = float(np.nanmedian(np.nanmax(P, axis=1)))
    days = float(n_inner_orbits) * p_in
    return {"inner_orbits": float(n_inner_orbits), "outer_orbits": days / p_out,
            "years": days / 365.25, "days": days}


def mutual_hill_radius(m_star, m_i, m_j, a_i, a_j):
    """R_H,m = ((m_i + m_j) / (3 M_star))^(1/3) (a_i + a_j) / 2 (Chambers et al. 1996, eq. 2)."""
    return np.cbrt((np.asarray(m_i) + m_j) / (3.0 * np.asarray(m_star))) * 0.5 * (np.asarray(a_i) + a_j)


def libration_test(angles, times=None, gap=LIBRATION_GAP, drift=LIBRATION_DRIFT):
    """Does each sampled angle librate?  Vectorised over leading axes.

    Parameters
    ----------
    angles : array_like, (..., n_samples) [rad]
        An angle sampled through the integration (any branch).
    times : array_like, (n_samples,), optional
        Sample times (for the drift); evenly spaced when omitted.

    Returns
    -------
    librating : bool array (...)
        The samples leave an empty arc wider than ``gap`` on the circle (the angle never visits
        part of the circle, so it did not circulate) and the least-squares drift of the unwrapped
        angle over the whole span is smaller than ``drift`` (a slow monotonic drift through part of
        the circle is circulation too slow to complete within the span, not libration).
        Common practice: an angle librates when its range stays within less than 2 pi.
    amplitude : float array (...) [rad]
        Half the range of the visited arc, (2 pi - largest gap) / 2.
    center : float array (...) [rad]
        Middle of the visited arc, in [0, 2 pi).
    """
    x = np.mod(np.asarray(angles, dtype=float), TWO_PI)
    n = x.shape[-1]
    s = np.sort(x, axis=-1)
    gaps = np.concatenate([np.diff(s, axis=-1), (s[..., :1] + TWO_PI) - s[..., -1:]], axis=-1)
    k = np.argmax(gaps, axis=-1)
    big = np.take_along_axis(gaps, k[..., None], axis=-1)[..., 0]
    amplitude = 0.5 * (TWO_PI - big)
    # the visited arc starts after the gap: s[k+1] and spans TWO_PI - big
    start = np.take_along_axis(s, ((k + 1) % n)[..., None], axis=-1)[..., 0]
    center = np.mod(start + amplitude, TWO_PI)
    t = np.linspace(0.0, 1.0, n) if times is None else np.asarray(times, dtype=float)
    t = (t - t.mean()) / max(float(np.ptp(t)), 1e-300)
    u = np.unwrap(np.asarray(angles, dtype=float), axis=-1)
    slope = np.sum((u - u.mean(axis=-1, keepdims=True)) * t, axis=-1) / np.sum(t * t)
    librating = (big > gap) & (np.abs(slope) < drift)
    return librating, amplitude, center


def _plain(x):
    return tuple(int(v) for v in x)


def _check_specs(resonances, laplace, n_planets):
    res, lap = [], []
    for spec in resonances:
        i, j, p, q = _plain(spec)
        if not (0 <= i < j < n_planets and p >= 1 and 1 <= q <= 3):
            raise ValueError(f"resonance spec {spec!r}: need 0 <= i < j < {n_planets}, p >= 1, q in 1..3")
        res.append((i, j, p, q))
    for spec in laplace:
        i, j, k, ci, cj, ck = _plain(spec)
        if not (len({i, j, k}) == 3 and all(0 <= x < n_planets for x in (i, j, k))):
            raise ValueError(f"Laplace spec {spec!r}: need three distinct planets below {n_planets}")
        lap.append((i, j, k, ci, cj, ck))
    return tuple(res), tuple(lap)


def _time_step(P, e, steps_per_orbit):
    """WHFast step: the shortest pericentre-passage time scale P (1 - e)^(3/2) / (1 + e)^(1/2)
    of any planet over ``steps_per_orbit`` (P / 20 for circular orbits; common practice,
    Wisdom 2015 for eccentric orbits)."""
    scale = P * (1.0 - e) ** 1.5 / np.sqrt(1.0 + e)
    return float(np.min(scale)) / steps_per_orbit


def _jacobi_elements(sim, n_pl):
    """(a, e, lambda, varpi) arrays of the first n_pl planets, Jacobi elements (rebound's default)."""
    import rebound
    com = rebound.clibrebound.reb_particle_com_of_pair
    com.restype = rebound.Particle
    primary = sim.particles[0]
    out = np.empty((4, n_pl))
    for i in range(n_pl):
        p = sim.particles[i + 1]
        o = p.orbit(primary=primary)
        out[:, i] = (o.a, o.e, o.l, o.pomega)
        primary = com(primary, p)
    return out


def _configure(sim, integrator, dt, megno_on, radius, resolve, exit_max, corrector=0):
    sim.integrator = integrator
    if integrator == "whfast" and not megno_on:
        sim.integrator.safe_mode = 0                 # rebound refuses safe_mode 0 with MEGNO
        sim.integrator.corrector = corrector         # applied only when synchronising (snapshots)
    sim.dt = dt
    for i, r in enumerate(radius[1:], start=1):
        sim.particles[i].r = float(r)
    sim.collision = "line"
    sim.collision_resolve = resolve
    sim.exit_max_distance = exit_max


def _without_variations(sim, n_pl, integrator, dt, radius, resolve, exit_max, corrector=0):
    """A copy of ``sim`` (synchronised) without the MEGNO variational particles."""
    import rebound
    new = rebound.Simulation()
    new.G = sim.G
    for i in range(n_pl + 1):
        new.add(sim.particles[i])
    new.t = sim.t
    _configure(new, integrator, dt, False, radius, resolve, exit_max, corrector)
    return new


class _Shadow:
    """A shadow trajectory for MEGNO by finite differences (the two-particle method of Benettin et
    al. 1980): a copy of the system displaced by D0 in scaled phase space (positions over the inner
    semi-major axis, velocities over its circular speed; every body, star included), integrated beside
    the nominal one with the same WHFast steps (``safe_mode = 0``) and renormalised back to D0 (same
    direction) whenever the separation passes RENORM.  With L(t) the accumulated ln(separation / D0),
    MEGNO is Y(t) = (2/t) int_0^t s dL = 2 L(t) - (2/t) int_0^t L ds and <Y>(t) = (1/t) int_0^t Y ds
    (Cincotta & Simo 2000, eqs. 2-3), integrated by trapezoids over the snapshots; quasi-periodic
    orbits give <Y> -> 2, chaotic ones <Y> ~ lambda t / 2."""

    D0 = 1e-9
    RENORM = 1e-6

    def __init__(self, nominal, n_pl, rng, length, speed, corrector=0):
        self.n = n_pl + 1
        self.corrector = corrector
        self.scale = np.array([length] * 3 + [speed] * 3)
        u = rng.standard_normal((self.n, 6))
        u[0] = 0.0                                   # displace the planets; the star follows
        self.sim = self._build(nominal, u * (self.D0 / np.linalg.norm(u)))
        self.t, self.logs, self.acc = [0.0], [0.0], 0.0

    def _state(self, sim):
        ps = sim.particles
        return np.array([[p.x, p.y, p.z, p.vx, p.vy, p.vz] for p in (ps[i] for i in range(self.n))])

    def _build(self, nominal, offset):
        import rebound
        new = rebound.Simulation()
        new.G = nominal.G
        shifted = self._state(nominal) + offset * self.scale
        for i in range(self.n):
            new.add(m=nominal.particles[i].m, x=shifted[i, 0], y=shifted[i, 1], z=shifted[i, 2],
                    vx=shifted[i, 3], vy=shifted[i, 4], vz=shifted[i, 5])
        new.t = nominal.t
        new.integrator = "whfast"
        new.integrator.safe_mode = 0
        new.integrator.corrector = self.corrector
        new.dt = nominal.dt
        return new

    def follow(self, nominal):
        """Integrate the shadow to the nominal's time and record ln(separation); False if it broke."""
        if nominal.t <= self.t[-1]:
            return True                              # no step since the last sample
        self.sim.integrate(nominal.t, exact_finish_time=0)
        self.sim.synchronize()
        if abs(self.sim.t - nominal.t) > 1e-9 * max(abs(nominal.t), nominal.dt):
            return False
        off = (self._state(self.sim) - self._state(nominal)) / self.scale
        d = float(np.linalg.norm(off))
        if not (math.isfinite(d) and d > 0):
            return False
        self.t.append(nominal.t)
        self.logs.append(self.acc + math.log(d / self.D0))
        if d > self.RENORM:
            self.acc += math.log(d / self.D0)
            self.sim = self._build(nominal, off * (self.D0 / d))
        return True

    def megno(self):
        t, L = np.asarray(self.t), np.asarray(self.logs)
        if len(t) < 3 or t[-1] <= 0:
            return math.nan
        dt = np.diff(t)
        integral = np.concatenate([[0.0], np.cumsum(0.5 * (L[1:] + L[:-1]) * dt)])
        y = np.zeros_like(t)
        y[1:] = 2.0 * L[1:] - 2.0 * integral[1:] / t[1:]
        return float(np.sum(0.5 * (y[1:] + y[:-1]) * dt) / t[-1])


def _run_draw(task):
    """Integrate one draw (module level: worker processes run it)."""
    (m_star, m, a, e, inc, omega, Omega, M0, n_inner, seed, steps, hill_factor, res_specs, lap_specs,
     n_snap, deadline, megno_mode, energy_switch, megno_drop, corrector) = task
    megno_on = megno_mode == "variational"
    rebound = _rebound()
    n_pl = len(m)
    out = {"megno": math.nan, "megno_t": 0.0, "encounter": False, "escape": False, "crossing": False,
           "t_stop": 0.0, "energy": math.nan, "integrator": "", "completed": False,
           "res": [(False, math.nan)] * len(res_specs), "lap": [(False, math.nan)] * len(lap_specs)}
    if deadline is not None and time.time() > deadline:
        return out
    order = np.argsort(a, kind="stable")
    rank = np.empty(n_pl, dtype=int)
    rank[order] = np.arange(n_pl)                   # column -> position in the simulation
    ms, as_, es = m[order], a[order], e[order]
    sim = rebound.Simulation()
    sim.G = GM_SUN
    sim.add(m=m_star)
    for k in order:                                  # Jacobi elements, innermost first
        sim.add(m=m[k], a=a[k], e=e[k], inc=inc[k], omega=omega[k], Omega=Omega[k], M=M0[k])
    sim.move_to_com()
    # elements and angles about the invariable plane (prograde, whatever the sky inclinations)
    L = sim.angular_momentum()
    if math.sqrt(L.x ** 2 + L.y ** 2 + L.z ** 2) > 0:
        sim.rotate(rebound.Rotation.to_new_axes(newz=[L.x, L.y, L.z]))
    P = TWO_PI * np.sqrt(as_ ** 3 / (GM_SUN * (m_star + ms)))
    p_inner = float(P[0])
    t_end = float(n_inner) * p_inner
    dt = _time_step(P, es, steps)
    # close encounters: each planet gets half its largest mutual Hill radius with a neighbour in a
    # (times hill_factor), so every adjacent pair closer than hill_factor R_H,m is a candidate of
    # rebound's "line" search (which follows each step's straight path); the callback then measures
    # the pair's closest approach along the step against that pair's own hill_factor R_H,m.
    # Non-adjacent pairs become candidates at the sum of their two radii (an approximation: such
    # pairs meet only after their orbits have crossed an intermediate one).  A planet within its
    # radius of the star counts as an encounter too.
    rh = np.zeros((n_pl + 1, n_pl + 1))
    for i in range(n_pl):
        for j in range(i + 1, n_pl):
            rh[i + 1, j + 1] = rh[j + 1, i + 1] = hill_factor * mutual_hill_radius(m_star, ms[i], ms[j],
                                                                                   as_[i], as_[j])
    radius = np.zeros(n_pl + 1)
    for i in range(n_pl):
        neigh = [rh[i + 1, j + 1] for j in (i - 1, i + 1) if 0 <= j < n_pl]
        radius[i + 1] = 0.5 * (max(neigh) if neigh else hill_factor * as_[i] * np.cbrt(ms[i] / (3 * m_star)))
    hit = []

    def _resolve(simp, col):
        s = simp.contents
        i1, i2 = int(col.p1), int(col.p2)
        if i1 == 0 or i2 == 0:                       # a planet reached the star
            hit.append((i1, i2))
            s.stop()
            return 0
        p1, p2 = s.particles[i1], s.particles[i2]
        dx = np.array([p1.x - p2.x, p1.y - p2.y, p1.z - p2.z])
        dv = np.array([p1.vx - p2.vx, p1.vy - p2.vy, p1.vz - p2.vz])
        # closest approach on the straight path of the last step: t in [-dt, 0]
        vv = float(dv @ dv)
        t = 0.0 if vv == 0 else min(0.0, max(-s.dt, -float(dx @ dv) / vv))
        if float(np.linalg.norm(dx + t * dv)) < rh[i1, i2]:
            hit.append((i1, i2))
            s.stop()
        return 0

    exit_max = ESCAPE_FACTOR * float(as_[-1])
    _configure(sim, "whfast", dt, megno_on, radius, _resolve, exit_max, corrector)
    rng = np.random.default_rng(seed)
    if megno_on:
        sim.init_megno(seed=seed)
    shadow = None
    if megno_mode == "shadow":
        shadow = _Shadow(sim, n_pl, rng, float(as_[0]), TWO_PI * float(as_[0]) / p_inner, corrector)
    e0 = sim.energy()
    # snapshot times: one per slot, jittered within the slot so that a circulating angle is never
    # sampled in step with its own period (aliasing), the last one at the horizon
    slots = (np.arange(n_snap) + 1.0 - 0.5 * rng.uniform(size=n_snap)) / n_snap
    slots[-1] = 1.0
    times = slots * t_end
    lam = np.full((n_snap, n_pl), np.nan)
    pom = np.full((n_snap, n_pl), np.nan)
    t_samp = np.full(n_snap, np.nan)
    e_err = 0.0
    integ = "whfast"
    megno_live = megno_on
    k_done = 0
    for k, tk in enumerate(times):
        try:
            sim.integrate(float(tk), exact_finish_time=0)
        except rebound.Escape:
            out["escape"] = True
        except (rebound.Collision, rebound.Encounter):
            out["encounter"] = True
        if hit:
            out["encounter"] = True
        sim.synchronize()
        with np.errstate(all="ignore"):
            en = sim.energy()
            err = abs((en - e0) / e0) if e0 != 0 else abs(en)
        e_err = max(e_err, err) if math.isfinite(err) else math.inf
        if out["encounter"] or out["escape"]:
            break
        a_k, e_k, lam[k], pom[k] = _jacobi_elements(sim, n_pl)
        if np.any(~np.isfinite(e_k)) or np.any(e_k >= 1.0) or np.any(a_k <= 0):
            out["escape"] = True
            break
        t_samp[k] = sim.t
        apo, peri = a_k * (1 + e_k), a_k * (1 - e_k)
        if np.any(np.triu(apo[:, None] > peri[None, :], 1)):
            out["crossing"] = True
        k_done = k + 1
        if deadline is not None and time.time() > deadline and k < n_snap - 1:
            out["t_stop"] = sim.t / p_inner
            return out                              # not completed: left out by the time budget
        switch = integ == "whfast" and err > energy_switch
        if shadow is not None:
            if not shadow.follow(sim) or switch or shadow.megno() > megno_drop:
                # the shadow broke, the nominal leaves WHFast, or the draw is clearly chaotic
                out["megno"], out["megno_t"] = shadow.megno(), sim.t / p_inner
                shadow = None
        if megno_live and k < n_snap - 1 and sim.megno() > megno_drop:
            # clearly chaotic: keep its MEGNO and continue without variational equations
            out["megno"], out["megno_t"] = float(sim.megno()), sim.t / p_inner
            megno_live = False
            sim = _without_variations(sim, n_pl, "whfast" if integ == "whfast" and not switch else "ias15", dt,
                                      radius, _resolve, exit_max, corrector)
        elif switch:
            # WHFast is losing accuracy (an eccentric or close pass): continue adaptively
            sim.integrator = "ias15"
        if switch:
            integ = "whfast+ias15"
    out["t_stop"] = sim.t / p_inner
    out["energy"] = e_err
    out["integrator"] = integ
    out["completed"] = True
    if megno_live:
        out["megno"], out["megno_t"] = float(sim.megno()), sim.t / p_inner
    if shadow is not None:
        out["megno"], out["megno_t"] = shadow.megno(), sim.t / p_inner
    ok = slice(0, k_done)
    if k_done >= 8 and not (out["encounter"] or out["escape"]):
        ts = t_samp[ok]
        res_out = []
        for (i, j, p, q) in res_specs:
            ri, rj = rank[i], rank[j]
            ks = np.arange(q + 1)
            phi = ((p + q) * lam[ok, rj][None, :] - p * lam[ok, ri][None, :]
                   - ks[:, None] * pom[ok, ri][None, :] - (q - ks)[:, None] * pom[ok, rj][None, :])
            lib, amp, _ = libration_test(phi, ts)
            best = np.where(lib, amp, np.inf)
            res_out.append((bool(lib.any()), float(best.min()) if lib.any() else math.nan))
        out["res"] = res_out
        lap_out = []
        for (i, j, kk, ci, cj, ck) in lap_specs:
            phi = ci * lam[ok, rank[i]] + cj * lam[ok, rank[j]] + ck * lam[ok, rank[kk]]
            lib, amp, _ = libration_test(phi, ts)
            lap_out.append((bool(lib), float(amp) if lib else math.nan))
        out["lap"] = lap_out
    return out


_POOL = None
_POOL_JOBS = 0


def _pool(jobs):
    """A process pool kept across calls (worker start-up is paid once per session)."""
    global _POOL, _POOL_JOBS
    if _POOL is None or _POOL_JOBS != jobs:
        shutdown_pool()
        _POOL = ProcessPoolExecutor(max_workers=jobs)
        _POOL_JOBS = jobs
    return _POOL


def shutdown_pool():
    """Stop the persistent worker processes (also run at interpreter exit)."""
    global _POOL, _POOL_JOBS
    if _POOL is not None:
        _POOL.shutdown(wait=True, cancel_futures=True)
    _POOL, _POOL_JOBS = None, 0


atexit.register(shutdown_pool)


def integrate_draws(m_star, m, a, e, inc, omega, Omega, M0, *, n_inner_orbits, jobs=1, seed=0,
                    resonances=(), laplace=(), n_snapshots=200, time_budget=None,
                    hill_factor=HILL_ENCOUNTER, megno=True, steps_per_orbit=STEPS_PER_ORBIT,
                    megno_threshold=MEGNO_CHAOS, energy_switch=ENERGY_SWITCH,
                    megno_drop=MEGNO_DROP, corrector=WHFAST_CORRECTOR) -> NbodyResult:
    """Integrate posterior draws with rebound and judge survival, chaos and resonances.

    Each draw is integrated on its own (WHFast, Jacobi elements, time step 1/``steps_per_orbit`` of
    the shortest pericentre time scale, MEGNO; see ``megno``) for
    ``n_inner_orbits`` orbits of its innermost planet, about the invariable plane.  At
    ``n_snapshots`` jittered times the orbits are checked for crossing and unbound planets, the
    energy error is measured, and the mean longitudes and longitudes of pericentre (Jacobi
    elements) are sampled for the resonance tests.  A draw whose energy error exceeds
    ``energy_switch`` continues with IAS15 (Rein & Spiegel 2015), an adaptive integrator that
    resolves close passes.

    Parameters
    ----------
    m_star : array_like (n_draws,) or scalar
        Stellar mass [M_sun].
    m, a, e, inc, omega, Omega, M0 : array_like (n_draws, n_planets)
        Masses [M_sun], semi-major axes [au], eccentricities, inclination, argument of
        pericentre, node and mean anomaly [rad], in any common frame (e.g. the sky).
        Columns are planets; give them sorted by a (as a posterior's periods are): the indices of
        ``resonances`` and ``laplace`` refer to columns.
    n_inner_orbits : float
        Horizon in orbits of the innermost planet (see :func:`default_horizon`).
    jobs : int
        Worker processes (a pool kept across calls); results do not depend on ``jobs``.
    seed : int
        Root seed: draw k gets its own child (MEGNO's variational particles, snapshot jitter).
    resonances : sequence of (i, j, p, q)
        Planets i < j near the (p+q):p resonance (P_j / P_i ~ (p+q)/p), order q in 1..3.  The
        angles phi_k = (p+q) lam_j - p lam_i - k varpi_i - (q-k) varpi_j, k = 0..q, are tested;
        the pair librates in a draw when at least one of them librates (:func:`libration_test`).
    laplace : sequence of (i, j, k, c_i, c_j, c_k)
        Three-body angles c_i lam_i + c_j lam_j + c_k lam_k (e.g. p/P1 - (p+q)/P2 + q/P3 ~ 0
        gives p lam_1 - (p+q) lam_2 + q lam_3).
    n_snapshots : int
        Samples per draw (>= 8 for a resonance verdict).
    time_budget : float, optional
        Seconds for the whole call.  Draws are started in order; a draw not finished by the
        deadline is left out (``completed`` False) and ``truncated`` says so.  Results with a
        budget that binds depend on the machine's speed; without one they are deterministic.
    hill_factor : float
        Encounter distance in mutual Hill radii (default 1).
    megno : bool or {"shadow", "variational"}
        How MEGNO is computed: ``"shadow"`` (default, :data:`MEGNO_METHOD`; a displaced copy of the
        system integrated beside it, both with WHFast's ``safe_mode = 0``; about 1.5 times faster than
        the variational equations for seven planets, same verdicts in our tests), ``"variational"``
        (rebound's variational equations, Rein & Tamayo 2016; needs ``safe_mode = 1``), or False
        (none: ``chaotic`` holds only encounters and escapes; about three times faster).
    megno_drop : float
        A draw whose MEGNO passes this value (clearly chaotic) keeps it and continues without the
        chaos indicator (survival only).
    corrector : int
        Order of WHFast's symplectic corrector (0, 3, 5, 7, 11 or 17) where WHFast runs with
        ``safe_mode = 0``; applied only at snapshots.  With ``corrector=17`` and ``steps_per_orbit=14``
        the seven-planet benchmark runs about 1.5 times faster with a smaller energy error (our
        measurements; the default keeps the common P/20 step without corrector).

    Returns
    -------
    NbodyResult

    Raises
    ------
    archsys.errors.InputError
        If rebound is not installed.
    ValueError
        If the arrays are inconsistent or out of range, or a spec is invalid.
    """
    start = time.perf_counter()
    _rebound()
    arrays = [np.atleast_2d(np.asarray(x, dtype=float)) for x in (m, a, e, inc, omega, Omega, M0)]
    try:
        arrays = np.broadcast_arrays(*arrays)
    except ValueError as exc:
        raise ValueError(f"planet arrays must share the shape (n_draws, n_planets): {exc}") from None
    m, a, e, inc, omega, Omega, M0 = (np.ascontiguousarray(x) for x in arrays)
    if m.ndim != 2:
        raise ValueError(f"planet arrays must be 2-D (n_draws, n_planets); got shape {m.shape}")
    n_draws, n_pl = m.shape
    m_star = np.broadcast_to(np.asarray(m_star, dtype=float), (n_draws,))
    if np.any(~(m_star > 0)) or np.any(~(m >= 0)) or np.any(~(a > 0)):
        raise ValueError("m_star and a must be positive and m non-negative in every draw")
    if np.any(~((e >= 0) & (e < 1))):
        raise ValueError("eccentricities must be in [0, 1) in every draw")
    if not np.all(np.isfinite(np.stack([inc, omega, Omega, M0]))):
        raise ValueError("angles must be finite in every draw")
    if not (n_inner_orbits > 0 and int(jobs) >= 1 and steps_per_orbit > 0 and int(n_snapshots) >= 1
            and hill_factor > 0):
        raise ValueError("n_inner_orbits, steps_per_orbit, n_snapshots and hill_factor must be positive "
                         "and jobs >= 1")
    res_specs, lap_specs = _check_specs(resonances, laplace, n_pl)
    mode = {True: MEGNO_METHOD, False: "off"}.get(megno, megno) if isinstance(megno, bool) else megno
    if mode not in ("variational", "shadow", "off"):
        raise ValueError(f"megno must be True, False, 'variational' or 'shadow'; got {megno!r}")
    seeds = [int(s.generate_state(1)[0] & 0x7FFFFFFF) for s in np.random.SeedSequence(seed).spawn(n_draws)]
    deadline = None if time_budget is None else time.time() + float(time_budget)
    tasks = [(float(m_star[k]), m[k], a[k], e[k], inc[k], omega[k], Omega[k], M0[k], float(n_inner_orbits),
              seeds[k], int(steps_per_orbit), float(hill_factor), res_specs, lap_specs, int(n_snapshots),
              deadline, mode, float(energy_switch), float(megno_drop), int(corrector)) for k in range(n_draws)]
    jobs = min(int(jobs), max(n_draws, 1))
    import multiprocessing
    if jobs > 1 and multiprocessing.current_process().daemon:
        jobs = 1                                    # a daemonic worker may not start processes
    if jobs == 1:
        out = [_run_draw(t) for t in tasks]
    else:
        out = list(_pool(jobs).map(_run_draw, tasks, chunksize=1))
    done = np.array([o["completed"] for o in out], dtype=bool)
    megno_arr = np.array([o["megno"] for o in out], dtype=float)
    enc = np.array([o["encounter"] for o in out], dtype=bool) & done
    esc = np.array([o["escape"] for o in out], dtype=bool) & done
    cross = np.array([o["crossing"] for o in out], dtype=bool) & done
    if mode != "off":
        with np.errstate(invalid="ignore"):
            chaotic = done & (enc | esc | ~np.isfinite(megno_arr) | (megno_arr > megno_threshold))
    else:
        chaotic = enc | esc
    lib = {s: np.array([o["res"][n][0] for o in out], dtype=bool) & done for n, s in enumerate(res_specs)}
    amp = {s: np.array([o["res"][n][1] for o in out], dtype=float) for n, s in enumerate(res_specs)}
    llib = {s: np.array([o["lap"][n][0] for o in out], dtype=bool) & done for n, s in enumerate(lap_specs)}
    lamp = {s: np.array([o["lap"][n][1] for o in out], dtype=float) for n, s in enumerate(lap_specs)}
    return NbodyResult(
        megno=megno_arr, megno_inner_orbits=np.array([o["megno_t"] for o in out], dtype=float), chaotic=chaotic, encounter=enc, escape=esc, crossing=cross,
        survived=done & ~enc & ~esc,
        t_stop_inner_orbits=np.array([o["t_stop"] for o in out], dtype=float),
        energy_error=np.array([o["energy"] for o in out], dtype=float),
        integrator=tuple(o["integrator"] for o in out),
        librating=lib, libration_amplitude=amp, laplace_librating=llib, laplace_amplitude=lamp,
        completed=done, n_inner_orbits=float(n_inner_orbits), n_draws_integrated=int(done.sum()),
        truncated=bool((~done).any()), seconds=time.perf_counter() - start,
        hill_factor=float(hill_factor), n_snapshots=int(n_snapshots))
