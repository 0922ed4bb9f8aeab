"""N-body benchmark: archsys.physics.nbody.integrate_draws against a bare rebound loop, same run.

    python benchmarks/nbody.py                       # from the repository root: 64 draws, 1e4 inner orbits, 2 processes
    python benchmarks/nbody.py --draws 8 --orbits 2000

The system (issue 18): seven Earth-mass planets on circular orbits with the periods of a
TRAPPIST-1-like chain (1.51, 2.42, 4.05, 6.10, 9.21, 12.35, 18.77 d; from memory), M* = 0.09 M_sun,
random phases.  The bare loop integrates the same draws with rebound alone (WHFast, dt = P_inner / 20,
MEGNO, "line" collision search with half-Hill-radius particles and "halt"), one integrate() call per
draw, in a process pool of the same size: it has no snapshots, no resonance angles, no energy check.
Prints figures only; nothing is asserted (speed is never a pass/fail test).
"""
from __future__ import annotations

import argparse
import math
import multiprocessing
import pathlib
import sys
import time

import numpy as np

if __package__ in (None, ""):             # python benchmarks/nbody.py: make the repository importable
    sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))

from archsys.physics import kepler, nbody  # noqa: E402
from archsys.physics import nbody_runs
from archsys.physics import nbody_setup
from archsys.physics.constants import GM_SUN, MEARTH_MSUN, TWO_PI  # noqa: E402

PERIODS = np.array([1.51, 2.42, 4.05, 6.10, 9.21, 12.35, 18.77])
M_STAR = 0.09
RESONANCES = [(0, 1, 5, 3), (1, 2, 3, 2), (2, 3, 2, 1), (3, 4, 2, 1), (4, 5, 3, 1), (5, 6, 2, 1)]
LAPLACE = [(1, 2, 3, 2, -5, 3), (2, 3, 4, 1, -3, 2), (3, 4, 5, 1, -3, 2), (4, 5, 6, 1, -3, 2)]


def draws(n, seed=0):
    rng = np.random.default_rng(seed)
    m = np.full(7, MEARTH_MSUN)
    shape = (n, 7)
    return dict(m_star=M_STAR, m=np.broadcast_to(m, shape).copy(),
                a=np.broadcast_to(kepler.a_au(PERIODS, M_STAR + m), shape).copy(), e=np.zeros(shape),
                inc=np.full(shape, np.pi / 2), omega=np.zeros(shape), Omega=np.zeros(shape),
                M0=rng.uniform(0, TWO_PI, shape))


def _bare_one(task):
    import rebound
    m_star, m, a, M0, n_orbits, seed = task
    sim = rebound.Simulation()
    sim.G = GM_SUN
    sim.add(m=m_star)
    for k in range(len(m)):
        sim.add(m=m[k], a=a[k], inc=np.pi / 2, M=M0[k])
    sim.move_to_com()
    p_in = TWO_PI * math.sqrt(a[0] ** 3 / (GM_SUN * (m_star + m[0])))
    sim.integrator = "whfast"
    sim.dt = p_in / 20
    sim.collision = "line"
    sim.collision_resolve = "halt"
    for k in range(len(m)):
        sim.particles[k + 1].r = 0.5 * a[k] * np.cbrt(m[k] / (3 * m_star))
    sim.init_megno(seed=seed)
    try:
        sim.integrate(n_orbits * p_in, exact_finish_time=0)
    except rebound.Collision:
        pass
    return sim.megno()


def bare_loop(d, n_orbits, jobs):
    tasks = [(d["m_star"], d["m"][k], d["a"][k], d["M0"][k], n_orbits, k + 1) for k in range(len(d["m"]))]
    if jobs == 1:
        return [_bare_one(t) for t in tasks]
    with multiprocessing.Pool(jobs) as pool:
        return pool.map(_bare_one, tasks, chunksize=1)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--draws", type=int, default=64)
    ap.add_argument("--orbits", type=float, default=1e4, help="horizon in inner orbits")
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--no-bare", action="store_true", help="skip the bare rebound loop")
    ap.add_argument("--steps", type=int, default=nbody.STEPS_PER_ORBIT, help="WHFast steps per inner orbit")
    ap.add_argument("--corrector", type=int, default=nbody_setup.WHFAST_CORRECTOR, help="WHFast corrector order")
    ap.add_argument("--megno", default=nbody_setup.MEGNO_METHOD, choices=["shadow", "variational"])
    args = ap.parse_args(argv)
    d = draws(args.draws)
    # start the persistent pool outside the timing (it is reused across calls in a session)
    nbody_runs.integrate_draws(**{k: (v[:1] if k != "m_star" else v) for k, v in d.items()}, n_inner_orbits=1,
                          jobs=args.jobs)
    t0 = time.perf_counter()
    res = nbody_runs.integrate_draws(**d, n_inner_orbits=args.orbits, jobs=args.jobs, seed=1,
                                resonances=RESONANCES, laplace=LAPLACE, steps_per_orbit=args.steps,
                                corrector=args.corrector, megno=args.megno)
    t_ours = time.perf_counter() - t0
    h = nbody_setup.horizon_summary(args.orbits, PERIODS)
    print(f"system: seven-planet chain, {args.draws} draws, {args.orbits:.0f} inner orbits "
          f"({h['outer_orbits']:.0f} outer orbits, {h['years']:.1f} yr), {args.jobs} processes; "
          f"MEGNO {args.megno}, {args.steps} steps per inner orbit, corrector {args.corrector}")
    print(f"nbody_integrate_seconds {t_ours:.2f}")
    print(f"nbody_integrate_draws_per_s {args.draws / t_ours:.3f}")
    print(f"nbody_chaotic_fraction {res.chaotic.mean():.3f}")
    print(f"nbody_survived_fraction {res.survived.mean():.3f}")
    print(f"nbody_median_megno {np.nanmedian(res.megno):.2f}")
    print(f"nbody_max_energy_error {np.nanmax(res.energy_error):.2e}")
    print(f"nbody_megno_dropped_fraction {(res.megno_inner_orbits < 0.999 * res.t_stop_inner_orbits).mean():.3f}")
    if not args.no_bare:
        t0 = time.perf_counter()
        bare_loop(d, args.orbits, args.jobs)
        t_bare = time.perf_counter() - t0
        print(f"bare_rebound_seconds {t_bare:.2f}")
        print(f"nbody_integrate_vs_bare_rebound {t_ours / t_bare:.2f}  (time ratio; < 1 is faster than the bare loop)")
    nbody_runs.shutdown_pool()


if __name__ == "__main__":
    main()
