"""Period ratios and mean-motion resonances: the resonance table, adjacent ratios, the nearest resonance.

Float kernels in the internal units (periods in days).  Every function broadcasts over leading "draw"
axes; the last axis runs over the planets of one system, sorted by period, e.g. ``periods`` shaped
``(n_draws, n_planets)`` and period ratios shaped ``(n_draws, n_pairs)`` with ``n_pairs = n_planets - 1``.
No function loops over draws; the only Python loops run over the ~20 entries of the resonance table.
Resonance widths and overlap are :mod:`archsys.physics.resonance_overlap`, chains and three-body
relations :mod:`archsys.physics.mmr_chains`, gap complexity :mod:`archsys.physics.gap_complexity`.

Conventions
-----------
* A resonance is written ``j:(j-k)`` with order ``k``; its nominal period
  ratio is ``j / (j - k)``.  First order: 2:1, 3:2, ...; second: 3:1, 5:3, ...
* The fractional offset from resonance follows Lithwick, Xie & Wu (2012):
  ``Delta = ratio / (j / (j - k)) - 1``, positive = wide of (outside) the
  resonance.  For first order this is their ``(P'/P)(j-1)/j - 1``.
* "Nearest" is measured as ``|log(ratio) - log(j/(j-k))|``, symmetric in the
  sense that ``r`` and ``1/r`` times a resonance are equally far.
"""
from math import gcd

import numpy as np

__all__ = ["MMR_MAX_ORDER", "MMR_J_MAX", "build_mmr_table", "MMR_TABLE", "mmr_label", "period_ratios",
           "nearest_mmr"]

# ---------------------------------------------------------------------------
# Resonance table
# ---------------------------------------------------------------------------

#: Highest order in the default table (first, second and third order).
MMR_MAX_ORDER = 3
#: Largest ``j`` in the default table, for every order.  With j <= 11 the
#: first-order entries run 2:1 ... 11:10 (ratio 1.10); higher orders stop at
#: 11:9 (k = 2) and 11:8 (k = 3).  Still higher j crowd towards ratio 1, where
#: adjacent first-order resonances overlap anyway (see :func:`archsys.physics.resonance_overlap.overlap_zone`).
MMR_J_MAX = 11
#: Two candidate resonances closer than this in |log ratio| count as a tie.
_TIE_TOL = 1e-12

_MMR_DTYPE = np.dtype([("j", np.int64), ("k", np.int64), ("ratio", np.float64)])


def build_mmr_table(max_order=MMR_MAX_ORDER, j_max=MMR_J_MAX):
    """Table of resonances ``j:(j-k)`` of order ``1 <= k <= max_order``.

    Parameters
    ----------
    max_order : int
        Highest order ``k`` to include.
    j_max : int
        Largest ``j`` (the larger integer of the ratio) to include.

    Returns
    -------
    table : structured ndarray, fields ``j``, ``k``, ``ratio``
        Read-only, sorted by order ``k`` and then by ``j`` (so 2:1, 3:2, ...,
        3:1, 5:3, ..., 4:1, 5:2, ...).  Ties in :func:`nearest_mmr` are broken
        by taking the earlier row, i.e. lower order first, then lower ``j``.

    Notes
    -----
    Only reduced fractions are kept (``gcd(j, j - k) = gcd(j, k) = 1``):
    4:2 or 6:3 is the 2:1 commensurability and 6:4 is 3:2, so they are not
    new order-k resonances (their strength is that of the reduced first-order
    resonance).  The ratios lie in (1, k + 1], so the default table spans
    1.10 (11:10) to 4 (4:1).
    """
    if max_order < 1 or j_max < 2:
        raise ValueError(f"need max_order >= 1 and j_max >= 2; got {max_order}, {j_max}")
    rows = [(j, k, j / (j - k))
            for k in range(1, max_order + 1)
            for j in range(k + 1, j_max + 1)
            if gcd(j, k) == 1]
    table = np.array(rows, dtype=_MMR_DTYPE)
    table.flags.writeable = False
    return table


#: Default resonance table (orders 1-3, j <= 11); see :func:`build_mmr_table`.
MMR_TABLE = build_mmr_table()


def mmr_label(j, k):
    """Text label ``"j:(j-k)"`` of a resonance, e.g. ``mmr_label(3, 1) == "3:2"``."""
    j, k = int(j), int(k)
    if not 1 <= k < j:
        raise ValueError(f"resonance needs 1 <= k < j; got j={j}, k={k}")
    return f"{j}:{j - k}"


# ---------------------------------------------------------------------------
# Ratios and nearest resonance
# ---------------------------------------------------------------------------

def period_ratios(periods):
    """Adjacent period ratios ``P_{i+1} / P_i`` along the last axis.

    Parameters
    ----------
    periods : array_like, shape (..., n_planets)
        Positive periods [day], sorted by period along the last axis.

    Returns
    -------
    ratios : ndarray, shape (..., n_planets - 1)
        All >= 1 when the input is sorted.
    """
    P = np.asarray(periods, dtype=float)  # (..., n_planets)
    if P.ndim == 0:
        raise ValueError("periods must have a planet axis (last axis); got a scalar")
    if np.any(P <= 0):
        raise ValueError("periods must be positive")
    return P[..., 1:] / P[..., :-1]  # (..., n_pairs)


def _table(max_order):
    return MMR_TABLE[MMR_TABLE["k"] <= max_order]


def _check_ratio(ratio):
    r = np.asarray(ratio, dtype=float)
    if np.any(r < 1):
        raise ValueError("period ratios must be >= 1 (outer over inner); sort the periods first")
    return r


def nearest_mmr(ratio, max_order=MMR_MAX_ORDER):
    """Nearest tabulated resonance to each period ratio.

    Parameters
    ----------
    ratio : array_like, shape (...)
        Period ratios ``P_outer / P_inner >= 1``.
    max_order : int
        Use only resonances of order ``k <= max_order`` from :data:`MMR_TABLE`.

    Returns
    -------
    j, k : ndarray of int, shape (...)
        The resonance ``j:(j-k)``.
    offset : ndarray, shape (...)
        ``Delta = ratio / (j/(j-k)) - 1`` (positive = wide of resonance).

    Notes
    -----
    Distance is ``|log ratio - log(j/(j-k))|``.  Distances equal to within
    1e-12 are ties, resolved by the table order: lower order first, then
    lower ``j``.  Ratios beyond the table (> 4) return the largest entry with a
    large offset; callers should look at ``offset``.

    References
    ----------
    .. [1] Lithwick, Y., Xie, J. & Wu, Y. 2012, ApJ 761, 122 (Delta convention)
    """
    r = _check_ratio(ratio)  # (...)
    tab = _table(max_order)
    dist = np.abs(np.log(r)[..., None] - np.log(tab["ratio"]))  # (..., n_res)
    is_min = dist <= dist.min(axis=-1, keepdims=True) + _TIE_TOL
    idx = np.argmax(is_min, axis=-1)  # first (lowest order) of the tied minima
    offset = r / tab["ratio"][idx] - 1.0
    return tab["j"][idx], tab["k"][idx], offset


