"""Population fits of a survey: run beside the per-system work, bounded in cost.

Two things make the population fits of a large survey cheap without changing
what they estimate:

* **No serial tail.**  With several local workers the fits run in those
  workers (one pool, :class:`archsys.survey.workers.FitRunner`), beside a Dask
  cluster in two local processes: the transit-multiplicity fit needs only
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

import numpy as np

from .workers import FitRunner  # noqa: F401 - the population fits' pool is the survey's (workers.py)

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
