"""Posterior summaries: median and the 15.87 / 84.13 percentiles."""
from __future__ import annotations

import math

import numpy as np

__all__ = ["summarize", "summarize_angle", "QUANTILES", "probability"]

#: Central 68.27 % interval, i.e. +/- 1 sigma for a Gaussian.
QUANTILES = (0.158655, 0.5, 0.841345)


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
    lo, med, hi = np.quantile(x[ok] * scale, QUANTILES)
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


def summarize_angle(deg):
    """Summary of an angle in degrees, wrapped to [0, 360) or [-180, 180), whichever gives the
    narrower 68 % interval (so that an angle near 0 is not split across the wrap)."""
    x = np.asarray(deg, dtype=float).ravel()
    a = np.mod(x, 360.0)
    b = np.mod(x + 180.0, 360.0) - 180.0
    sa, sb = summarize(a), summarize(b)
    if sa is None or sb is None:
        return sa
    return sa if (sa["hi"] - sa["lo"]) <= (sb["hi"] - sb["lo"]) else sb
