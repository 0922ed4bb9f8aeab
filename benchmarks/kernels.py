"""Kernel figures: Kepler III against bare numpy, every score over many draws, analytic vs N-body cost."""
from __future__ import annotations

import numpy as np

from .timing import best_of

__all__ = ["bench_kepler", "bench_scores", "bench_stability"]


def bench_kepler(n=10_000_000):
    from archsys.physics import kepler
    from archsys.physics.constants import GM_SUN, TWO_PI
    rng = np.random.default_rng(0)
    P = rng.uniform(1.0, 1000.0, n)
    M = rng.uniform(0.5, 1.5, n)
    t_ours = best_of(lambda: kepler.a_au(P, M))
    t_bare = best_of(lambda: np.cbrt(GM_SUN * M * P * P / (TWO_PI * TWO_PI)))
    return {"kepler_draws_per_s": n / t_ours, "kepler_vs_bare_numpy": t_bare / t_ours}


def bench_scores(n=100_000):
    import archsys
    from archsys.inference.draws import direct_draws
    from archsys.scores import compute_scores
    post = direct_draws(archsys.read_system(archsys.demo_path("velmora")), n=n, seed=0)
    t = best_of(lambda: compute_scores(post), repeat=2)
    return {"scores_draws_per_s": n / t, "scores_seconds": t}


def bench_stability(n_draws=4):
    from archsys.physics import nbody
    if not nbody.nbody_available():
        return {"stability_note": "rebound not installed (pip install 'archsys[nbody]')"}
    import archsys
    from archsys.inference.draws import direct_draws
    from archsys.scores import per_draw_arrays
    post = direct_draws(archsys.read_system(archsys.demo_path("velmora")), n=100_000, seed=0)
    t_an = best_of(lambda: per_draw_arrays(post), repeat=2) / post.n_draws
    t_nb = nbody.time_per_draw(n_draws=n_draws, n_orbits=3000)     # 3000 inner orbits per draw
    return {"stability_analytic_seconds_per_draw": t_an, "stability_nbody_seconds_per_draw": t_nb,
            "stability_analytic_vs_nbody_cost": t_nb / t_an}
