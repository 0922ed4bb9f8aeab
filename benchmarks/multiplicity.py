"""The transit-multiplicity forward model: systems per second in one and two processes, against bare numpy.

Intrinsic systems are drawn, spaced, tilted, observed and counted (mean multiplicity 3, 30 % singles).
"""
from __future__ import annotations

import time

import numpy as np

from .timing import best_of

__all__ = ["bench_multiplicity"]


def _pool():
    from archsys.survey.multiplicity import Detectability, PlanetPool
    rng = np.random.default_rng(0)
    n = 3000
    P = np.exp(rng.uniform(np.log(0.5), np.log(400.0), n))
    R = rng.lognormal(np.log(2.2), 0.6, n)
    return PlanetPool.from_transits(P, R, np.full(n, 0.95), np.full(n, 0.95)), Detectability((0.5, 400.0))


def _chunk(args):
    """Simulate ``n`` systems (seeded) and return the wall time; top level so spawned workers can import it."""
    from archsys.survey.multiplicity import simulate_counts
    seed, n = args
    pool, det = _pool()
    t0 = time.perf_counter()
    simulate_counts(pool, det, np.radians(2.0), 3.0, 0.3, n, np.random.default_rng(seed))
    return time.perf_counter() - t0


def bench_multiplicity(n=1_000_000):
    import multiprocessing as mp
    from concurrent.futures import ProcessPoolExecutor
    t_one = min(_chunk((s, n)) for s in range(2))
    rng = np.random.default_rng(1)
    n_rand = int(n * (2 + 4 * 2.4))          # per system: host, observer; per planet: index, jitter, tilt, node
    t_bare = best_of(lambda: rng.random(n_rand), repeat=2)
    with ProcessPoolExecutor(max_workers=2, mp_context=mp.get_context("spawn")) as ex:
        list(ex.map(_chunk, [(0, 1000), (1, 1000)]))             # start-up and imports
        t0 = time.perf_counter()
        list(ex.map(_chunk, [(2, n), (3, n)]))
        t_two = time.perf_counter() - t0
    return {"multiplicity_systems_per_s": n / t_one, "multiplicity_systems_per_s_2_cores": 2 * n / t_two,
            "multiplicity_vs_bare_numpy": t_bare / t_one}
