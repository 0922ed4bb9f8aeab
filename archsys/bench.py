"""Benchmark figures: ``python -m archsys.bench [--json] [--quick] [--skip NAME ...]``.

Prints one line per figure (or one JSON object with ``--json``).  Speed is
measured here, never asserted in tests.  Ratios are taken against a bare-numpy
baseline measured in the same run, so they do not depend on the machine.

Figures
-------
kepler_draws_per_s, kepler_vs_bare_numpy
    archsys' vectorised Kepler III over 10^7 draws; the ratio is
    bare-numpy time / archsys time (1 = no overhead; target >= 0.6).
scores_draws_per_s, scores_seconds
    every score on 10^5 draws of the six-planet demo (Velmora).
posterior_seconds, posterior_neff_per_s, posterior_neff_per_s_vs_v010, posterior_v010_*
    the joint posterior of the six-planet demo, and the v0.1.0 engine (one emcee run over every
    parameter) on the same system in the same run (target: >= 5x the effective samples per second).
survey_full_*
    the open catalogue's RV systems in full mode (1 and 2 workers), and both engines on the same
    first 40 of them (target: >= 5x faster, 2 workers >= 1.8x).
survey_systems_per_s, survey_seconds, survey_speedup_2_jobs
    the open catalogue in fast mode with 1 and 2 worker processes (target < 2 min, speed-up >= 1.7).
stability_analytic_vs_nbody_cost
    cost of one N-body MEGNO integration per draw over the cost of the analytic verdicts per draw
    (needs rebound).
"""
from __future__ import annotations

import argparse
import json
import pathlib
import sys
import time

import numpy as np

__all__ = ["main", "run"]


def _best(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def bench_kepler(n=10_000_000):
    from .physics import kepler
    from .physics.constants import GM_SUN, TWO_PI
    rng = np.random.default_rng(0)
    P = rng.uniform(1.0, 1000.0, n)
    M = rng.uniform(0.5, 1.5, n)
    t_ours = _best(lambda: kepler.a_au(P, M))
    t_bare = _best(lambda: np.cbrt(GM_SUN * M * P * P / (TWO_PI * TWO_PI)))
    return {"kepler_draws_per_s": n / t_ours, "kepler_vs_bare_numpy": t_bare / t_ours}


def _demo(name):
    from .cli import _demo_files
    for f in _demo_files():
        if name in pathlib.Path(f).stem:
            return f
    raise FileNotFoundError(name)


def bench_scores(n=100_000):
    from . import read_system
    from .inference.draws import direct_draws
    from .scores import compute_scores
    s = read_system(_demo("velmora"))
    post = direct_draws(s, n=n, seed=0)
    t = _best(lambda: compute_scores(post), repeat=2)
    return {"scores_draws_per_s": n / t, "scores_seconds": t}


def bench_posterior():
    from .bench_engine import bench_posterior as side_by_side
    return side_by_side(_demo("velmora"))


def bench_survey_full():
    from .bench_engine import bench_survey_full as side_by_side
    return side_by_side()


def bench_survey():
    from .survey.run import survey_benchmark
    here = pathlib.Path(__file__).resolve().parents[1]
    catalog = here.parent / "shared" / "data" / "open_exoplanet_catalogue_planets.csv"
    columns = here / "tests" / "data" / "oec_columns.toml"
    if not catalog.exists() or not columns.exists():
        return {"survey_note": f"open catalogue not found at {catalog}"}
    one = survey_benchmark(str(catalog), str(columns), jobs=1)
    two = survey_benchmark(str(catalog), str(columns), jobs=2)
    out = {"survey_systems_per_s": two.get("systems_per_s"), "survey_seconds": two.get("wall_s"),
           "survey_seconds_1_job": one.get("wall_s"), "survey_systems": two.get("systems")}
    if one.get("wall_s") and two.get("wall_s"):
        out["survey_speedup_2_jobs"] = one["wall_s"] / two["wall_s"]
    return out


def bench_stability(n_draws=4):
    from .physics import nbody
    if not nbody.nbody_available():
        return {"stability_note": "rebound not installed (pip install 'archsys[nbody]')"}
    from . import read_system
    from .inference.draws import direct_draws
    from .scores import per_draw_arrays
    post = direct_draws(read_system(_demo("velmora")), n=100_000, seed=0)
    t_an = _best(lambda: per_draw_arrays(post), repeat=2) / post.n_draws
    t_nb = nbody.time_per_draw(n_draws=n_draws, n_orbits=3000)     # 3000 inner orbits per draw
    return {"stability_analytic_seconds_per_draw": t_an, "stability_nbody_seconds_per_draw": t_nb,
            "stability_analytic_vs_nbody_cost": t_nb / t_an}


BENCHES = {"kepler": bench_kepler, "scores": bench_scores, "posterior": bench_posterior,
           "survey": bench_survey, "survey_full": bench_survey_full, "stability": bench_stability}


def run(skip=(), quick=False, log=None):
    out = {}
    for name, fn in BENCHES.items():
        if name in skip or (quick and name in ("posterior", "survey", "survey_full")):
            continue
        try:
            res = fn()
        except Exception as exc:  # a benchmark that cannot run says why, the others still run
            res = {f"{name}_error": f"{type(exc).__name__}: {exc}"}
        out.update(res)
        if log:
            for k, v in res.items():
                log(k, v)
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(prog="python -m archsys.bench", description=__doc__.split("\n")[0])
    ap.add_argument("--json", action="store_true", help="print one JSON object")
    ap.add_argument("--quick", action="store_true", help="skip the posterior and survey benchmarks")
    ap.add_argument("--skip", nargs="*", default=[], choices=list(BENCHES))
    args = ap.parse_args(argv)

    def log(k, v):
        if not args.json:
            print(f"{k:<40} {v:.4g}" if isinstance(v, float) else f"{k:<40} {v}", flush=True)

    res = run(args.skip, args.quick, log=log)
    if args.json:
        print(json.dumps(res, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
