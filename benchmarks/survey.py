"""Survey figures on the open catalogue extract (``tests/data/oec``): fast mode, and full mode side by side
with the v0.1.0 engine (run from the ``v0.1.0`` tag) on the same first ``BASELINE_SYSTEMS`` RV systems."""
from __future__ import annotations

import tempfile
import time
import warnings

from .paths import CATALOG, COLUMNS
from .v010 import BaselineUnavailable, run_v010, v010_tree

__all__ = ["survey_benchmark", "bench_survey", "bench_survey_full", "BASELINE_SYSTEMS"]

#: RV systems run by both engines for the survey ratio (v0.1.0 needs about 0.5 s per system).
BASELINE_SYSTEMS = 40

# v0.1.0 had its own timing helper with this signature (archsys.survey.run.survey_benchmark at the tag)
_V010_SURVEY = """
import json, warnings
warnings.simplefilter("ignore")
from archsys.survey.run import survey_benchmark
r = survey_benchmark({catalog!r}, {columns!r}, jobs=1, mode="auto", where={where!r}, limit={limit})
print(json.dumps({{"wall_s": r["wall_s"], "systems": r["systems"]}}))
"""


def survey_benchmark(catalog, columns=None, jobs=1, mode="fast", draws=None, where=(), limit=None, seed=0):
    """Time one survey (no figures) into a temporary folder.

    Returns
    -------
    dict
        ``wall_s``, ``systems``, ``systems_per_s``, ``analysed``, ``rejected``, ``jobs``, ``mode``, ``draws``.
    """
    from archsys.options import AnalysisOptions, SurveyOptions
    from archsys.survey.run import run_survey
    with tempfile.TemporaryDirectory(prefix="archsys-bench-") as out:
        t0 = time.perf_counter()
        pop = run_survey(str(catalog), out, AnalysisOptions(n_draws=draws, mode=mode, seed=seed, jobs=jobs),
                         SurveyOptions(columns=str(columns) if columns else None, where=tuple(where),
                                       limit=limit, figures=False))
        wall = time.perf_counter() - t0
    c = pop["counts"]
    n = c["systems_selected"]
    return {"wall_s": wall, "systems": n, "systems_per_s": n / wall if wall > 0 else float("nan"),
            "analysed": c["systems_analysed"], "rejected": c["systems_rejected"], "jobs": jobs,
            "mode": mode, "draws": pop["options"]["n_draws"]}


def bench_survey():
    one = survey_benchmark(CATALOG, COLUMNS, jobs=1)
    two = survey_benchmark(CATALOG, COLUMNS, jobs=2)
    out = {"survey_systems_per_s": two["systems_per_s"], "survey_seconds": two["wall_s"],
           "survey_seconds_1_job": one["wall_s"], "survey_systems": two["systems"]}
    if one["wall_s"] and two["wall_s"]:
        out["survey_speedup_2_jobs"] = one["wall_s"] / two["wall_s"]
    return out


def bench_survey_full():
    where = ("method==RV",)
    out = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        one = survey_benchmark(CATALOG, COLUMNS, jobs=1, mode="auto", where=where)
        two = survey_benchmark(CATALOG, COLUMNS, jobs=2, mode="auto", where=where)
        out.update({"survey_full_rv_systems": one["systems"], "survey_full_seconds_1_job": one["wall_s"],
                    "survey_full_seconds_2_jobs": two["wall_s"],
                    "survey_full_speedup_2_jobs": one["wall_s"] / two["wall_s"]})
        new = survey_benchmark(CATALOG, COLUMNS, jobs=1, mode="auto", where=where, limit=BASELINE_SYSTEMS)
    out.update({"survey_full_baseline_systems": new["systems"], "survey_full_subset_seconds": new["wall_s"]})
    try:
        with v010_tree() as tree:
            old = run_v010(tree, _V010_SURVEY.format(catalog=str(CATALOG), columns=str(COLUMNS), where=where,
                                                     limit=BASELINE_SYSTEMS))
    except (BaselineUnavailable, RuntimeError) as exc:
        out["survey_full_v010_note"] = str(exc)
        return out
    out.update({"survey_full_subset_v010_seconds": old["wall_s"],
                "survey_full_vs_v010": old["wall_s"] / new["wall_s"]})
    return out
