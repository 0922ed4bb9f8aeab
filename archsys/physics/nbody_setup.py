"""N-body runs of posterior draws: horizons, the libration test, and setting up a rebound simulation
(encounter and energy thresholds, time step, Jacobi elements, the shadow-particle MEGNO).
"""
from __future__ import annotations

from dataclasses import dataclass
import math

import numpy as np

from archsys.physics.constants import TWO_PI

from .nbody import MEGNO_CHAOS

__all__ = ["HILL_ENCOUNTER", "ENERGY_SWITCH", "MEGNO_DROP", "WHFAST_CORRECTOR", "MEGNO_METHOD",
           "MIN_INNER_ORBITS", "MIN_OUTER_ORBITS", "LIBRATION_GAP", "LIBRATION_DRIFT", "NbodyResult",
           "default_horizon", "horizon_summary", "mutual_hill_radius", "libration_test"]

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
