"""Benchmark figures of the joint engine, side by side with the v0.1.0 engine in the same run.

``posterior_*``: the six-planet demo (Velmora) to convergence.  The effective sample size is the
smaller of the orientation chain's (when a chain runs) and the importance weights' effective sample
size; v0.1.0's is its chain's (>= 50 autocorrelation times in both).

``survey_full_*``: the open catalogue's RV systems (``--where method==RV``) in full mode: the joint
engine on all of them with 1 and 2 worker processes, and both engines on the same first
``BASELINE_SYSTEMS`` of them (one process), for the ratio.
"""
from __future__ import annotations

import pathlib
import time
import warnings

__all__ = ["bench_posterior", "bench_survey_full", "BASELINE_SYSTEMS"]

#: RV systems run by both engines for the survey ratio (v0.1.0 needs about 0.5 s per system).
BASELINE_SYSTEMS = 40


def _neff(post):
    smp = post.sampler
    chain = min(smp["n_eff"].values()) if isinstance(smp.get("n_eff"), dict) and smp["n_eff"] else float("inf")
    ess = (smp.get("importance") or {}).get("effective_sample_size", float("inf"))
    return float(min(chain, ess))


def bench_posterior(demo_path):
    from . import read_system
    from .inference.route import sample_full_model, sample_system
    from .pipeline import AnalysisOptions
    s = read_system(demo_path)
    opts = AnalysisOptions(seed=0, quiet=True)
    sample_system(s, AnalysisOptions(seed=1, quiet=True, n_draws=200))        # imports, caches
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t0 = time.perf_counter()
        new = sample_system(s, opts)
        t_new = time.perf_counter() - t0
        t0 = time.perf_counter()
        old = sample_full_model(s, opts)
        t_old = time.perf_counter() - t0
    n_new, n_old = _neff(new), _neff(old)
    return {"posterior_seconds": t_new, "posterior_neff": n_new, "posterior_neff_per_s": n_new / t_new,
            "posterior_method": new.sampler["method"],
            "posterior_v010_seconds": t_old, "posterior_v010_neff": n_old,
            "posterior_v010_neff_per_s": n_old / t_old,
            "posterior_neff_per_s_vs_v010": (n_new / t_new) / (n_old / t_old),
            "posterior_v010_tau_max": old.sampler.get("max_autocorrelation_time"),
            "posterior_converged": bool(new.sampler["converged"])}


def bench_survey_full():
    from . import pipeline
    from .survey.run import survey_benchmark
    here = pathlib.Path(__file__).resolve().parents[1]
    catalog = here.parent / "shared" / "data" / "open_exoplanet_catalogue_planets.csv"
    columns = here / "tests" / "data" / "oec_columns.toml"
    if not catalog.exists() or not columns.exists():
        return {"survey_full_note": f"open catalogue not found at {catalog}"}
    where = ("method==RV",)
    out = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        one = survey_benchmark(str(catalog), str(columns), jobs=1, mode="auto", where=where)
        two = survey_benchmark(str(catalog), str(columns), jobs=2, mode="auto", where=where)
        out.update({"survey_full_rv_systems": one["systems"], "survey_full_seconds_1_job": one["wall_s"],
                    "survey_full_seconds_2_jobs": two["wall_s"],
                    "survey_full_speedup_2_jobs": one["wall_s"] / two["wall_s"]})
        new = survey_benchmark(str(catalog), str(columns), jobs=1, mode="auto", where=where,
                               limit=BASELINE_SYSTEMS)
        pipeline.JOINT_ENGINE = "v0.1.0"
        try:
            old = survey_benchmark(str(catalog), str(columns), jobs=1, mode="auto", where=where,
                                   limit=BASELINE_SYSTEMS)
        finally:
            pipeline.JOINT_ENGINE = "joint"
    out.update({"survey_full_baseline_systems": new["systems"], "survey_full_subset_seconds": new["wall_s"],
                "survey_full_subset_v010_seconds": old["wall_s"],
                "survey_full_vs_v010": old["wall_s"] / new["wall_s"]})
    return out
