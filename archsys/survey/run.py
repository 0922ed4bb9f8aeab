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

import hashlib
import json
import math
import os
import pathlib
import re
import sys
import time
import traceback
import warnings
import zlib
from dataclasses import replace

import numpy as np

from .. import __version__
from ..errors import ConvergenceWarning, InputError
from .catalog import group_systems, parse_where, read_catalog, select
from .columns import bind, canonical_map, load_column_map, system_mapping, where_names
from .store import (SurveyStore, header_of, pair_row, planet_row, system_row, write_csv)

__all__ = ["run_survey", "run_survey_cli", "survey_benchmark", "system_seed", "process_system",
           "FAST_DRAWS", "SAMPLES_PER_PLANET"]

#: Draws per system in ``--mode fast`` (as ``archsys report --mode fast``).
FAST_DRAWS = 1000
#: Posterior samples per planet kept for the hierarchical inference.
SAMPLES_PER_PLANET = 100
_FIRST_SYSTEM_COLS = ("system", "n_planets", "n_pairs", "n_transiting", "sampler", "warnings")
_FIRST_PAIR_COLS = ("system", "inner", "outer", "period_ratio_median", "period_ratio_lo", "period_ratio_hi",
                    "nearest_mmr", "mmr_offset_median", "mmr_offset_lo", "mmr_offset_hi",
                    "hill_separation_median", "hill_separation_lo", "hill_separation_hi",
                    "hill_stable_probability", "near_resonance_probability", "amd_stable_probability",
                    "mutual_inclination_deg_median", "mutual_inclination_deg_lo", "mutual_inclination_deg_hi")
_THREAD_VARS = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
REJECT_COLS = ("system", "planet", "row", "field", "column", "reason")


def system_seed(seed: int, system_id: str) -> int:
    """Seed of one system: a function of (global seed, system id) only."""
    ss = np.random.SeedSequence([int(seed) % 2 ** 63, zlib.crc32(str(system_id).encode("utf-8"))])
    return int(ss.generate_state(1, dtype=np.uint32)[0])


# --------------------------------------------------------------------------
# One system (runs in a worker)
# --------------------------------------------------------------------------

def _rejected(sid, n, problems, kind):
    return {"system": sid, "status": "rejected", "n_planets": n, "error_kind": kind, "rejects": problems}


def _problems_from_error(exc, source, rows_of, cmap):
    """Reject lines from build_system's InputError (one per problem line)."""
    out = []
    for line in getattr(exc, "problems", None) or [str(exc)]:
        msg = line[len(source) + 2:] if line.startswith(source + ": ") else line
        planet, fld = "", ""
        m = re.match(r"planet '(.*?)': (.*)$", msg)
        if m:
            planet, msg = m.group(1), m.group(2)
        elif msg.startswith("star: "):
            msg = msg[6:]
            fld = "star"
        f = re.match(r"field '([^']+)': (.*)$", msg)
        if f:
            fld = f"star_{f.group(1)}" if fld == "star" else f.group(1)
            msg = f.group(2)
        else:
            g = re.search(r"(?:required )?fields? '([^']+)'", msg)
            if g:
                fld = f"star_{g.group(1)}" if fld == "star" else g.group(1)
        row = rows_of.get(planet, rows_of.get(""))
        out.append({"planet": planet, "row": row, "field": fld, "column": cmap.column_of(fld) or "",
                    "reason": msg})
    return out


def _measured_ecc(planet):
    q = planet.quantities
    if "secosw" in q:
        return "secosw/sesinw", "ecc-uniform"
    if "ecosw" in q:
        return "ecosw/esinw", "linear-2e"       # uniform in (e cos w, e sin w) implies p0(e) = 2e
    if "ecc" in q:
        return q["ecc"].kind, "ecc-uniform"
    return None, None


def _survey_extras(res):
    """Scores the survey tables need that an older document may not carry yet: from the score registry."""
    doc = res.document
    pairs = doc.get("pairs", [])
    if "gap_complexity" in doc or len(doc.get("planets", [])) < 3:
        if all("nearest_mmr" in p for p in pairs):
            return {}, [{} for _ in pairs]
    from ..scores import compute_scores
    sc = compute_scores(res.posterior, res.options)
    extra = {k: sc["system"][k] for k in ("gap_complexity",) if k not in doc and k in sc["system"]}
    pair_extra = [{k: q[k] for k in ("nearest_mmr", "mmr_offset") if k not in p and k in q}
                  for p, q in zip(pairs, sc["pairs"])]
    return extra, pair_extra


def _prior_name(post, key, default):
    v = (post.prior or {}).get(key)
    v = v.get("name") if isinstance(v, dict) else v
    return v or default


def _finite_json(x):
    """The document with NaN/inf replaced by None (JSON has no such numbers)."""
    from ..output.document import _finite
    return _finite(x)


def _summarise(sid, res):
    doc = _finite_json(res.document)
    res.document = doc
    post = res.posterior
    extra, pair_extra = _survey_extras(res)
    planets = []
    ecc = np.asarray(post["ecc"], dtype=float)
    psi = post.get("psi")
    has_sigma = post.get("sigma_mutual") is not None
    n = ecc.shape[0]
    take = np.linspace(0, n - 1, min(SAMPLES_PER_PLANET, n)).round().astype(int)
    for j, (entry, pl) in enumerate(zip(doc["planets"], res.system.planets)):
        basis, interim = _measured_ecc(pl)
        row = planet_row(sid, entry)
        row["ecc_measured"] = basis is not None
        rec = {"row": row, "ecc_basis": basis}
        if basis is not None:
            if post.method == "mcmc":     # sampled under the run's eccentricity prior
                interim = _prior_name(post, "eccentricity", res.options.ecc_prior or "ecc-uniform")
            rec["ecc_interim"] = interim
            rec["ecc_samples"] = ecc[take, j]
        if psi is not None:
            x = np.asarray(psi, dtype=float)[take, j]
            if np.all(np.isfinite(x)):
                rec["psi_samples"] = x
                sp = _prior_name(post, "mutual_inclination_sigma", res.options.incl_prior or "incl-loguniform")
                rec["psi_interim"] = f"rayleigh-marginal:{sp}" if has_sigma else "uniform-psi"
        planets.append(rec)
    return {"system": sid, "status": "ok", "n_planets": res.system.n_planets, "document": doc,
            "system_row": system_row(doc, extra),
            "pairs": [pair_row(sid, p, e) for p, e in zip(doc.get("pairs", []), pair_extra)],
            "planets": planets, "rejects": []}


def process_system(task):
    """Validate and analyse one system; never raises for bad input (returns a reject)."""
    from ..model.reader import build_system
    from ..pipeline import analyze
    group, cmap, units, options, catalog_name, debug = task
    sid, n = group.system, group.n_planets
    source = f"{catalog_name}: system '{sid}'"
    data, problems, rows_of = system_mapping(group, cmap, units)
    if problems:
        return _rejected(sid, n, problems, "input")
    digest = hashlib.sha256(json.dumps(data, sort_keys=True, default=str).encode()).hexdigest()
    try:
        system = build_system(data, source=source, sha256=digest)
    except InputError as exc:
        return _rejected(sid, n, _problems_from_error(exc, source, rows_of, cmap), "input")
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("ignore", RuntimeWarning)
            warnings.simplefilter("always", ConvergenceWarning)
            res = analyze(system, options)
            out = _summarise(sid, res)
        notes = sorted({" ".join(str(w.message).split()) for w in caught
                        if issubclass(w.category, ConvergenceWarning)})
        if notes:     # kept with the system instead of interrupting the progress line
            out["system_row"]["warnings"] = "; ".join(notes)
        return out
    except InputError as exc:
        return _rejected(sid, n, _problems_from_error(exc, source, rows_of, cmap), "input")
    except Exception as exc:  # noqa: BLE001 - logged as a reject that names the exception type
        if debug:
            raise
        frames = traceback.extract_tb(exc.__traceback__)[-2:]
        at = " <- ".join(f"{pathlib.Path(f.filename).parent.name}/{pathlib.Path(f.filename).name}:{f.lineno}"
                         for f in reversed(frames))
        reason = f"analysis failed: {type(exc).__name__}: {' '.join(str(exc).split())} (at {at})"
        return _rejected(sid, n, [{"planet": "", "row": rows_of.get(""), "field": "", "column": "",
                                   "reason": reason}], "analysis")


# --------------------------------------------------------------------------
# Progress line
# --------------------------------------------------------------------------

class Progress:
    """Systems done / failed and ETA on one carriage-return line of stderr."""

    def __init__(self, total, quiet=False, stream=None, skipped=0):
        self.total, self.quiet = total, quiet
        self.stream = stream or sys.stderr
        self.done = self.failed = 0
        self.skipped = skipped
        self.t0 = time.monotonic()
        self.last = 0.0
        self.tty = hasattr(self.stream, "isatty") and self.stream.isatty()

    def update(self, ok):
        self.done += 1
        self.failed += 0 if ok else 1
        now = time.monotonic()
        if not self.quiet and (now - self.last > (0.1 if self.tty else 5.0) or self.done == self.total):
            self.last = now
            self._draw(now)

    def _draw(self, now):
        el = now - self.t0
        rate = self.done / el if el > 0 else 0.0
        eta = (self.total - self.done) / rate if rate > 0 else float("nan")
        w = 24
        fill = int(w * self.done / self.total) if self.total else w
        eta_s = f"{int(eta // 60)}m{int(eta % 60):02d}s" if math.isfinite(eta) else "--"
        line = (f"survey [{'#' * fill}{'.' * (w - fill)}] {self.done}/{self.total} systems, "
                f"{self.failed} rejected, {rate:.1f}/s, ETA {eta_s}")
        if self.skipped:
            line += f" ({self.skipped} resumed)"
        self.stream.write(("\r" + line) if self.tty else (line + "\n"))
        self.stream.flush()

    def close(self):
        if not self.quiet and self.tty and self.done:
            self.stream.write("\n")
            self.stream.flush()


# --------------------------------------------------------------------------
# Executors
# --------------------------------------------------------------------------

def _run_serial(tasks, sink):
    for t in tasks:
        sink(process_system(t))


def process_batch(batch):
    """Several systems in one worker call (amortises the per-task cost of fast surveys)."""
    return [process_system(t) for t in batch]


#: Largest number of systems sent to a worker in one call.
MAX_BATCH = 16


def _run_local(tasks, sink, jobs):
    import multiprocessing
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
    ctx = multiprocessing.get_context("spawn")     # no inherited sqlite handle, same as Dask workers
    # small batches: few enough per call that every worker stays busy to the end and a crash
    # loses little; results are still stored system by system
    size = max(1, min(MAX_BATCH, len(tasks) // (8 * jobs)))
    it = iter([tasks[i:i + size] for i in range(0, len(tasks), size)])
    # one BLAS/OpenMP thread per worker: N workers on N cores, not N x (threads per library)
    saved = {k: os.environ.get(k) for k in _THREAD_VARS}
    os.environ.update({k: "1" for k in _THREAD_VARS})
    ex = ProcessPoolExecutor(max_workers=jobs, mp_context=ctx)
    try:
        pending = set()
        for b in it:
            pending.add(ex.submit(process_batch, b))
            if len(pending) >= 4 * jobs:
                break
        while pending:
            done, pending = wait(pending, return_when=FIRST_COMPLETED)
            for f in done:
                for r in f.result():
                    sink(r)
                nxt = next(it, None)
                if nxt is not None:
                    pending.add(ex.submit(process_batch, nxt))
    except BaseException:
        ex.shutdown(wait=False, cancel_futures=True)
        raise
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v
    ex.shutdown(wait=True)


def _run_dask(tasks, sink, address):
    try:
        from distributed import Client, as_completed
    except ImportError:
        raise InputError("--scheduler needs Dask distributed, the optional extra 'dask' "
                         "(pip install 'archsys[dask]')") from None
    import dask
    try:
        client = Client(address, timeout=dask.config.get("distributed.comm.timeouts.connect", "30s"))
    except (OSError, TimeoutError) as exc:
        raise InputError(f"--scheduler {address}: cannot connect to the Dask scheduler ({exc})") from None
    try:
        futures = client.map(process_system, tasks, pure=False)
        for fut in as_completed(futures):
            sink(fut.result())
            fut.release()
    finally:
        client.close()


# --------------------------------------------------------------------------
# The survey
# --------------------------------------------------------------------------

def _analysis_options(seed, draws, mode, ecc_prior, incl_prior, require_stable, max_steps, nbody):
    from ..inference.draws import DEFAULT_DRAWS
    from ..inference.priors import load_prior
    from ..pipeline import AnalysisOptions
    n = draws or (FAST_DRAWS if mode == "fast" else DEFAULT_DRAWS)
    if n < 10:
        raise InputError(f"--draws must be at least 10; got {n}")
    for name, qty in ((ecc_prior, "eccentricity"), (incl_prior, "mutual_inclination_sigma")):
        if name is not None and load_prior(name).quantity != qty:
            raise InputError(f"prior {name!r} is not a prior on {qty}")
    return AnalysisOptions(n_draws=n, seed=int(seed), mode=mode, ecc_prior=ecc_prior, incl_prior=incl_prior,
                           require_stable=require_stable, quiet=True, max_steps=max_steps, nbody=nbody, jobs=1)


def _manifest(cat, cmap, opts, seed):
    o = opts.as_dict()
    o.pop("seed", None)
    return {"store_format": 1, "archsys_version": __version__, "catalog_sha256": cat.sha256,
            "columns": cmap.source if cmap.source == "canonical columns" else "file",
            "columns_sha256": cmap.sha256, "seed": int(seed), "options": o}


def run_survey(catalog, out, *, columns=None, where=(), resume=False, scheduler=None, limit=None,
               figures=True, seed=0, draws=None, mode="auto", ecc_prior=None, incl_prior=None,
               require_stable=False, max_steps=None, nbody=0, jobs=0, quiet=True, debug=False,
               stream=None):
    """Run a survey of ``catalog`` into directory ``out``; returns the population document.

    ``jobs``: 1 = serial, N = N local processes, 0 = one process per core
    (the default); ignored when ``scheduler`` (a Dask address) is given.

    Raises
    ------
    InputError
        Fatal problems only (unreadable table, missing columns, bad map or
        --where, a store made from other inputs); bad rows become rejects.
    """
    out = pathlib.Path(out)
    if out.exists() and not out.is_dir():
        raise InputError(f"--out {out}: exists and is not a directory")
    if limit is not None and limit < 1:
        raise InputError(f"--limit must be at least 1; got {limit}")
    if jobs is not None and int(jobs) < 0:
        raise InputError(f"--jobs must be >= 0 (0 = one per core); got {jobs}")
    jobs = (os.cpu_count() or 1) if not jobs else int(jobs)
    cat = read_catalog(catalog)
    cmap = bind(load_column_map(columns) if columns else canonical_map(cat.columns), cat)
    names = where_names(cmap, cat.columns)
    nodes = [parse_where(w, names) for w in where]
    opts = _analysis_options(seed, draws, mode, ecc_prior, incl_prior, require_stable, max_steps, nbody)
    groups, orphans = group_systems(cat, cmap.system)
    selected = [g for g in groups if select(g, nodes)]
    if limit is not None:
        selected = selected[:limit]
    ids = {g.system for g in selected}

    store = SurveyStore(out)
    try:
        store.check_manifest(_manifest(cat, cmap, opts, seed), resume)
        done = store.done()
        todo = [g for g in selected if g.system not in done]
        tasks = [(g, cmap, cat.units, replace(opts, seed=system_seed(seed, g.system)), cat.name, debug)
                 for g in todo]
        prog = Progress(len(tasks), quiet=quiet, stream=stream, skipped=len(selected) - len(todo))

        def sink(res):
            store.put(res)
            prog.update(res["status"] == "ok")

        try:
            if scheduler:
                _run_dask(tasks, sink, scheduler)
            elif jobs == 1 or len(tasks) <= 1:
                _run_serial(tasks, sink)
            else:
                _run_local(tasks, sink, jobs)
        finally:
            prog.close()
        return _finish(store, cat, cmap, selected, ids, orphans, groups, out, seed, opts,
                       list(where), limit, figures)
    finally:
        store.close()


def _finish(store, cat, cmap, selected, ids, orphans, groups, out, seed, opts, where, limit, figures):
    from .hierarchical import eccentricity_population, tilt_population
    from .population import population_statistics
    status = store.systems(ids)
    if len(status) != len(ids):  # pragma: no cover - every selected system is stored above
        raise RuntimeError(f"store holds {len(status)} of {len(ids)} selected systems")
    ok_rows = [row for _, st, _, _, row in status if st == "ok"]
    pairs = store.rows("pairs", ids)
    planets = store.rows("planets", ids)
    rejects = [{"system": "", "planet": "", "row": r, "field": "system", "column": cmap.system,
                "reason": f"row has no system id in column '{cmap.system}'"} for r in orphans]
    rejects += [{"system": "", "planet": "", "row": r, "field": "", "column": "", "reason": why}
                for r, why in cat.malformed]
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
    }
    if counts["systems_selected"] != counts["systems_analysed"] + counts["systems_rejected"]:  # pragma: no cover
        raise RuntimeError(f"survey counts do not reconcile: {counts}")

    pop = {"schema_version": 1, "archsys_version": __version__,
           "catalog": {"file": cat.name, "sha256": cat.sha256},
           "columns": {"source": pathlib.Path(cmap.source).name if cmap.sha256 else cmap.source,
                       "sha256": cmap.sha256 or None},
           "selection": {"where": where, "limit": limit}, "seed": int(seed),
           "options": {k: v for k, v in opts.as_dict().items() if k != "seed"},
           "seeds": "per system: SeedSequence([seed, crc32(system id)])", "counts": counts}
    pop.update(population_statistics(ok_rows, pairs, seed=seed))
    ecc_samples, ecc_lp0, psi_samples, psi_lp0, ecc_info = _hier_inputs(store, ids, ok_rows)
    psi_interims = ecc_info.pop("psi_interims")
    ecc_pop = eccentricity_population(ecc_samples, ecc_lp0, seed=int(seed) + 11,
                                      interim_prior=ecc_info["interim"])
    ecc_pop.update({k: v for k, v in ecc_info.items() if k != "interim"})
    pop["eccentricity_population"] = ecc_pop
    if psi_samples:
        pop["mutual_inclination_population"] = tilt_population(
            psi_samples, psi_lp0, seed=int(seed) + 13,
            interim_prior="; ".join(sorted(set(psi_interims))))
    else:
        pop["mutual_inclination_population"] = {
            "rayleigh": None, "n_planets": 0,
            "reason": "no analysed posterior provides planet tilts 'psi' (direct Monte Carlo draws do not "
                      "sample mutual inclinations); the MCMC mode of transiting multis would"}

    write_csv(out / "systems.csv", header_of(ok_rows, _FIRST_SYSTEM_COLS), ok_rows)
    write_csv(out / "planets.csv", header_of(planets, ("system", "planet")), planets)
    write_csv(out / "pairs.csv", header_of(pairs, _FIRST_PAIR_COLS), pairs)
    write_csv(out / "rejects.csv", list(REJECT_COLS), rejects)
    if figures:
        from .figures import survey_figures
        survey_figures(pop, ok_rows, pairs, planets, out / "figures")
    from ..output.files import atomic_write
    atomic_write(out / "population.json", json.dumps(pop, indent=2, allow_nan=False) + "\n")
    return pop


def _hier_inputs(store, ids, ok_rows):
    """Samples and interim log-priors for the hierarchical fits."""
    from ..inference.priors import load_prior
    from .hierarchical import marginal_tilt_log_prior
    ok = {r["system"] for r in ok_rows}
    transiting_multi = {r["system"] for r in ok_rows if r["n_planets"] >= 2 and r["n_transiting"] == r["n_planets"]}
    ecc_s, ecc_l, psi_s, psi_l = [], [], [], []
    interims, psi_interims, skipped = set(), [], {}
    n_exact = n_limit = 0
    cache = {}
    for sid, _planet, basis, interim, e, psi_int, psi in store.samples(ids):
        if sid not in ok:
            continue
        if basis is not None and e is not None:
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
    desc = {"ecc-uniform": "uniform on [0, 1) (direct draws of the catalogue summary truncated to [0, 1))",
            "linear-2e": "p0(e) = 2e (uniform in e cos w, e sin w)"}
    info = {"interim": "; ".join(desc.get(i, i) for i in sorted(interims)) or "none",
            "n_exact_values": int(n_exact), "n_limits": int(n_limit),
            "selection": "planets with a measured eccentricity (value, error or limit); "
                         "'assumed circular' planets and eccentricities of exactly 0 without errors excluded",
            "psi_interims": psi_interims}
    if skipped:
        info["skipped_unknown_interim_prior"] = skipped
    return ecc_s, ecc_l, psi_s, psi_l, info


# --------------------------------------------------------------------------
# CLI and benchmark
# --------------------------------------------------------------------------

def run_survey_cli(args) -> int:
    """Entry point of ``archsys survey`` (see :mod:`archsys.cli`)."""
    pop = run_survey(args.catalog, args.out, columns=args.columns, where=args.where or (),
                     resume=args.resume, scheduler=args.scheduler, limit=args.limit,
                     figures=not args.no_figures, seed=args.seed, draws=args.draws, mode=args.mode,
                     ecc_prior=args.ecc_prior, incl_prior=args.incl_prior, require_stable=args.require_stable,
                     max_steps=args.max_steps, nbody=args.nbody, jobs=args.jobs, quiet=args.quiet,
                     debug=getattr(args, "debug", False))
    c = pop["counts"]
    if not args.quiet:
        sys.stderr.write(f"archsys survey: {c['systems_selected']} systems: {c['systems_analysed']} analysed, "
                         f"{c['systems_rejected']} rejected (see {pathlib.Path(args.out) / 'rejects.csv'})\n")
    if c["rejected_analysis_error"]:
        sys.stderr.write(f"archsys survey: warning: {c['rejected_analysis_error']} systems failed inside the "
                         f"analysis (reason 'analysis failed: ...' in rejects.csv); please report them\n")
    return 0


def survey_benchmark(catalog, columns=None, jobs=1, out=None, mode="fast", draws=None, where=(),
                     limit=None, seed=0):
    """Time one survey (no figures) and return its figures of merit.

    Returns
    -------
    dict
        ``wall_s``, ``systems``, ``systems_per_s``, ``analysed``, ``rejected``,
        ``jobs``, ``mode``, ``draws``.
    """
    import tempfile
    tmp = None
    if out is None:
        tmp = tempfile.TemporaryDirectory(prefix="archsys-bench-")
        out = tmp.name
    try:
        t0 = time.perf_counter()
        pop = run_survey(catalog, out, columns=columns, where=where, limit=limit, figures=False,
                         seed=seed, draws=draws, mode=mode, jobs=jobs, quiet=True)
        wall = time.perf_counter() - t0
    finally:
        if tmp is not None:
            tmp.cleanup()
    c = pop["counts"]
    n = c["systems_selected"]
    return {"wall_s": wall, "systems": n, "systems_per_s": n / wall if wall > 0 else float("nan"),
            "analysed": c["systems_analysed"], "rejected": c["systems_rejected"], "jobs": jobs,
            "mode": mode, "draws": pop["options"]["n_draws"]}
