"""Where a fast-mode system's CPU goes, and the floor the per-draw kernels set: ``python -m benchmarks.fast_floor``.

Figures (one process, ``time.process_time``, CPU milliseconds per system)
-------------------------------------------------------------------------
fast_ms_per_system_batch_<B>
    The survey's worker call (:func:`archsys.survey.workers.process_batch`) on the open catalogue's
    systems with three or more planets, ``B`` systems per call, and the main process's store of the
    results (:meth:`archsys.survey.store.SurveyStore.put_many`).
kernels_ms_per_system_batch_<B>, kernel_<score>_ms
    Of that, the scores' per-draw kernels (``Score.per_draw``, run once over the stacked draws of a
    call's systems), in total and by score (at the largest batch).
summaries_ms, draws_ms, document_ms, parse_ms, store_ms
    The per-system summaries and verdicts of every score, the direct draws, the report document,
    reading and checking the rows, and the store.
bare_kepler_ms_per_system
    A bare-numpy baseline in the same run: Kepler's third law and the mutual Hill radius over the
    same number of draws and planets, the least any kernel set does per system.
budget_ms_for_2000_per_s_on_2_cores
    1 ms: what 2000 systems/s on two cores leaves per system.

The kernels already run on stacked (systems x draws) arrays; if their time per system does not fall as
the batch grows, it is elementwise work over the draws, not Python overhead, and it alone bounds the
throughput.
"""
from __future__ import annotations

import argparse
import collections
import json
import pathlib
import sys
import tempfile
import time
import warnings

if __package__ in (None, ""):
    sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
    __package__ = "benchmarks"

import numpy as np  # noqa: E402

from .paths import CATALOG, COLUMNS  # noqa: E402


def _tasks(n_min=3, limit=None):
    from archsys.options import AnalysisOptions
    from archsys.survey.catalog import group_systems, read_catalog
    from archsys.survey.column_map import bind, load_column_map
    cat = read_catalog(CATALOG)
    cmap = bind(load_column_map(str(COLUMNS)), cat)
    groups = [g for g in group_systems(cat, cmap.system)[0] if g.n_planets >= n_min]
    groups.sort(key=lambda g: g.n_planets)
    opts = AnalysisOptions(mode="fast", nbody=0, quiet=True, jobs=1)
    return [(g, cmap, cat.units, opts, cat.name, False) for g in groups[:limit]]


def run(batches=(8, 64, 256)):
    import archsys.pipeline as pipeline
    import archsys.scores.compute as compute
    from archsys.scores.registry import registered_scores
    from archsys.survey import workers
    from archsys.survey.store import SurveyStore
    warnings.simplefilter("ignore")
    acc = collections.Counter()

    def timed(obj, name, label):
        f = getattr(obj, name)

        def g(*a, **k):
            t = time.process_time()
            try:
                return f(*a, **k)
            finally:
                acc[label] += time.process_time() - t
        setattr(obj, name, g)

    for s in registered_scores():
        timed(s, "per_draw", f"kernel_{s.name}")
        timed(s, "summarise", "summaries")
    timed(workers, "_validated", "parse")
    timed(pipeline, "_prepared", "draws")
    timed(pipeline, "build_document", "document")
    tasks = _tasks()
    workers.process_batch(tasks[:4])                       # imports and caches
    out = {"systems": len(tasks)}
    for b in batches:
        acc.clear()
        store = SurveyStore(pathlib.Path(tempfile.mkdtemp(prefix="archsys-floor-")))
        t0 = time.process_time()
        for i in range(0, len(tasks), b):
            res = workers.process_batch(tasks[i:i + b])
            t = time.process_time()
            store.put_many(res)
            acc["store"] += time.process_time() - t
        total = time.process_time() - t0
        store.close()
        n = len(tasks)
        kernels = sum(v for k, v in acc.items() if k.startswith("kernel_"))
        out[f"fast_ms_per_system_batch_{b}"] = 1e3 * total / n
        out[f"kernels_ms_per_system_batch_{b}"] = 1e3 * kernels / n
    for k, v in sorted(acc.items()):
        out[f"{k}_ms"] = 1e3 * v / len(tasks)
    out["bare_kepler_ms_per_system"] = _bare(len(tasks), 1000, 3)
    out["budget_ms_for_2000_per_s_on_2_cores"] = 1.0
    return out


def _bare(n_systems, n_draws, n_planets, reps=20):
    """CPU ms per system of Kepler's third law and the mutual Hill radius in bare numpy, same draws."""
    rng = np.random.default_rng(0)
    P = rng.uniform(5, 50, (n_draws * 64, n_planets))
    m = rng.uniform(1e-6, 1e-4, (n_draws * 64, n_planets))
    ms = rng.uniform(0.8, 1.2, (n_draws * 64, 1))
    t = time.process_time()
    for _ in range(reps):
        a = (ms * (P / 365.25) ** 2) ** (1.0 / 3.0)
        rh = ((m[:, 1:] + m[:, :-1]) / (3 * ms)) ** (1.0 / 3.0) * 0.5 * (a[:, 1:] + a[:, :-1])
        (a[:, 1:] - a[:, :-1]) / rh
    return 1e3 * (time.process_time() - t) / (reps * 64)


def main(argv=None):
    ap = argparse.ArgumentParser(prog="python -m benchmarks.fast_floor", description=__doc__.split("\n")[0])
    ap.add_argument("--json", action="store_true")
    args = ap.parse_args(argv)
    res = run()
    if args.json:
        print(json.dumps(res, indent=2))
    else:
        for k, v in res.items():
            print(f"{k:<48} {v:.3g}" if isinstance(v, float) else f"{k:<48} {v}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
