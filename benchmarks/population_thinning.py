"""What thinning the per-planet samples does to the Hogg, Myers & Bovy (2010) eccentricity fits.

``python -m benchmarks.population_thinning [--replicates R] [--planets N]``

Each replicate draws ``N`` true eccentricities from the Beta(0.867, 3.03) of
Kipping (2013, MNRAS 434, L51; RV planets), observes each with a Gaussian
error between 0.01 and 0.1 (typical of RV eccentricities: common practice),
and gives every planet 100 posterior samples under a flat interim prior (the
measurement's normal truncated to [0, 1), as the survey's direct draws do;
the measured value itself is not clipped, so the samples are the exact
posterior and the coverage figures test the fit, not the catalogue).
The Beta and Rayleigh fits then run twice on the same samples: with every
sample, and thinned to the survey's budget
(:data:`archsys.survey.hierarchical.MAX_FIT_SAMPLES`).  Printed per parameter:

* the shift of the median between the two fits, in units of the full fit's
  68 % half-width (median and largest over replicates);
* the ratio of the 68 % widths (thinned / full);
* how often the truth falls inside each fit's 68 % and 95 % intervals (Beta
  only: the Rayleigh is not the generating law);
* the CPU time of each pair of fits (one BLAS thread), and its ratio.

The result is the statement written into every thinned survey fit
(``THINNING_MEASURED``).
"""
from __future__ import annotations

import argparse
import math
import os
import time

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import numpy as np  # noqa: E402
from scipy import stats  # noqa: E402

KIPPING = (0.867, 3.03)


def _replicate(n, seed, k=100):
    rng = np.random.default_rng(seed)
    e = rng.beta(*KIPPING, n)
    sig = np.exp(rng.uniform(math.log(0.01), math.log(0.1), n))
    obs = e + sig * rng.standard_normal(n)        # not clipped to [0, 1): the likelihood is the Gaussian
    a, b = (0.0 - obs) / sig, (1.0 - obs) / sig
    samples = [stats.truncnorm.rvs(a[i], b[i], loc=obs[i], scale=sig[i], size=k, random_state=rng)
               for i in range(n)]
    return samples, [np.zeros(k) for _ in range(n)]


def _fits(samples, lp0, seed, max_samples):
    from archsys.survey.hierarchical import HMBData, fit_beta, fit_rayleigh
    t0 = time.process_time()
    data = HMBData(samples, lp0, 1.0, max_samples=max_samples)
    out = {"beta": fit_beta(data, seed=seed), "rayleigh": fit_rayleigh(data, seed=seed + 1), "k": data.k}
    out["cpu_s"] = time.process_time() - t0
    return out


def _half(iv):
    return 0.5 * (iv["hi"] - iv["lo"])


def main(argv=None):
    from archsys.survey.hierarchical import MAX_FIT_SAMPLES
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--replicates", type=int, default=10)
    ap.add_argument("--planets", type=int, default=1500)
    args = ap.parse_args(argv)
    rows = {p: {"shift": [], "width": [], "in68": [0, 0], "in95": [0, 0]} for p in ("alpha", "beta", "sigma")}
    cpu = [0.0, 0.0]
    k_used = None
    for r in range(args.replicates):
        samples, lp0 = _replicate(args.planets, seed=1000 + r)
        full = _fits(samples, lp0, 11 + r, None)
        thin = _fits(samples, lp0, 11 + r, MAX_FIT_SAMPLES)
        k_used = thin["k"]
        cpu[0] += full["cpu_s"]
        cpu[1] += thin["cpu_s"]
        for p, model in (("alpha", "beta"), ("beta", "beta"), ("sigma", "rayleigh")):
            f, t = full[model][p], thin[model][p]
            rows[p]["shift"].append(abs(t["median"] - f["median"]) / _half(f))
            rows[p]["width"].append((t["hi"] - t["lo"]) / (f["hi"] - f["lo"]))
            if model == "beta":
                truth = KIPPING[0] if p == "alpha" else KIPPING[1]
                for j, fit in enumerate((f, t)):
                    rows[p]["in68"][j] += fit["lo"] <= truth <= fit["hi"]
                    rows[p]["in95"][j] += fit["lo95"] <= truth <= fit["hi95"]
    R = args.replicates
    print(f"population_thinning: {R} replicates of {args.planets} planets, 100 samples each, thinned to "
          f"{k_used} (MAX_FIT_SAMPLES = {MAX_FIT_SAMPLES})")
    for p, v in rows.items():
        sh, wd = np.array(v["shift"]), np.array(v["width"])
        line = (f"  {p:5s}: median shift / half-width: median {np.median(sh):.2f}, max {sh.max():.2f}; "
                f"width ratio {np.median(wd):.3f} (range {wd.min():.3f}-{wd.max():.3f})")
        if p != "sigma":
            line += (f"; truth inside 68 %: {v['in68'][0]}/{R} full, {v['in68'][1]}/{R} thinned; "
                     f"95 %: {v['in95'][0]}/{R} full, {v['in95'][1]}/{R} thinned")
        print(line)
    print(f"  CPU per pair of fits: {cpu[0] / R:.2f} s full, {cpu[1] / R:.2f} s thinned "
          f"({cpu[0] / max(cpu[1], 1e-9):.2f}x)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
