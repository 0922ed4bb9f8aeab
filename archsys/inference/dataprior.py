"""Data or prior?  The posterior-to-prior width ratio of a quantity, computed on the reported draws.

For a quantity with an explicit prior (eccentricities, the mutual-inclination
dispersion sigma) the measure is

    r = W68(posterior draws) / W68(prior),

the ratio of the central 68.3 % interval widths, the posterior's taken from the
same draws the report summarises, the prior's from its quantile function.  A
log-uniform prior (a scale parameter) is compared in ln x, where it is flat.
r near 1: the data did not narrow the prior; r << 1: the data set the number.
It is the interval form of the posterior contraction ``1 - Var_post/Var_prior``
([Betancourt2018]; [Schad2021]; from memory): for Gaussian marginals the
contraction is ``1 - r**2``.  Widths rather than variances keep the measure
finite for heavy-tailed posteriors.

Classes (:class:`Source`): ``prior`` when r >= 0.8 (the share already used by
:func:`archsys.scores.common.barely_constrained`), ``mixed`` for 0.5 <= r < 0.8,
``data`` below 0.5 (thresholds: a choice, common practice).  A planet without eccentricity data is
``prior`` whatever its ratio (``no_data``: a joint constraint such as non-crossing orbits may narrow
the prior, but no datum does).
"""
from __future__ import annotations

from enum import Enum

import numpy as np

from .basis import Origin, origin_of
from .summary import QUANTILES

__all__ = ["Source", "PRIOR_SHARE", "MIXED_SHARE", "width_ratio", "classify", "measure", "posterior_measures"]

PRIOR_SHARE = 0.8
MIXED_SHARE = 0.5


class Source(str, Enum):
    DATA = "data"
    MIXED = "mixed"
    PRIOR = "prior"


def classify(ratio):
    if ratio is None:
        return None
    return (Source.PRIOR if ratio >= PRIOR_SHARE else Source.MIXED if ratio >= MIXED_SHARE else Source.DATA).value


def _w68(x):
    return float(np.diff(np.quantile(x, (QUANTILES[0], QUANTILES[2])))[0])


def width_ratio(draws, prior_lo, prior_hi, log=False):
    """W68 of ``draws`` over the prior's 68 % width ``prior_hi - prior_lo`` (both in ln x if ``log``)."""
    x = np.asarray(draws, dtype=float).ravel()
    x = x[np.isfinite(x)]
    if log:
        x = np.log(x[x > 0])
        prior_lo, prior_hi = np.log(prior_lo), np.log(prior_hi)
    width = prior_hi - prior_lo
    if x.size < 10 or not width > 0:
        return None
    return _w68(x) / width


def measure(draws, prior, scale=1.0):
    """{"width_ratio", "source", "prior"} of ``draws`` (times ``scale`` into the prior's unit) against a
    :class:`~archsys.inference.priors.Prior`, or a flat prior on [0, 1) when ``prior`` is None."""
    if prior is None:
        lo, hi, log, name = QUANTILES[0], QUANTILES[2], False, "ecc-uniform"
    else:
        lo, hi = (float(v) for v in prior.ppf([QUANTILES[0], QUANTILES[2]]))
        log, name = prior.family == "loguniform", prior.name
    r = width_ratio(np.asarray(draws, dtype=float) * scale, lo, hi, log=log)
    if r is None:
        return None
    return {"width_ratio": round(r, 3), "source": classify(r), "prior": name}


def _load(rec):
    name = rec.get("name") if isinstance(rec, dict) else rec
    if not name or name == "ecc-uniform":
        return None
    from .prior_files import load_prior       # only here: it imports scipy.stats (a third of a second)
    try:
        return load_prior(name)
    except Exception:          # a prior that cannot be read again (a moved user file): no measure
        return False


def posterior_measures(post):
    """({planet name: {"ecc": measure}}, {"mutual_inclination_sigma_deg": measure}) of a posterior.

    Only quantities with an explicit prior: eccentricities that were sampled (not fixed or assumed
    circular) and sigma.  Direct draws use the summary within [0, 1), i.e. a flat prior.
    """
    planets, system = {}, {}
    rec = post.prior or {}
    ecc_prior = _load(rec.get("eccentricity"))
    no_data = rec.get("eccentricity_without_data") or {}
    no_data_prior = _load(no_data) if no_data else None
    no_data_names = set(no_data.get("planets") or []) if isinstance(no_data, dict) else set()
    e = post.get("ecc")
    for j, pl in enumerate(post.system.planets):
        origin = origin_of((post.notes.get(pl.name) or {}).get("ecc", ""))
        if e is None or origin in (Origin.ASSUMED, Origin.FIXED):
            continue
        no_data = pl.name in no_data_names or origin is Origin.PRIOR
        pr = no_data_prior if no_data else ecc_prior
        if pr is False:
            continue
        m = measure(e[:, j], pr)
        if m is not None:
            if no_data:        # no datum: whatever narrows it is a constraint or a prior, not data
                m.update(source=Source.PRIOR.value, no_data=True)
            planets[pl.name] = {"ecc": m}
    sig = post.get("sigma_mutual")
    if sig is not None and np.isfinite(sig).any():
        pr = _load(rec.get("mutual_inclination_sigma"))
        if pr:
            m = measure(np.degrees(sig), pr)
            if m is not None:
                system["mutual_inclination_sigma_deg"] = m
    return planets, system
