"""Helpers shared by the score modules."""
from __future__ import annotations

import numpy as np

__all__ = ["masked_apply", "effective_mass", "adjacent", "modal_pair"]


def masked_apply(fn, *arrays, fill=np.nan, dtype=float):
    """Apply a kernel only where every input is finite; elsewhere return ``fill``.

    Kernels validate their inputs strictly; unknown quantities are NaN in the
    posterior, so we evaluate on the finite subset and leave NaN (unknown)
    elsewhere instead of inventing values.
    """
    arrs = np.broadcast_arrays(*[np.asarray(a, dtype=float) for a in arrays])
    ok = np.ones(arrs[0].shape, dtype=bool)
    for a in arrs:
        ok &= np.isfinite(a)
    out = np.full(arrs[0].shape, fill, dtype=dtype)
    if ok.any():
        out[ok] = fn(*[a[ok] for a in arrs])
    return out


def modal_pair(j, k):
    """The most frequent (j, k) over the draws, ties to the one seen first (as ``Counter.most_common``).

    ``j``, ``k``: non-negative integer arrays of one shape (k < 64).  The same answer as
    ``Counter(zip(j, k)).most_common(1)[0][0]``, without a Python loop over the draws.
    """
    code = np.asarray(j, dtype=np.int64) * 64 + np.asarray(k, dtype=np.int64)
    values, first, counts = np.unique(code, return_index=True, return_counts=True)
    top = counts == counts.max()
    pick = values[top][np.argmin(first[top])]
    return int(pick // 64), int(pick % 64)


def effective_mass(post):
    """(mass [M_sun], basis) per draw and planet: the true mass where known, else m sin i.

    With only m sin i the Hill separations are upper limits on the true
    spacing (true masses are larger), which the report states.
    """
    m = np.asarray(post["mass"], dtype=float)
    ms = np.asarray(post["msini"], dtype=float)
    return np.where(np.isfinite(m), m, ms)


def adjacent(x):
    """(inner, outer) columns of adjacent pairs along the last axis."""
    x = np.asarray(x)
    return x[..., :-1], x[..., 1:]


def summarize_with_infinite(x):
    """{"median", "lo", "hi"} of draws that may be +infinite, keeping the infinite draws.

    NaN draws (unknown) are left out as in :func:`archsys.inference.summary.summarize`;
    ``+inf`` draws take part in the percentiles, so the median of a sample that is
    more than half infinite is infinite.  JSON has no infinity: an infinite
    percentile is written ``null`` and the summary carries ``infinite_fraction``
    (fraction of the known draws that are infinite) whenever there are any.
    """
    from ..inference.summary import QUANTILES
    x = np.asarray(x, dtype=float).ravel()
    known = ~np.isnan(x)
    if not known.any():
        return None
    xk = x[known]
    inf = np.isinf(xk)
    if not inf.any():
        from ..inference.summary import summarize
        return summarize(xk)
    xs = np.sort(xk)                        # +inf sorts last
    first_inf = int(np.argmax(np.isinf(xs)))
    vals = []
    for q in QUANTILES:                     # linear interpolation, as numpy's default
        pos = q * (xs.size - 1)
        if int(np.ceil(pos)) >= first_inf:  # the interpolation reaches an infinite draw
            vals.append(None)
        else:
            vals.append(float(np.quantile(xs[:first_inf], q * (xs.size - 1) / max(first_inf - 1, 1))
                              if first_inf > 1 else xs[0]))
    lo, med, hi = vals
    out = {"median": med, "lo": lo, "hi": hi, "infinite_fraction": float(inf.mean())}
    if not known.all():
        out["n_invalid"] = int((~known).sum())
    return out


#: A posterior whose central 68 % interval is at least this share of the prior's is flagged as not
#: constrained by the data (common practice: the data then add little to the prior).
PRIOR_WIDTH_SHARE = 0.8
#: Width of the central 68.27 % interval of the flat eccentricity prior on [0, 1).
FLAT_ECC_WIDTH = 0.6827


def flat_ecc_prior(post):
    """Whether the eccentricity prior of ``post`` is the flat one (or none was recorded)."""
    pr = (post.prior or {}).get("eccentricity")
    name = pr.get("name") if isinstance(pr, dict) else pr
    return name in (None, "ecc-uniform")


def barely_constrained(ecc_draws, flat_prior=True):
    """Whether eccentricity draws are (nearly) as wide as the flat prior: 68 % interval >= 80 % of its width."""
    from ..inference.summary import QUANTILES
    e = np.asarray(ecc_draws, dtype=float)
    e = e[np.isfinite(e)]
    if not flat_prior or e.size < 10:
        return False
    lo, hi = np.quantile(e, (QUANTILES[0], QUANTILES[2]))
    return bool(hi - lo >= PRIOR_WIDTH_SHARE * FLAT_ECC_WIDTH)
