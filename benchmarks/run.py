"""Command line of the benchmarks: ``python -m benchmarks`` (or ``python benchmarks/run.py``) from the
repository root.  The figures are listed in :mod:`benchmarks` (``benchmarks/__init__.py``)."""
from __future__ import annotations

import argparse
import json
import pathlib
import sys

if __package__ in (None, ""):             # python benchmarks/run.py: make the repository importable
    sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
    __package__ = "benchmarks"

from .full_mode import bench_full_mode  # noqa: E402
from .kernels import bench_kepler, bench_scores, bench_stability  # noqa: E402
from .multiplicity import bench_multiplicity  # noqa: E402
from .posterior import bench_posterior  # noqa: E402
from .survey import bench_survey, bench_survey_full  # noqa: E402
from .survey_scale import bench_survey_scale  # noqa: E402

__all__ = ["BENCHES", "run", "main"]

BENCHES = {"kepler": bench_kepler, "scores": bench_scores, "posterior": bench_posterior,
           "survey": bench_survey, "survey_full": bench_survey_full, "stability": bench_stability,
           "multiplicity": bench_multiplicity, "survey_scale": bench_survey_scale, "full_mode": bench_full_mode}
SLOW = ("posterior", "survey", "survey_full", "survey_scale", "full_mode")


def run(skip=(), quick=False, log=None):
    """Run every benchmark not skipped; a benchmark that cannot run says why and the others still run."""
    out = {}
    for name, fn in BENCHES.items():
        if name in skip or (quick and name in SLOW):
            continue
        try:
            res = fn()
        except Exception as exc:
            res = {f"{name}_error": f"{type(exc).__name__}: {exc}"}
        out.update(res)
        if log:
            for k, v in res.items():
                log(k, v)
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(prog="python -m benchmarks",
                                 description="archsys benchmark figures (one line each; ratios within one run)")
    ap.add_argument("--json", action="store_true", help="print one JSON object")
    ap.add_argument("--quick", action="store_true", help="skip the posterior and survey benchmarks")
    ap.add_argument("--skip", nargs="*", default=[], choices=list(BENCHES))
    ap.add_argument("--only", nargs="*", default=None, choices=list(BENCHES), help="run only these")
    args = ap.parse_args(argv)
    skip = set(args.skip)
    if args.only:
        skip |= set(BENCHES) - set(args.only)

    def log(k, v):
        if not args.json:
            print(f"{k:<40} {v:.4g}" if isinstance(v, float) else f"{k:<40} {v}", flush=True)

    res = run(skip, args.quick, log=log)
    if args.json:
        print(json.dumps(res, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
