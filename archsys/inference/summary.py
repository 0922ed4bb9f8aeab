"""Posterior summaries: median and the 15.87 / 84.13 percentiles."""
from __future__ import annotations

import math

import numpy as np

__all__ = ["summarize", "summarize_angle", "angle_branch", "wrap_angle", "ANGLE_BRANCHES", "quantiles", "QUANTILES",
           "probability"]

#: Central 68.27 % interval, i.e. +/- 1 sigma for a Gaussian.
QUANTILES = (0.158655, 0.5, 0.841345)


_Q = np.asarray(QUANTILES, dtype=float)


def quantiles(x, q=_Q):
    """``np.quantile(x, q)`` (default "linear" method) of finite 1-D float draws, the same bytes, faster.

    The same steps as numpy's implementation (virtual index ``(n - 1) q``, one
    partition at the same k-th positions, numpy's two-sided linear
    interpolation), without its generic axis/method dispatch, which dominates
    the cost on the ~1000 draws of a survey system.  ``x`` is partitioned in
    place (pass a copy you own).  ``tests/test_summary_quantiles.py`` checks the
    bytes against ``np.quantile``.
    """
    if q is _Q:
        prev, nxt, kth, vi = _plan(x.shape[0])
    else:
        prev, nxt, kth, vi = _plan_for(x.shape[0], q)
    x.partition(kth)
    a, b = x[prev], x[nxt]
    t = vi - prev
    d = b - a
    out = a + d * t
    np.subtract(b, d * (1 - t), out=out, where=t >= 0.5)
    return out


def _plan_for(n, q):
    """Indices of :func:`quantiles`: the two order statistics around each quantile and the partition points."""
    vi = (n - 1) * q
    prev = np.floor(vi)
    nxt = prev + 1
    above = vi >= n - 1
    if above.any():
        prev[above] = -1
        nxt[above] = -1
    prev = prev.astype(np.intp)
    nxt = nxt.astype(np.intp)
    return prev, nxt, np.unique(np.concatenate(([0, -1], prev, nxt))), vi


_PLANS: dict = {}


def _plan(n):
    """:func:`_plan_for` of the default quantiles, kept per sample size (a survey has a few sizes)."""
    plan = _PLANS.get(n)
    if plan is None:
        if len(_PLANS) > 256:
            _PLANS.clear()
        plan = _PLANS[n] = _plan_for(n, _Q)
    return plan


def _clean(x):
    x = float(x)
    return x if math.isfinite(x) else None


def summarize(x, scale=1.0, digits=None):
    """{"median", "lo", "hi"} of draws ``x`` (1-D), or None if no finite draws.

    Draws that are not finite (e.g. an inclination that no geometry allows) are
    excluded and counted in ``"n_invalid"`` when there are any.
    """
    x = np.asarray(x, dtype=float).ravel()
    ok = np.isfinite(x)
    if not ok.any():
        return None
    y = x.copy() if ok.all() else x[ok]                 # our own copy: quantiles() partitions it
    if scale != 1.0:                                    # x * 1.0 is x, bit for bit
        y = np.asarray(y * scale, dtype=float)
    lo, med, hi = quantiles(y)
    out = {"median": _clean(med), "lo": _clean(lo), "hi": _clean(hi)}
    if digits is not None:
        out = {k: round(v, digits) for k, v in out.items()}
    if not ok.all():
        out["n_invalid"] = int((~ok).sum())
    return out


def probability(flags):
    """Fraction of draws where a boolean verdict holds (NaN-free input)."""
    f = np.asarray(flags, dtype=bool).ravel()
    return float(f.mean()) if f.size else None


#: The one angle convention of every output (tables, JSON, figures): an angle is shown on the
#: branch [0, 360) or [-180, 180) whose central 68.3 % interval of the draws is narrower (so an
#: angle near 0 is not split across the wrap); a tie keeps [0, 360).
ANGLE_BRANCHES = ((0.0, "[0, 360)"), (-180.0, "[-180, 180)"))


def wrap_angle(deg, lower):
    """Angles in degrees wrapped to [lower, lower + 360)."""
    return np.mod(np.asarray(deg, dtype=float) - lower, 360.0) + lower


def angle_branch(deg):
    """The lower end (0 or -180) of the branch of the angle draws ``deg`` (degrees) by the convention
    of :data:`ANGLE_BRANCHES`: the one with the narrower central 68.3 % interval."""
    x = np.asarray(deg, dtype=float).ravel()
    x = x[np.isfinite(x)]
    if x.size == 0:
        return 0.0
    widths = []
    for lower, _ in ANGLE_BRANCHES:
        lo, hi = np.quantile(wrap_angle(x, lower), (QUANTILES[0], QUANTILES[2]))
        widths.append(round(float(hi - lo), 9))
    return ANGLE_BRANCHES[int(np.argmin(widths))][0]


def summarize_angle(deg):
    """Summary of an angle in degrees on the branch chosen by :func:`angle_branch`; the summary
    states its branch as ``"branch": [lower, lower + 360]``."""
    x = np.asarray(deg, dtype=float).ravel()
    lower = angle_branch(x)
    out = summarize(wrap_angle(x, lower))
    if out is not None:
        out["branch"] = [lower, lower + 360.0]
    return out
