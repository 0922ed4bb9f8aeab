"""``archsys survey``: analyse every system of a catalogue and summarise the population.

Flow: read the table (:mod:`.catalog`) and its column map (:mod:`.columns`),
group rows into systems sorted by id, select them (``--where``, ``--limit``),
then for each system build the system-file mapping, validate it with
:func:`archsys.model.reader.build_system` and analyse it with
:func:`archsys.pipeline.analyze` -- the same pipeline as ``archsys report``.

Work runs serially (``--jobs 1``), on local processes
(:class:`concurrent.futures.ProcessPoolExecutor`, ``--jobs N``; ``0`` = one per
core) or on an existing Dask cluster (``--scheduler ADDRESS``; the workers must
be able to import archsys).  Each system's seed is derived from the global seed
and the system id only, ``SeedSequence([seed, crc32(id)])``, so serial, local
and Dask runs give identical numbers.

Local processes are started with the "spawn" method (no inherited store
handle, the same start as Dask's workers), so a script that calls
:func:`run_survey` with ``jobs != 1`` needs the usual ``if __name__ ==
"__main__":`` guard.

Results are stored per system as they finish (:mod:`.store`); ``--resume``
skips stored systems.  The final tables (``systems.csv``, ``planets.csv``,
``pairs.csv``, ``rejects.csv``), ``population.json`` and the figures are built
from the store sorted by system id, so a resumed run writes the same bytes as
an uninterrupted one.  Bad rows never stop the survey: each rejected system is
listed in ``rejects.csv`` with the row, field and reason; analysis exceptions
are rejects of kind "analysis" that name the exception type.
"""
from __future__ import annotations

import json
import math
import os
import pathlib
import sys
import time
from dataclasses import replace

import numpy as np

from ..version import __version__
from ..progress import peak_memory_mib
from ..errors import InputError
from ..options import FAST_DRAWS, AnalysisOptions, SurveyOptions, split_keywords
from .catalog import group_systems, read_catalog
from .where import parse_where, select
from .column_map import bind, canonical_map, load_column_map, where_names
from .lock import SurveyLock
from .identity import merge_notes
from .store import STORE_FORMAT, STORE_NAME, SurveyStore, header_of, write_csv
from .store_check import check_and_repair, reconcile
from .popfits import FitRunner, subsample_objects, transit_block, with_per_system_fit
from .workers import SAMPLES_PER_PLANET, dask_client, process_system, progress_bar, run_tasks, system_seed

__all__ = ["run_survey", "system_seed", "process_system",
           "FAST_DRAWS", "SAMPLES_PER_PLANET", "AnalysisOptions", "SurveyOptions"]

_FIRST_SYSTEM_COLS = ("system", "n_planets", "n_pairs", "n_transiting", "sampler", "warnings")
_FIRST_PAIR_COLS = ("system", "inner", "outer", "period_ratio_median", "period_ratio_lo", "period_ratio_hi",
                    "nearest_mmr", "mmr_offset_median", "mmr_offset_lo", "mmr_offset_hi",
                    "hill_separation_median", "hill_separation_lo", "hill_separation_hi",
                    "hill_stable_probability", "near_resonance_probability", "amd_stable_probability",
                    "mutual_inclination_deg_median", "mutual_inclination_deg_lo", "mutual_inclination_deg_hi")
REJECT_COLS = ("system", "planet", "row", "field", "column", "reason")


#: Finished systems stored per transaction (at most half a second's worth are held back).
STORE_GROUP = 64


# --------------------------------------------------------------------------
# The survey
# --------------------------------------------------------------------------

def _manifest(cat, cmap, opts):
    o = opts.as_dict()
    o.pop("seed", None)
    return {"store_format": STORE_FORMAT, "archsys_version": __version__, "catalog_sha256": cat.sha256,
            "columns": cmap.source if cmap.source == "canonical columns" else "file",
            "columns_sha256": cmap.sha256, "seed": int(opts.seed), "options": o}


def run_survey(catalog, out, options: AnalysisOptions | None = None, survey: SurveyOptions | None = None,
               *, debug=False, stream=None, transit=None, **keywords):
    """Run a survey of ``catalog`` into directory ``out``; returns the population document.

    ``options``: :class:`~archsys.options.AnalysisOptions` (``jobs``: 1 =
    serial, N = N local processes, 0 = one process per core, the default of a
    survey; ignored with a Dask scheduler).  ``survey``:
    :class:`~archsys.options.SurveyOptions` (column map, ``where``, resume,
    scheduler, limit, figures).  Keyword arguments named like fields of either
    (and ``draws`` for ``n_draws``) are a shorthand:
    ``run_survey(cat, out, mode="fast", limit=10)``.

    The output folder is locked for the run (a second survey into it is
    refused), and the tables, ``population.json`` and figures are staged and
    moved into place only when all of them are written.

    Raises
    ------
    InputError
        Fatal problems only (unreadable table, missing columns, bad map or
        --where, a store made from other inputs, a locked folder); bad rows
        become rejects.
    """
    from .workers import one_blas_thread
    with one_blas_thread():       # this process's share of the cores: one BLAS thread (restored on return)
        return _run_survey(catalog, out, options, survey, debug=debug, stream=stream, transit=transit,
                           **keywords)


def _run_survey(catalog, out, options, survey, *, debug, stream, transit, **keywords):
    opts, sv = split_keywords(options, survey, **keywords)
    from ..limits import check_output_path
    check_output_path(out, "--out")                   # not empty, no over-long names (issue 22)
    out = pathlib.Path(out)
    if out.exists() and not out.is_dir():
        raise InputError(f"--out {out}: exists and is not a directory")
    jobs = (os.cpu_count() or 1) if not opts.jobs else int(opts.jobs)
    # progress from the first second: rows read, then systems grouped, analysed, the population steps
    with progress_bar(None, quiet=opts.quiet, stream=stream, desc="reading", unit="row", delay=0.5) as rbar:
        cat = read_catalog(catalog, progress=rbar.update)
    cmap = bind(load_column_map(sv.columns) if sv.columns else canonical_map(cat.columns), cat)
    names = where_names(cmap, cat.columns)
    nodes = [parse_where(w, names) for w in sv.where]
    from .multiplicity_block import check_settings          # transit multiplicity (issue 14)
    transit = check_settings(transit, cmap, cat.columns)
    base = replace(opts, quiet=True, jobs=1)          # what every system is analysed with
    with progress_bar(None, quiet=opts.quiet, stream=stream, desc="grouping", unit="system",
                      delay=0.5) as gbar:
        groups, orphans = group_systems(cat, cmap.system)
        gbar.update(len(groups))
        selected = [g for g in groups if select(g, nodes)]
        gbar.set_postfix_str(f"{len(selected)} selected", refresh=False)
    if nodes:                    # a bare comparison that drops systems any() would keep: one line each
        import warnings
        from ..model.checks import InputWarning
        from .where import any_note, kept_by_any
        chosen = {id(g) for g in selected}
        for expr, n in kept_by_any([g for g in groups if id(g) not in chosen], sv.where, nodes):
            warnings.warn(any_note(expr, n), InputWarning, stacklevel=2)
    if sv.limit is not None:
        selected = selected[:sv.limit]
    ids = {g.system for g in selected}
    client = dask_client(sv.scheduler) if sv.scheduler else None    # before any file is made
    # population fits beside the per-system work when other processes do that work (popfits.py): in the
    # survey's own worker processes (one pool for both), or in two local processes beside a Dask cluster
    fits = FitRunner(min(2, jobs) if client is not None else jobs if jobs > 1 else 0)

    try:
        with SurveyLock(out) as lock, fits:
            store = SurveyStore(out)
            try:
                store.check_manifest(_manifest(cat, cmap, base), sv.resume)
                notes = check_and_repair(store, store.missing_tables) if sv.resume else []
                notes += merge_notes({g.system: set(g.spellings) for g in groups if g.spellings})
                done = store.done()
                todo = [g for g in selected if g.system not in done]
                fast = not base.uses_mcmc           # direct draws only: short, even tasks
                if fast:
                    # systems of one planet count side by side: a worker's batch is analysed together
                    # (process_batch stacks the draws of same-shape systems); results do not depend on it
                    todo = sorted(todo, key=lambda g: g.n_planets)
                else:
                    # largest systems first (longest-processing-time-first scheduling, Graham 1969): the slow
                    # joint-engine systems do not end the run alone; results do not depend on the order
                    todo = sorted(todo, key=lambda g: -g.n_planets)
                # one options object for every task: each worker derives its system's seed (system_seed), so
                # a million tasks do not carry a million option copies
                tasks = [(g, cmap, cat.units, base, cat.name, debug) for g in todo]
                tm = fits.submit(transit_block, selected, cmap, cat.columns, cat.units, transit, int(opts.seed))
                if client is not None:     # the other fit process imports now, not after the last system
                    fits.warm()
                bar = progress_bar(len(tasks), quiet=opts.quiet, stream=stream,
                                   skipped=len(selected) - len(todo))
                failed = [0]
                pending, last = [], [time.monotonic()]

                def flush():
                    if pending:
                        store.put_many(pending)       # one transaction per group of finished systems
                        bar.update(len(pending))
                        pending.clear()
                    last[0] = time.monotonic()

                def sink(res):
                    pending.append(res)
                    if res["status"] != "ok":
                        failed[0] += 1
                        bar.set_postfix_str(f"{failed[0]} rejected", refresh=False)
                    if len(pending) >= STORE_GROUP or time.monotonic() - last[0] > 0.5:
                        flush()

                try:
                    run_tasks(tasks, sink, jobs, client=client, batch=None if fast else 1, pool=fits)
                    client = None                     # closed by run_tasks
                finally:
                    try:
                        flush()                       # whatever finished is kept, also on an interrupt
                    finally:
                        bar.close()
                with progress_bar(len(_FINISH_STEPS), quiet=opts.quiet, stream=stream, desc="population",
                                  unit="step") as fbar:
                    pop = _finish(store, cat, cmap, selected, ids, orphans, groups, out, base, sv, transit,
                                  fits=fits, tm=tm, step=lambda what: (fbar.set_postfix_str(what, refresh=False), fbar.update(1)))
                pop["_notes"] = notes + pop.get("_notes", [])
                fits.close()                  # the workers exit (and are counted in the peak memory below)
                if not opts.quiet:
                    own, kids = peak_memory_mib()
                    if own is not None:
                        (stream or sys.stderr).write(
                            f"archsys: survey: peak memory {own:.0f} MiB in this process"
                            + (f", {kids:.0f} MiB in the largest worker" if kids else "") + "\n")
                return pop
            except BaseException:
                if store.count() == 0:                # nothing stored: leave no empty store behind
                    store.close()
                    lock.remove_store(STORE_NAME)
                raise
            finally:
                store.close()
    finally:
        if client is not None:
            client.close()


#: The steps of _finish shown on the progress line.
_FINISH_STEPS = ("tables read back", "statistics", "eccentricity fits", "tilt fit", "transit multiplicity",
                 "files written")


def _finish(store, cat, cmap, selected, ids, orphans, groups, out, opts, sv, transit=None, fits=None, tm=None,
            step=None):
    step = step or (lambda what: None)
    from ..output.files import atomic_write, staged
    from .hierarchical import start_eccentricity_population, tilt_population
    from .population import population_statistics
    from .predictions import prediction_population
    status = store.systems(ids)
    if len(status) != len(ids):  # pragma: no cover - every selected system is stored above
        raise RuntimeError(f"store holds {len(status)} of {len(ids)} selected systems")
    ok_rows = [row for _, st, _, _, row in status if st == "ok"]
    pairs = store.rows("pairs", ids)
    planets = store.rows("planets", ids)
    reconcile(status, planets, pairs)          # never a partial table with exit status 0
    rejects = [{"system": "", "planet": "", "row": r, "field": "system", "column": cmap.system,
                "reason": f"row has no system id in column '{cmap.system}'"} for r in orphans]
    attached = {r for g in groups for r, _ in g.broken}      # reported with their system
    rejects += [{"system": "", "planet": "", "row": r, "field": "", "column": "", "reason": why}
                for r, why in cat.malformed if r not in attached]
    rejects += store.rejects(ids)
    kinds = [k for _, st, _, k, _ in status if st != "ok"]
    counts = {
        "rows": cat.n_rows, "systems_in_catalogue": len(groups), "rows_without_system": len(orphans),
        "rows_malformed": len(cat.malformed),
        "systems_selected": len(selected), "systems_analysed": len(ok_rows),
        "systems_rejected": len(status) - len(ok_rows),
        "rejected_input": kinds.count("input"), "rejected_analysis_error": kinds.count("analysis"),
        "rows_selected": sum(g.n_planets for g in selected),
        "planets_analysed": sum(r["n_planets"] for r in ok_rows), "pairs_analysed": len(pairs),
        "reject_lines": len(rejects),
        "systems_with_warnings": sum(1 for r in ok_rows if r.get("warnings")),
        "systems_unusable_posterior": sum(1 for r in ok_rows if r.get("posterior_usability_usable") is False),
    }
    if counts["systems_selected"] != counts["systems_analysed"] + counts["systems_rejected"]:  # pragma: no cover
        raise RuntimeError(f"survey counts do not reconcile: {counts}")

    seed, where, limit = opts.seed, list(sv.where), sv.limit
    pop = {"schema_version": 1, "archsys_version": __version__,
           "catalog": {"file": cat.name, "sha256": cat.sha256},
           "columns": {"source": pathlib.Path(cmap.source).name if cmap.sha256 else cmap.source,
                       "sha256": cmap.sha256 or None},
           "selection": {"where": where, "limit": limit}, "seed": int(seed),
           "options": {k: v for k, v in opts.as_dict().items() if k != "seed"},
           "seeds": "per system: SeedSequence([seed, crc32(system id)])", "counts": counts}
    ecc_samples, ecc_lp0, psi_samples, psi_lp0, ecc_info = _hier_inputs(store, ids, ok_rows)
    step(_FINISH_STEPS[0])
    psi_interims = ecc_info.pop("psi_interims")
    psi_systems = ecc_info.pop("psi_systems")
    fits = fits or FitRunner(0)
    ecc_samples, ecc_lp0, ecc_sub = subsample_objects(ecc_samples, ecc_lp0, int(seed) + 11)
    ecc_done = start_eccentricity_population(ecc_samples, ecc_lp0, seed=int(seed) + 11,    # in the background
                                             interim_prior=ecc_info["interim"],
                                             submit=fits.submit if fits.processes else None)
    pop.update(population_statistics(ok_rows, pairs, seed=seed))
    pop["predictions"] = prediction_population(ok_rows, pairs)
    step(_FINISH_STEPS[1])
    if psi_samples:
        psi_samples, psi_lp0, psi_sub = subsample_objects(psi_samples, psi_lp0, int(seed) + 13)
        pop["mutual_inclination_population"] = tilt_population(
            psi_samples, psi_lp0, seed=int(seed) + 13,
            interim_prior="; ".join(sorted(set(psi_interims))))
        pop["mutual_inclination_population"]["n_systems"] = int(psi_systems)     # what sigma rests on
        if psi_sub:
            pop["mutual_inclination_population"]["subsample"] = psi_sub
    else:
        pop["mutual_inclination_population"] = {
            "rayleigh": None, "n_planets": 0,
            "reason": "no analysed posterior provides planet tilts 'psi' (direct Monte Carlo draws do not "
                      "sample mutual inclinations); the MCMC mode of transiting multis would"}
    step(_FINISH_STEPS[3])                  # the tilt fit ran here while the eccentricity fits ran beside
    figures = {}
    if sv.figures:            # the figures that need no population fit, drawn while the fits run beside
        from ..output.figures.survey_set import BEFORE_FITS, render_survey_figures
        figures = render_survey_figures(pop, ok_rows, pairs, planets, names=BEFORE_FITS, preset=sv.preset)
    ecc_pop = ecc_done()
    step(_FINISH_STEPS[2])
    ecc_pop.update({k: v for k, v in ecc_info.items() if k != "interim"})
    if ecc_sub:
        ecc_pop["subsample"] = ecc_sub
    pop["eccentricity_population"] = ecc_pop
    # population.json keeps its key order whichever fit finished first
    pop["mutual_inclination_population"] = pop.pop("mutual_inclination_population")
    if tm is None:
        tm = fits.submit(transit_block, selected, cmap, cat.columns, cat.units, transit, int(seed))
    pop["transit_multiplicity"] = with_per_system_fit(tm.result(), pop["mutual_inclination_population"])
    step(_FINISH_STEPS[4])

    with staged(out):           # every file of the run, or none
        write_csv(out / "systems.csv", header_of(ok_rows, _FIRST_SYSTEM_COLS), ok_rows)
        write_csv(out / "planets.csv", header_of(planets, ("system", "planet")), planets)
        write_csv(out / "pairs.csv", header_of(pairs, _FIRST_PAIR_COLS), pairs)
        write_csv(out / "rejects.csv", list(REJECT_COLS), rejects)
        if sv.figures:
            from ..output.figures.survey_set import FIGURES, render_survey_figures, write_survey_figures
            figures.update(render_survey_figures(pop, ok_rows, pairs, planets, preset=sv.preset,
                                                 names=[n for n in FIGURES if n not in figures]))
            write_survey_figures(figures, out / "figures")
        atomic_write(out / "population.json", json.dumps(pop, indent=2, allow_nan=False) + "\n")
    step(_FINISH_STEPS[5])
    return pop


def _hier_inputs(store, ids, ok_rows):
    """Samples and interim log-priors for the hierarchical fits."""
    from ..inference.prior_files import load_prior
    from .hierarchical import marginal_tilt_log_prior
    ok = {r["system"] for r in ok_rows}
    transiting_multi = {r["system"] for r in ok_rows if r["n_planets"] >= 2 and r["n_transiting"] == r["n_planets"]}
    ecc_s, ecc_l, psi_s, psi_l = [], [], [], []
    interims, psi_interims, skipped, psi_systems = set(), [], {}, set()
    n_exact = n_limit = 0
    cache = {}
    for sid, _planet, basis, interim, e, psi_int, psi in store.samples(ids):
        if sid not in ok:
            continue
        if basis is not None and e is not None and np.all(np.isfinite(e)):
            lp = None
            if interim == "ecc-uniform":
                lp = np.zeros_like(e)
            elif interim == "linear-2e":
                lp = np.log(2.0 * np.clip(e, 1e-9, 1.0))
            else:
                try:
                    lp = load_prior(interim).logpdf(e)
                except InputError:
                    skipped[interim] = skipped.get(interim, 0) + 1
            if lp is not None and np.all(np.isfinite(lp)):
                ecc_s.append(e)
                ecc_l.append(lp)
                interims.add(interim)
                n_exact += basis == "exact"
                n_limit += basis in ("upper", "lower")
        if psi is not None and sid in transiting_multi:
            if psi_int == "uniform-psi":
                lp = np.full_like(psi, -math.log(math.pi))
            else:
                name = psi_int.split(":", 1)[1]
                if name not in cache:
                    cache[name] = load_prior(name)
                lp = marginal_tilt_log_prior(psi, cache[name])
            psi_s.append(psi)
            psi_l.append(lp)
            psi_interims.append(psi_int)
            psi_systems.add(sid)
    desc = {"ecc-uniform": "uniform on [0, 1) (direct draws of the catalogue summary truncated to [0, 1))",
            "linear-2e": "p0(e) = 2e (uniform in e cos w, e sin w)"}
    info = {"interim": "; ".join(desc.get(i, i) for i in sorted(interims)) or "none",
            "n_exact_values": int(n_exact), "n_limits": int(n_limit),
            "selection": "planets with a measured eccentricity (value, error or limit); "
                         "'assumed circular' planets and eccentricities of exactly 0 without errors excluded",
            "psi_interims": psi_interims, "psi_systems": len(psi_systems)}
    if skipped:
        info["skipped_unknown_interim_prior"] = skipped
    return ecc_s, ecc_l, psi_s, psi_l, info
