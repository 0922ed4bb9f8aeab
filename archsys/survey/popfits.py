"""Population fits of a survey: run beside the per-system work, bounded in cost.

Two things make the population fits of a large survey cheap without changing
what they estimate:

* **No serial tail.**  With several local workers (or a Dask cluster), the
  fits run in a process of their own: the transit-multiplicity fit needs only
  the catalogue rows, so it starts before the first system is analysed; the
  Beta and Rayleigh eccentricity fits (Hogg, Myers & Bovy 2010) start as soon
  as the last system is stored and run side by side.  Every fit is seeded as
  in a serial run, so the numbers are the same bytes either way.
* **Bounded cost.**  The importance-sampling likelihood costs
  (objects x samples per object) per evaluation.  Above
  :data:`MAX_FIT_OBJECTS` planets, a fixed-seed random subset of that many
  planets is fitted (drawn from ``SeedSequence([seed, 0x5AB5])``, so a resumed
  or re-batched survey picks the same subset).  The effect is stated in the
  result: the intervals are those of a survey of that many planets, about
  ``sqrt(n_available / n_used)`` times wider than a fit of every planet would
  give (a likelihood's width scales as 1/sqrt(N) for independent objects; common
  practice), and the medians move by about that much of an interval at most.
"""
from __future__ import annotations

import math
import os

import numpy as np

__all__ = ["MAX_FIT_OBJECTS", "subsample_objects", "FitRunner"]

#: Largest number of planets (objects) in one Hogg, Myers & Bovy (2010) fit; a choice: it keeps the
#: fits' cost at about that of the Open Exoplanet Catalogue extract (about 1500 planets with a measured
#: eccentricity), so the catalogue's own fit is never subsampled.
MAX_FIT_OBJECTS = 2000


def subsample_objects(samples, log_p0, seed, max_objects=None, tag=0x5AB5):
    """(samples, log_p0, info): at most ``max_objects`` objects, a seeded random subset in input order.

    ``info`` is None when nothing is dropped, else ``{"objects_available", "objects_used", "seed",
    "effect"}`` (see module docstring).
    """
    n = len(samples)
    max_objects = MAX_FIT_OBJECTS if max_objects is None else int(max_objects)
    if n <= max_objects:
        return samples, log_p0, None
    rng = np.random.default_rng(np.random.SeedSequence([int(seed) % 2 ** 63, tag]))
    keep = np.sort(rng.choice(n, size=max_objects, replace=False))
    widen = math.sqrt(n / max_objects)
    info = {"objects_available": int(n), "objects_used": int(max_objects),
            "selection": "fixed-seed random subset of the planets (SeedSequence([seed, 0x5AB5]))",
            "effect": (f"intervals are those of {max_objects} planets: about {widen:.2f}x wider than a fit of "
                       f"all {n} would give (width ~ 1/sqrt(N), common practice)")}
    return [samples[i] for i in keep], [log_p0[i] for i in keep], info


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
    """Run population fits in background processes (``processes >= 1``) or lazily in this process (0).

    Background processes are spawned (like the survey's workers), limited to
    one BLAS thread each and exit with the survey process
    (:func:`archsys.survey.workers.worker_start`).  The executor starts its
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
        from .workers import one_thread_env, worker_start
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
                from .workers import stop_pool
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


def transit_block(groups, cmap, columns, units, transit, seed):
    """The transit-multiplicity block without the per-system side of its side-by-side (filled in later)."""
    from .multiplicity_block import transit_multiplicity
    return transit_multiplicity(groups, cmap, columns, units, transit, seed, None)


def with_per_system_fit(block, per_system_fit):
    """``block`` (from :func:`transit_block`) with its side-by-side naming the survey's per-system tilt fit."""
    from ..output.json_document import _finite
    from .multiplicity_block import _side_by_side
    sbs = block.get("side_by_side") or {}
    sigma = (sbs.get("transit_multiplicity") or {}).get("sigma_deg")
    out = dict(block)
    out["side_by_side"] = _finite(_side_by_side(per_system_fit, sigma))
    return out
