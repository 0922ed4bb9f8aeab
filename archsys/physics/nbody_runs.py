"""Integrating posterior draws with rebound: one draw per task, a worker pool shared across calls.
"""
from __future__ import annotations

from concurrent.futures import ProcessPoolExecutor
import atexit
import math
import time

import numpy as np

from archsys.physics.constants import GM_SUN, TWO_PI

from .nbody import ESCAPE_FACTOR, MEGNO_CHAOS, STEPS_PER_ORBIT, _rebound
from .nbody_setup import (ENERGY_SWITCH, HILL_ENCOUNTER, MEGNO_DROP, MEGNO_METHOD, NbodyResult,
                          WHFAST_CORRECTOR, _Shadow, _check_specs, _configure, _jacobi_elements, _time_step,
                          _without_variations, libration_test, mutual_hill_radius)

__all__ = ["shutdown_pool", "integrate_draws"]


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
