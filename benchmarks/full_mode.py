"""Full mode per system, side by side in one run: ``python -m benchmarks.full_mode [--systems N] [--before REF]``.

Figures
-------
full_cpu_per_system_s
    CPU seconds per system of ``process_system`` (the survey's per-system work: validation, the joint
    engine, every score, the summary rows) over the first ``--systems`` transiting multis of the open
    catalogue extract (``n_planets>=3``, ``method==Transit``), one process, after one warm-up system
    (imports); systems the survey rejects count too (``full_systems_not_ok`` of them).
full_cpu_per_system_before_s, full_cpu_vs_before
    The same systems with the tree of the git ref ``--before`` (exported with ``git archive`` into a
    temporary folder and run in a child process, like this tree), and the ratio before / now.
transit_curve_*
    The hypothetical-planet transit curve kernel
    (:func:`archsys.physics.transit_odds.conditional_transit_probability`) on 400 draws x 41 periods of a
    transiting multi (reference plane near edge-on, sigma of a few degrees) against a bare-numpy
    evaluation of the same quadrature (every one of the 7 tilt segments, 24 nodes each, one expression)
    in the same run: seconds, the ratio bare / ours, and the largest relative difference of the two.

CPU times are ``time.process_time`` of each system, so a busy machine slows them less than wall time;
compare ratios within a run.
"""
from __future__ import annotations

import argparse
import json
import os
import pathlib
import shutil
import subprocess
import sys
import tempfile

if __package__ in (None, ""):             # python benchmarks/full_mode.py: make the repository importable
    sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
    __package__ = "benchmarks"

import numpy as np  # noqa: E402

from .paths import CATALOG, COLUMNS, REPO  # noqa: E402
from .timing import best_of  # noqa: E402

__all__ = ["bench_full_mode", "bare_transit_curve", "transit_curve_figures", "main"]

#: The main branch before the full-mode speed work of issue 23.
BEFORE = "4e1ed19"

_PER_SYSTEM = r"""
import json, sys, time, warnings
warnings.simplefilter("ignore")
import archsys
from archsys.options import AnalysisOptions
from archsys.survey.catalog import group_systems, read_catalog
from archsys.survey.column_map import bind, load_column_map, where_names
from archsys.survey.where import parse_where, select
from archsys.survey.workers import process_system
catalog, columns, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
cat = read_catalog(catalog)
cmap = bind(load_column_map(columns), cat)
names = where_names(cmap, cat.columns)
nodes = [parse_where(w, names) for w in ("n_planets>=3", "method==Transit")]
groups, _ = group_systems(cat, cmap.system)
selected = [g for g in groups if select(g, nodes)][:n]
base = AnalysisOptions(quiet=True, jobs=1)
tasks = [(g, cmap, cat.units, base, cat.name, False) for g in selected]
process_system(tasks[0])                      # warm-up: imports, caches
cpu, status = [], []
for t in tasks:
    t0 = time.process_time()
    r = process_system(t)
    cpu.append(time.process_time() - t0)
    status.append(r["status"])
print("@@" + json.dumps({"cpu": cpu, "status": status, "archsys_file": archsys.__file__}))
"""


def _per_system(tree, n):
    env = dict(os.environ, PYTHONPATH=str(tree), MPLBACKEND="Agg", ARCHSYS_NBODY="0")
    r = subprocess.run([sys.executable, "-c", _PER_SYSTEM, str(CATALOG), str(COLUMNS), str(n)],
                       capture_output=True, text=True, env=env, cwd=str(tree))
    line = [ln for ln in r.stdout.splitlines() if ln.startswith("@@")]
    if r.returncode != 0 or not line:
        raise RuntimeError(f"full-mode run failed ({tree}): {r.stderr.strip()[-400:]}")
    res = json.loads(line[-1][2:])
    if not pathlib.Path(res["archsys_file"]).resolve().is_relative_to(pathlib.Path(tree).resolve()):
        raise RuntimeError(f"the run of {tree} imported archsys from {res['archsys_file']}")
    return res["cpu"], res["status"]


def bare_transit_curve(aor, ref_inc, sigma, n_gauss=24):
    """The transit-curve quadrature in one bare-numpy expression: all 7 segments, 24 nodes each.

    The reference for the kernel's figures (same mathematics as
    :func:`archsys.physics.transit_odds.conditional_transit_probability` for a circular orbit and a
    Rayleigh tilt, without skipping anything).
    """
    c = np.minimum(1.0 / aor, 1.0)
    I, c, sig = np.broadcast_arrays(ref_inc, c, sigma)
    t1 = np.arccos(c)
    t2 = np.pi - t1
    kinks = np.sort(np.clip(np.stack([np.zeros(I.shape), np.full(I.shape, np.pi), np.abs(I - t1), I + t1,
                                      2 * np.pi - I - t1, np.abs(I - t2), I + t2, 2 * np.pi - I - t2], -1),
                            0.0, np.pi), -1)
    s2 = 2.0 * sig[..., None] ** 2
    f_pi = -np.expm1(-np.pi ** 2 / s2)
    ue = -np.expm1(-kinks ** 2 / s2) / f_pi
    x, w = np.polynomial.legendre.leggauss(n_gauss)
    t = 0.5 * np.pi * (x + 1.0)
    wt = 0.25 * np.pi * w * np.sin(t)
    ua, ub = ue[..., :-1, None], ue[..., 1:, None]
    u = ua + (ub - ua) * 0.5 * (1.0 - np.cos(t))
    with np.errstate(divide="ignore"):
        psi = np.minimum(np.sqrt(-2.0 * np.log1p(-np.minimum(u * f_pi[..., None], 1.0))) * sig[..., None, None],
                         np.pi)
    A = np.cos(I)[..., None, None] * np.cos(psi)
    B = np.sin(I)[..., None, None] * np.sin(psi)
    lo = np.clip((-c[..., None, None] - A) / np.maximum(B, 1e-300), -1, 1)
    hi = np.clip((c[..., None, None] - A) / np.maximum(B, 1e-300), -1, 1)
    frac = (np.arccos(lo) - np.arccos(hi)) / np.pi
    return np.sum((ub - ua)[..., 0] * (frac @ wt), axis=-1)


def transit_curve_figures(n_draws=400, n_periods=41, seed=0):
    from archsys.physics import transit_odds
    rng = np.random.default_rng(seed)
    ref = np.radians(rng.normal(89.0, 0.6, n_draws))[:, None]
    sig = np.radians(rng.lognormal(np.log(2.0), 0.5, n_draws))[:, None]
    rho_aor = rng.normal(1.0, 0.05, n_draws)[:, None]
    periods = np.geomspace(1.0, 100.0, n_periods)
    aor = 4.2 * periods ** (2.0 / 3.0) * rho_aor ** (1.0 / 3.0)           # a/R* of a Sun-like star
    ours = transit_odds.conditional_transit_probability(aor, ref, sig)
    bare = bare_transit_curve(aor, ref, sig)
    t_ours = best_of(lambda: transit_odds.conditional_transit_probability(aor, ref, sig), repeat=5)
    t_bare = best_of(lambda: bare_transit_curve(aor, ref, sig), repeat=3)
    scale = np.maximum(np.abs(bare), 1e-300)
    return {"transit_curve_seconds": t_ours, "transit_curve_bare_numpy_seconds": t_bare,
            "transit_curve_vs_bare_numpy": t_bare / t_ours,
            "transit_curve_max_rel_diff_vs_bare": float(np.max(np.abs(ours - bare) / scale)),
            "transit_curve_max_abs_diff_vs_bare": float(np.max(np.abs(ours - bare)))}


def run(n=8, before=BEFORE, log=None):
    out = {}

    def put(k, v):
        out[k] = v
        if log:
            log(k, v)

    for k, v in transit_curve_figures().items():
        put(k, v)
    now, status = _per_system(REPO, n)
    put("full_systems", len(now))
    put("full_systems_not_ok", sum(s != "ok" for s in status))
    put("full_cpu_per_system_s", float(np.mean(now)))
    if before:
        tmp = tempfile.mkdtemp(prefix="archsys-full-before-")
        try:
            arc = subprocess.run(["git", "-C", str(REPO), "archive", "--format=tar", before], capture_output=True,
                                 check=True)
            subprocess.run(["tar", "-x", "-C", tmp], input=arc.stdout, check=True)
            old, old_status = _per_system(tmp, n)
        except (subprocess.CalledProcessError, RuntimeError) as exc:
            put("full_before_note", f"{before}: {str(exc)[-200:]}")
        else:
            put("full_cpu_per_system_before_s", float(np.mean(old)))
            put("full_cpu_vs_before", float(np.sum(old) / np.sum(now)))
            if old_status != status:
                put("full_before_note", "the two trees ended some systems differently (ok / rejected)")
        finally:
            shutil.rmtree(tmp, ignore_errors=True)
    return out


def bench_full_mode():
    return run()


def main(argv=None):
    ap = argparse.ArgumentParser(prog="python -m benchmarks.full_mode", description=__doc__.split("\n")[0])
    ap.add_argument("--systems", type=int, default=8, help="transiting multis timed (default 8)")
    ap.add_argument("--before", default=BEFORE, help="git ref of the 'before' tree ('' to skip)")
    ap.add_argument("--json", action="store_true")
    args = ap.parse_args(argv)

    def log(k, v):
        if not args.json:
            print(f"{k:<40} {v:.4g}" if isinstance(v, float) else f"{k:<40} {v}", flush=True)

    res = run(args.systems, args.before, log=log)
    if args.json:
        print(json.dumps(res, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
