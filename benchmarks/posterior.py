"""The joint engine on the six-planet demo (Velmora), side by side with the v0.1.0 engine in the same run.

The effective sample size is the smaller of the orientation chain's (when a chain runs) and the
importance weights' effective sample size; v0.1.0's is its chain's (>= 50 autocorrelation times in both).
"""
from __future__ import annotations

import time
import warnings

from .v010 import BaselineUnavailable, run_v010, v010_tree

__all__ = ["bench_posterior", "neff"]

_V010_POSTERIOR = """
import json, time, warnings
warnings.simplefilter("ignore")
from archsys import read_system
from archsys.inference.route import sample_system
from archsys.pipeline import AnalysisOptions
s = read_system({path!r})
sample_system(s, AnalysisOptions(seed=1, quiet=True, n_draws=200))     # imports, caches
t0 = time.perf_counter()
post = sample_system(s, AnalysisOptions(seed=0, quiet=True))
t = time.perf_counter() - t0
smp = post.sampler
print(json.dumps({{"seconds": t, "neff": min(smp["n_eff"].values()),
                  "tau_max": smp.get("max_autocorrelation_time")}}))
"""


def neff(post):
    """Effective sample size of a joint-engine posterior (chain and importance weights)."""
    smp = post.sampler
    chain = min(smp["n_eff"].values()) if isinstance(smp.get("n_eff"), dict) and smp["n_eff"] else float("inf")
    ess = (smp.get("importance") or {}).get("effective_sample_size", float("inf"))
    return float(min(chain, ess))


def bench_posterior():
    import archsys
    from archsys.inference.joint import sample_joint as sample_system
    path = archsys.demo_path("velmora")
    s = archsys.read_system(path)
    opts = archsys.AnalysisOptions(seed=0, quiet=True)
    sample_system(s, archsys.AnalysisOptions(seed=1, quiet=True, n_draws=200))        # imports, caches
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t0 = time.perf_counter()
        new = sample_system(s, opts)
        t_new = time.perf_counter() - t0
    n_new = neff(new)
    out = {"posterior_seconds": t_new, "posterior_neff": n_new, "posterior_neff_per_s": n_new / t_new,
           "posterior_method": new.sampler["method"], "posterior_converged": bool(new.sampler["converged"])}
    try:
        with v010_tree() as tree:
            old = run_v010(tree, _V010_POSTERIOR.format(path=path))
    except (BaselineUnavailable, RuntimeError) as exc:
        out["posterior_v010_note"] = str(exc)
        return out
    out.update({"posterior_v010_seconds": old["seconds"], "posterior_v010_neff": old["neff"],
                "posterior_v010_neff_per_s": old["neff"] / old["seconds"],
                "posterior_neff_per_s_vs_v010": (n_new / t_new) / (old["neff"] / old["seconds"]),
                "posterior_v010_tau_max": old["tau_max"]})
    return out
