"""Survey workers: one system per task, local process pools or Dask, and the progress bar.

:func:`process_system` validates and analyses one system and never raises for
bad input (it returns a reject).  Local workers are spawned processes that exit
when the survey process dies (:func:`watch_parent`); a Dask cluster gets the
same tasks through :func:`dask_client`.
"""
from __future__ import annotations

import contextlib
import hashlib
import json
import os
import pathlib
import re
import threading
import time
import traceback
import warnings
import zlib

import numpy as np

from ..errors import ConvergenceWarning, InputError
from ..progress import progress_bar
from .mapping import system_mapping
from .store import pair_row, planet_row, system_row

__all__ = ["process_system", "process_batch", "progress_bar", "watch_parent", "worker_start", "one_blas_thread",
           "large_array_malloc", "FitRunner",
           "stop_pool", "dask_client",
           "run_tasks", "system_seed", "system_options", "SAMPLES_PER_PLANET", "FAST_BATCH"]

#: Posterior samples per planet kept for the hierarchical inference.
SAMPLES_PER_PLANET = 100
_THREAD_VARS = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")



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
    from ..output.json_document import _finite
    return _finite(x)


def _summarise(sid, res):
    doc = res.document          # build_document already replaced NaN/inf by None
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


def _validated(task):
    """(system, rows_of) of a task's rows, or the reject of a system that cannot be analysed."""
    from ..model.reader import build_system
    group, cmap, units, options, catalog_name, debug = task
    sid, n = group.system, group.n_planets
    source = f"{catalog_name}: system '{sid}'"
    if getattr(group, "broken", None):       # a row of this system could not be read
        return _rejected(sid, n + len(group.broken), [
            {"planet": "", "row": r, "field": "", "column": "",
             "reason": f"{why}; the system is not analysed without that row"} for r, why in group.broken], "input")
    data, problems, rows_of = system_mapping(group, cmap, units)
    if problems:
        return _rejected(sid, n, problems, "input")
    digest = hashlib.sha256(json.dumps(data, sort_keys=True, default=str).encode()).hexdigest()
    try:
        system = build_system(data, source=source, sha256=digest)
    except InputError as exc:
        return _rejected(sid, n, _problems_from_error(exc, source, rows_of, cmap), "input")
    return system, rows_of


def _failed(task, rows_of, exc):
    """The reject of a system whose analysis raised ``exc`` (re-raised with --debug)."""
    group, cmap, _, _, catalog_name, debug = task
    sid, n = group.system, group.n_planets
    source = f"{catalog_name}: system '{sid}'"
    if isinstance(exc, InputError):
        return _rejected(sid, n, _problems_from_error(exc, source, rows_of, cmap), "input")
    if debug:
        raise exc
    frames = traceback.extract_tb(exc.__traceback__)[-2:]
    at = " <- ".join(f"{pathlib.Path(f.filename).parent.name}/{pathlib.Path(f.filename).name}:{f.lineno}"
                     for f in reversed(frames))
    reason = f"analysis failed: {type(exc).__name__}: {' '.join(str(exc).split())} (at {at})"
    return _rejected(sid, n, [{"planet": "", "row": rows_of.get(""), "field": "", "column": "",
                               "reason": reason}], "analysis")


def system_seed(seed: int, system_id: str) -> int:
    """Seed of one system: a function of (global seed, system id) only."""
    ss = np.random.SeedSequence([int(seed) % 2 ** 63, zlib.crc32(str(system_id).encode("utf-8"))])
    return int(ss.generate_state(1, dtype=np.uint32)[0])


def system_options(task):
    """The options a task's system is analysed with: the survey's, with the system's own seed.

    The seed is derived from the survey seed and the system id (:func:`system_seed`),
    so a system gets the same draws whichever batch, worker or run analyses it.
    """
    from dataclasses import replace
    group, options = task[0], task[3]
    return replace(options, seed=system_seed(options.seed, group.system))


#: glibc's malloc settings that, once set, switch off its dynamic mmap threshold (mallopt(3)).
_MALLOC_VARS = ("MALLOC_TRIM_THRESHOLD_", "MALLOC_MMAP_THRESHOLD_", "MALLOC_TOP_PAD_", "MALLOC_MMAP_MAX_")
_malloc_checked = []


def large_array_malloc():
    """Give glibc's malloc its dynamic maxima back in a worker whose environment fixed them low (once).

    Dask's nanny starts its workers with ``MALLOC_TRIM_THRESHOLD_=65536``.  Setting any of
    :data:`_MALLOC_VARS` switches off glibc's dynamic mmap threshold, so every array above 128 KiB --
    a batch's per-draw arrays are a few MB -- is a fresh ``mmap``, faulted in page by page and unmapped
    on free.  Measured on the development machine, 640 invented three-planet systems in one process:
    1.48 million page faults and 2.9 s of system time with that variable, 46 thousand and 0.2 s with
    the settings made here (the mmap threshold at 32 MiB and the trim threshold at 64 MiB, the largest
    values glibc's own dynamic rule reaches on 64-bit).  This was the ~4 ms per system by which a Dask
    survey trailed local processes.  Nothing is changed where none of those variables is set, or where
    the C library has no ``mallopt`` (not glibc).  Returns True when the settings were made.
    """
    if _malloc_checked:
        return _malloc_checked[0]
    done = False
    if any(v in os.environ for v in _MALLOC_VARS):
        try:
            import ctypes
            import ctypes.util
            libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
            mallopt = libc.mallopt
            m_trim_threshold, m_mmap_threshold = -1, -3           # <malloc.h>
            done = bool(mallopt(m_mmap_threshold, 32 << 20)) and bool(mallopt(m_trim_threshold, 64 << 20))
        except (OSError, AttributeError):   # not glibc: its own allocator, nothing to undo
            done = False
    _malloc_checked.append(done)
    return done


def process_system(task):
    """Validate and analyse one system; never raises for bad input (returns a reject)."""
    from ..pipeline import analyze
    large_array_malloc()
    checked = _validated(task)
    if isinstance(checked, dict):
        return checked
    system, rows_of = checked
    sid, options = task[0].system, system_options(task)
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
    except Exception as exc:  # noqa: BLE001 - logged as a reject that names the exception type
        return _failed(task, rows_of, exc)


def process_batch(batch):
    """Several systems in one worker call, the same results as :func:`process_system` of each.

    Fast-mode systems (direct draws, no MCMC) are analysed together with
    :func:`archsys.pipeline.analyze_many`: each has its own seed and summaries, and the per-draw
    kernels of the scores run once over the stacked draws of the systems of one shape.  A system
    whose analysis fails in the batch is redone alone, so its reject is the one it gets alone.
    """
    from ..pipeline import analyze_many
    large_array_malloc()                    # a Dask worker's malloc settings (see large_array_malloc)
    out = [None] * len(batch)
    fast = [i for i, t in enumerate(batch) if not t[3].uses_mcmc]
    checked = {}
    if len(fast) > 1:
        for i in fast:
            c = _validated(batch[i])
            if isinstance(c, dict):
                out[i] = c
            else:
                checked[i] = c
    if checked:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)
                many = analyze_many([c[0] for c in checked.values()], [system_options(batch[i]) for i in checked])
        except Exception:  # noqa: BLE001 - every system of the batch is redone alone below
            many = [None] * len(checked)
        for i, res in zip(checked, many):
            if res is not None and not isinstance(res, Exception):
                try:
                    out[i] = _summarise(batch[i][0].system, res)
                except Exception:  # noqa: BLE001 - redone alone below
                    out[i] = None
    return [r if r is not None else process_system(t) for r, t in zip(out, batch)]


# --------------------------------------------------------------------------
# Progress: archsys.progress.progress_bar (re-exported here)
# --------------------------------------------------------------------------

# --------------------------------------------------------------------------
# Executors
# --------------------------------------------------------------------------

def _parent_watch(parent_pid, interval):
    while True:
        time.sleep(interval)
        if os.getppid() != parent_pid:      # the parent died (kill -9): re-parented to init
            os._exit(3)


def one_blas_thread():
    """Limit BLAS and OpenMP to one thread in this process (for good: a survey process's own setting).

    A survey runs one process per core; a BLAS thread pool in each process only contends for the same
    cores.  It costs a lot: the population fits' small float32 matrix products took 31 s instead of
    2.5 s with OpenBLAS's two threads on a machine whose cores were busy (measured on the 2-core
    development machine).  Environment variables act only on processes started after them, so this
    uses threadpoolctl, which sets the loaded libraries' thread counts at run time.
    """
    from threadpoolctl import threadpool_limits
    return threadpool_limits(limits=1)


@contextlib.contextmanager
def one_thread_env():
    """The BLAS/OpenMP thread variables set to 1 while inside (for processes started there), then restored.

    A process pool starts its processes as tasks are submitted, so keep submitting inside.
    """
    saved = {k: os.environ.get(k) for k in _THREAD_VARS}
    os.environ.update({k: "1" for k in _THREAD_VARS})
    try:
        yield
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


def worker_start(parent_pid, interval=0.5):
    """Initialiser of survey worker and population-fit processes: one BLAS thread, exit with the parent."""
    one_blas_thread()
    watch_parent(parent_pid, interval)


def watch_parent(parent_pid, interval=0.5):
    """Worker initialiser: exit as soon as the survey process that started us is gone.

    A worker blocked on the task pipe would otherwise linger after a kill -9 of
    the parent (every spawned worker holds the pipe's write end too).
    """
    threading.Thread(target=_parent_watch, args=(parent_pid, interval), daemon=True,
                     name="archsys-parent-watch").start()


def _sentinels(procs):
    out = []
    for p in procs:
        try:
            out.append(p.sentinel)
        except (ValueError, AttributeError):    # a closed Process object: long gone
            pass
    return out


def _wait_gone(procs, timeout):
    """True when every process of ``procs`` has exited within ``timeout`` s (not reaped: the pool does that)."""
    from multiprocessing.connection import wait
    left, end = _sentinels(procs), time.monotonic() + timeout
    while left:
        ready = wait(left, max(0.0, end - time.monotonic()))
        if not ready:
            return False
        left = [s for s in left if s not in ready]
    return True


def _signal_all(procs, how):
    for p in procs:
        try:
            getattr(p, how)()
        except (OSError, ValueError, AttributeError):   # exited meanwhile, or closed
            pass


def _drain(fd, timeout):
    """Read and drop what reaches the pipe ``fd`` within ``timeout`` s and after; None (closed) at its end."""
    import select
    wait = timeout
    while select.select([fd], [], [], wait)[0]:
        if not os.read(fd, 1 << 16):        # no writer left
            os.close(fd)
            return None
        wait = 0
    return fd


def stop_pool(ex, grace=2.0, limit=10.0):
    """Stop a ``ProcessPoolExecutor`` now: return when its processes and its manager thread are gone.

    For a run that failed or was interrupted.  ``shutdown(wait=False, cancel_futures=True)`` alone leaves
    the pool's manager thread working into interpreter exit, and there the exit hook of
    ``concurrent.futures`` wakes that thread through a pipe without the lock the thread holds while it
    closes that pipe (CPython 3.10 and 3.11, and 3.12/3.13 until python/cpython#125451): now and then an
    "Exception ignored ... OSError: [Errno 9] Bad file descriptor" traceback after the CLI's one error
    line (DEVELOPERS.md, "Stopping a process pool").  ``shutdown(wait=True)`` alone would wait for the
    running tasks (a population fit can take minutes).  So: cancel what has not started, end the
    processes (SIGTERM, then SIGKILL after ``grace`` s), then wait (at most ``limit`` s) for the manager
    thread to see them gone and clean up.  Two things the kill leaves behind would otherwise hang that
    thread, hence the exit:

    * a result cut off by the kill: the thread would read forever from a pipe whose write end this
      process still holds.  That end is closed once the processes are gone, so the read ends (EOF) and
      the thread takes the pool for broken, its normal path after a dead worker;
    * a task input still being written to the pipe of queued tasks (a large fit input) by the queue's
      feeder thread, blocked on a full pipe nobody reads any more (measured: CPython 3.11.2 hangs
      there for good, 3.11.7 closes that pipe).  This keeps a read end of its own and empties the pipe
      until the thread is done.

    The pool's processes, manager thread and queues are attributes of the executor that
    ``concurrent.futures`` does not make public (Python 3.14 adds ``terminate_workers``, without the
    wait); each is looked up with a fallback, so another layout degrades to the plain shutdown.
    A Ctrl-C during the (bounded) stop is raised when the stop is done.
    """
    procs = list((getattr(ex, "_processes", None) or {}).values())
    manager = getattr(ex, "_executor_manager_thread", None)
    results = getattr(ex, "_result_queue", None)
    try:
        spare = [os.dup(ex._call_queue._reader.fileno())]
    except (AttributeError, OSError, ValueError):
        spare = [None]
    end = time.monotonic() + limit

    def end_processes():
        _signal_all(procs, "terminate")
        if not _wait_gone(procs, grace):
            _signal_all(procs, "kill")
            _wait_gone(procs, grace)

    def close_result_writer():
        writer = getattr(results, "_writer", None)
        if writer is not None and _wait_gone(procs, 0):
            writer.close()

    def wait_manager():
        while manager is not None and manager.is_alive() and time.monotonic() < end:
            if spare[0] is not None:
                spare[0] = _drain(spare[0], 0.02)
            else:
                manager.join(0.02)

    interrupted = None
    for step in (lambda: ex.shutdown(wait=False, cancel_futures=True),   # nothing queued starts any more
                 end_processes, close_result_writer, wait_manager, wait_manager):
        try:
            step()
        except KeyboardInterrupt as exc:        # a second Ctrl-C: finish the (bounded) stop first
            interrupted = exc
    if spare[0] is not None:
        os.close(spare[0])
    if interrupted is not None:
        raise interrupted


#: Most systems in one worker call (process_batch analyses a fast-mode call together): enough to amortise
#: the per-draw kernels' Python cost over (systems x draws) arrays and a Dask scheduler's per-task cost
#: (about a millisecond), small enough for the caches and a steady progress line.
FAST_BATCH = 64
#: Fewest worker calls per worker: every worker stays busy to the end, a small survey stores (and shows)
#: its systems as they finish, and a crash loses little.
CALLS_PER_WORKER = 8


def _batches(tasks, n_workers=1, batch=None):
    """The tasks cut into worker calls: ``batch`` each, else up to FAST_BATCH with CALLS_PER_WORKER per worker."""
    size = batch or max(1, min(FAST_BATCH, len(tasks) // (CALLS_PER_WORKER * max(1, n_workers))))
    return [tasks[i:i + size] for i in range(0, len(tasks), size)]


def _run_serial(tasks, sink, batch=None):
    for b in _batches(tasks, 1, batch):
        for r in process_batch(b):
            sink(r)


# --------------------------------------------------------------------------
# Local process pools (the survey's workers and population fits)
# --------------------------------------------------------------------------

class _Done:
    """A finished (or lazily computed) result with the Future interface used here."""

    def __init__(self, fn, args):
        self._fn, self._args, self._value, self._ran = fn, args, None, False

    def result(self):
        if not self._ran:
            self._value = self._fn(*self._args)
            self._ran = True
        return self._value

    def cancel(self):
        return True


class FitRunner:
    """A local process pool (``processes >= 1``), or tasks run lazily in this process (0).

    It runs a local survey's worker calls and population fits, or the fits alone beside a Dask
    cluster.  Processes are spawned, limited to one BLAS thread each and exit with the survey process
    (:func:`worker_start`).  The executor starts its
    processes as tasks are submitted, so the thread variables are set around
    each submission, not only around the executor's creation.
    """

    def __init__(self, processes=0):
        self.processes = int(processes)
        self._ex = None

    def submit(self, fn, *args):
        if self.processes <= 0:
            return _Done(fn, args)
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor
        with one_thread_env():                  # inherited by a process this submit starts
            if self._ex is None:
                self._ex = ProcessPoolExecutor(max_workers=self.processes,
                                               mp_context=multiprocessing.get_context("spawn"),
                                               initializer=worker_start, initargs=(os.getpid(),))
            return self._ex.submit(fn, *args)

    def warm(self):
        """Start every background process now, each importing the fit modules (no-op in this process).

        The executor starts a process per submission that finds none idle, so the second fit
        process would otherwise start -- and spend about a second importing -- only when the
        eccentricity fits are submitted after the last system, on the survey's critical path.
        """
        return [self.submit(_warm_up) for _ in range(self.processes)]

    def close(self, cancel=False):
        """Wait for the fits (``cancel=False``), or stop them now: the processes and the pool's thread are
        gone on return either way, so nothing of the pool runs into interpreter exit
        (:func:`archsys.survey.workers.stop_pool`)."""
        if self._ex is not None:
            ex, self._ex = self._ex, None
            if cancel:
                stop_pool(ex)
            else:
                ex.shutdown(wait=True)

    def __enter__(self):
        return self

    def __exit__(self, et, ev, tb):
        self.close(cancel=et is not None)
        return False


def _warm_up():
    """Import what the population fits use (run in a fit process started early by :meth:`FitRunner.warm`)."""
    import emcee  # noqa: F401
    from . import hierarchical, multiplicity_block  # noqa: F401
    return os.getpid()


def _run_pooled(tasks, sink, jobs, batch, pool):
    """The worker calls on ``pool`` (a :class:`FitRunner` of ``jobs`` processes).

    The pool is the survey's: the population fits run in the same processes (the transit-multiplicity
    fit beside the systems, the eccentricity fits after them), so no process starts -- and imports
    archsys, about a second each -- only for a fit.  The caller closes the pool (stopped at once on an
    error, :meth:`FitRunner.close`).
    """
    from concurrent.futures import FIRST_COMPLETED, wait
    it = iter(_batches(tasks, jobs, batch))
    pending = set()
    for b in it:
        pending.add(pool.submit(process_batch, b))
        if len(pending) >= 4 * jobs:
            break
    while pending:
        done, pending = wait(pending, return_when=FIRST_COMPLETED)
        for f in done:
            for r in f.result():
                sink(r)
            nxt = next(it, None)
            if nxt is not None:
                pending.add(pool.submit(process_batch, nxt))


def _run_local(tasks, sink, jobs, batch=None):
    """The worker calls on a pool of ``jobs`` spawned processes of its own (one BLAS thread each, stopped
    before an error is reported: :meth:`FitRunner.close`)."""
    with FitRunner(jobs) as pool:
        _run_pooled(tasks, sink, jobs, batch, pool)


def dask_client(address):
    """A connected Dask client, or one InputError line (missing extra, unreachable scheduler)."""
    try:
        from distributed import Client
    except ImportError:
        raise InputError("--scheduler needs Dask distributed, the optional extra 'dask' "
                         "(pip install 'archsys[dask]')") from None
    del Client
    from .remote import connect                 # deadlines on set-up and on every wait (issue 22)
    return connect(address)


def _run_dask(tasks, sink, client, batch=None):
    from .remote import results
    try:
        n_workers = len(client.scheduler_info().get("workers", {})) or 1
        futures = client.map(process_batch, _batches(tasks, n_workers, batch), pure=False)
        for fut, res in results(client, futures):
            for r in res:
                sink(r)
            fut.release()
    finally:
        try:
            client.close(timeout=5)             # a scheduler that is gone must not hold the exit
        except Exception:                       # noqa: BLE001 - the run's own error is the one to report
            pass


def run_tasks(tasks, sink, jobs, client=None, batch=None, pool=None):
    """Run every task: on Dask when ``client``, serially for one job or task, else on local processes.

    ``batch``: systems per worker call (None: sized from the number of tasks,
    for short even tasks; 1 for the joint engine's long uneven ones).  ``pool``: the survey's local
    process pool (:class:`FitRunner` of ``jobs`` processes, shared with the
    population fits and closed by the caller); None starts and stops a pool here.
    """
    if client is not None:
        _run_dask(tasks, sink, client, batch)
    elif jobs == 1 or len(tasks) <= 1:
        _run_serial(tasks, sink, batch)
    elif pool is not None and pool.processes == jobs:
        _run_pooled(tasks, sink, jobs, batch, pool)
    else:
        _run_local(tasks, sink, jobs, batch)
