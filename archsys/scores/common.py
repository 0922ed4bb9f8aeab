"""Helpers shared by the score modules."""
from __future__ import annotations

import numpy as np

__all__ = ["masked_apply", "effective_mass", "adjacent"]


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
