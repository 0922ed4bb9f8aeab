"""Period-ratio spacing: mean-motion resonances, overlap, gap complexity.

Float kernels in the internal units (periods in days; masses as ratios to the
stellar mass, so they are dimensionless).  Every function broadcasts over
leading "draw" axes; the last axis runs over the planets of one system, sorted
by period, e.g. ``periods`` shaped ``(n_draws, n_planets)`` and period ratios
shaped ``(n_draws, n_pairs)`` with ``n_pairs = n_planets - 1``.  No function
loops over draws; the only Python loops run over the ~20 entries of the
resonance table, over the handful of adjacent pairs, or inside the cached
one-off normalisation :func:`c_max`.

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
from functools import lru_cache
from math import gcd

import numpy as np

# ---------------------------------------------------------------------------
# Resonance table
# ---------------------------------------------------------------------------

#: Highest order in the default table (first, second and third order).
MMR_MAX_ORDER = 3
#: Largest ``j`` in the default table, for every order.  With j <= 11 the
#: first-order entries run 2:1 ... 11:10 (ratio 1.10); higher orders stop at
#: 11:9 (k = 2) and 11:8 (k = 3).  Still higher j crowd towards ratio 1, where
#: adjacent first-order resonances overlap anyway (see :func:`overlap_zone`).
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


# ---------------------------------------------------------------------------
# Resonance widths and the near-resonance flag
# ---------------------------------------------------------------------------

#: Deck, Payne & Holman 2013 first-order overlap coefficient:
#: overlap for 1 - alpha < 1.46 eps^(2/7) (coefficient from memory).
DECK2013_COEFF = 1.46
#: Wisdom 1980 test-particle overlap coefficient: Delta a / a < 1.3 mu^(2/7)
#: (from memory; Duncan, Quinn & Tremaine 1989 refit 1.5).
WISDOM1980_COEFF = 1.3
#: Coefficient W of the first-order half-width W j^(1/3) mu^(2/3) (fractional,
#: in period ratio).  Derived, not quoted: with this W, the half-widths of
#: neighbouring first-order resonances j:(j-1) and (j+1):j add up to their
#: separation ~1/j^2 exactly at the Deck et al. (2013) overlap boundary,
#: ratio - 1 = (3/2) * 1.46 eps^(2/7), in the large-j limit.  W = 3.11.
RES_WIDTH_COEFF = 0.5 * (1.5 * DECK2013_COEFF) ** (7.0 / 3.0)
#: A pair is "near" resonance when |Delta| is below this many half-widths.
#: 3 is a choice: it reaches the observed Kepler near-resonant peak 1-2 %
#: wide of first-order resonances (Fabrycky et al. 2014; Lithwick & Wu 2012)
#: for Neptune-mass pairs around a Sun-like star (window ~2.6 % at 2:1 and
#: ~3 % at 3:2 for mu = 1e-4), but only ~0.4 % for Earth-mass pairs.
NEAR_WINDOW_MULTIPLE = 3.0


def resonance_width(j, k, mu_sum, e=0.0):
    """Order-of-magnitude fractional half-width of a resonance, in period ratio.

    Parameters
    ----------
    j, k : int or array_like of int
        Resonance ``j:(j-k)`` of order ``k``.
    mu_sum : array_like
        ``(m1 + m2) / M_star`` of the pair.
    e : array_like, optional
        A representative eccentricity of the pair (e.g. the larger one or an
        rms value); default 0 (circular).

    Returns
    -------
    delta_w : ndarray
        Fractional half-width ``|ratio / ratio_res - 1|`` of the resonance.

    Notes
    -----
    First order (k = 1), with ``W =`` :data:`RES_WIDTH_COEFF` ``= 3.11``:

    .. math:: \\delta_w = W \\max\\left[ (\\mu^2 j)^{1/3}, (\\mu j e)^{1/2} \\right]

    The first branch is the near-circular width ``W j^{1/3} mu^{2/3}``, where
    the pendulum picture fails and the width saturates; the second is the
    pendulum width ``sqrt(mu e)`` with the first-order disturbing-function
    coefficient taken ~ j (Murray & Dermott 1999, ch. 8).  The two branches
    meet at ``e = (mu / j)^(1/3)``.  The ``j^(1/3)`` factor is what makes
    first-order widths overlap at ``ratio - 1 ~ mu^(2/7)`` (Wisdom 1980;
    Deck et al. 2013), and W is fixed by matching that boundary (see
    :data:`RES_WIDTH_COEFF`).

    Orders k >= 2: the standard pendulum scaling ``W sqrt(mu e^k)``, with the
    same W and no j dependence.  This is an order-of-magnitude estimate
    (common practice); the true coefficients depend on j and k through the
    disturbing function.  It vanishes for circular orbits.

    References
    ----------
    .. [1] Murray, C. D. & Dermott, S. F. 1999, Solar System Dynamics, ch. 8
    .. [2] Deck, K. M., Payne, M. & Holman, M. J. 2013, ApJ 774, 129
    .. [3] Wisdom, J. 1980, AJ 85, 1122
    """
    j = np.asarray(j, dtype=float)
    k = np.asarray(k, dtype=float)
    mu = np.asarray(mu_sum, dtype=float)
    e = np.asarray(e, dtype=float)
    if np.any(mu < 0) or np.any(e < 0) or np.any(e >= 1):
        raise ValueError("need mu_sum >= 0 and eccentricity in [0, 1)")
    first = RES_WIDTH_COEFF * np.maximum(np.cbrt(mu**2 * j), np.sqrt(mu * j * e))
    higher = RES_WIDTH_COEFF * np.sqrt(mu * e**k)
    return np.where(k == 1, first, higher)


def near_resonance(ratio, mu_sum, e_pair=0.0, max_order=1,
                   window_multiple=NEAR_WINDOW_MULTIPLE):
    """Flag period ratios near (not necessarily in) a mean-motion resonance.

    Parameters
    ----------
    ratio : array_like, shape (...)
        Period ratios ``>= 1``.
    mu_sum : array_like, broadcastable to ``ratio``
        ``(m1 + m2) / M_star`` of each pair.
    e_pair : array_like, optional
        Representative eccentricity of each pair, see :func:`resonance_width`.
    max_order : int
        Consider resonances of order ``k <= max_order`` (default: first order).
    window_multiple : float
        Window in units of the half-width (default :data:`NEAR_WINDOW_MULTIPLE`).

    Returns
    -------
    flag : ndarray of bool, shape (...)
        True where ``|Delta| < window_multiple * resonance_width(j, k, mu, e)``
        for any tabulated resonance with ``k <= max_order``.

    Notes
    -----
    The flag means *near* resonance.  The observed Kepler pairs piled up 1-2 %
    wide of 2:1 and 3:2 are mostly wider than the libration width, so the
    window is a named multiple (3) of the width scale rather than the width
    itself.  Libration (being *in* resonance) needs the resonant angles and
    cannot be decided from the period ratio alone.  With e = 0, second- and
    third-order resonances have zero width and are never flagged.
    """
    r = _check_ratio(ratio)
    r, mu, e = np.broadcast_arrays(r, np.asarray(mu_sum, float), np.asarray(e_pair, float))
    flag = np.zeros(r.shape, dtype=bool)
    for j, k, ratio_res in _table(max_order):  # ~10-20 table rows, not draws
        window = window_multiple * resonance_width(j, k, mu, e)
        flag |= np.abs(r / ratio_res - 1.0) < window
    return flag


# ---------------------------------------------------------------------------
# Resonant chains
# ---------------------------------------------------------------------------

def resonant_chains(flags, min_pairs=2):
    """Runs of consecutive near-resonant adjacent pairs in one system.

    Parameters
    ----------
    flags : array_like of bool, shape (n_pairs,)
        Near-resonance flag of each adjacent pair of one system (one draw).
    min_pairs : int
        Minimum run length counted as a chain (default 2, i.e. >= 3 planets).

    Returns
    -------
    chains : list of (start, stop)
        Pair-index ranges ``range(start, stop)``; the chain links planets
        ``start`` to ``stop`` (inclusive).
    """
    f = np.asarray(flags, dtype=bool)
    if f.ndim != 1:
        raise ValueError(f"resonant_chains takes one system, shape (n_pairs,); got {f.shape}; "
                         "use chain_length_max for many draws")
    edges = np.diff(np.concatenate([[0], f.astype(np.int8), [0]]))
    starts = np.flatnonzero(edges == 1)
    stops = np.flatnonzero(edges == -1)
    return [(int(a), int(b)) for a, b in zip(starts, stops) if b - a >= min_pairs]


def chain_length_max(flags):
    """Longest run of consecutive True along the last (pair) axis.

    Parameters
    ----------
    flags : array_like of bool, shape (..., n_pairs)

    Returns
    -------
    length : ndarray of int, shape (...)
        Number of pairs in the longest run (0 if none); a run of L pairs links
        L + 1 planets.  A chain in the sense of :func:`resonant_chains` has
        ``length >= 2``.
    """
    f = np.asarray(flags, dtype=bool)  # (..., n_pairs)
    run = np.zeros(f.shape[:-1], dtype=np.int64)
    best = np.zeros(f.shape[:-1], dtype=np.int64)
    for i in range(f.shape[-1]):  # loop over the few pairs, vectorised over draws
        run = np.where(f[..., i], run + 1, 0)
        best = np.maximum(best, run)
    return best


# ---------------------------------------------------------------------------
# First-order resonance overlap
# ---------------------------------------------------------------------------

def overlap_zone(mu1, mu2, criterion="deck2013"):
    """Critical period ratio below which first-order resonances overlap.

    Parameters
    ----------
    mu1, mu2 : array_like
        Planet-to-star mass ratios of the pair.
    criterion : {"deck2013", "wisdom1980"}
        ``"deck2013"``: two massive planets on near-circular orbits,
        ``1 - alpha < 1.46 eps^(2/7)``, ``eps = mu1 + mu2``.
        ``"wisdom1980"``: test-particle criterion ``Delta a / a < 1.3 mu^(2/7)``,
        applied with ``mu = mu1 + mu2`` (the perturber's mass ratio when the
        other body is a test particle).

    Returns
    -------
    ratio_crit : ndarray
        ``P_outer / P_inner = alpha_crit^(-3/2)``; pairs closer than this are
        in the overlap (chaotic) zone.

    Notes
    -----
    Wisdom's ``Delta a / a`` is taken as ``(a2 - a1) / a2 = 1 - alpha`` so that
    both criteria share one form; other readings differ at second order in
    ``Delta a / a``, below the accuracy of either criterion.  Both coefficients
    are from memory.  Deck et al. (2013) state that at lowest order the
    boundary does not depend on ``mu1 / mu2``.

    References
    ----------
    .. [1] Wisdom, J. 1980, AJ 85, 1122
    .. [2] Deck, K. M., Payne, M. & Holman, M. J. 2013, ApJ 774, 129
    """
    coeffs = {"deck2013": DECK2013_COEFF, "wisdom1980": WISDOM1980_COEFF}
    if criterion not in coeffs:
        raise ValueError(f"criterion must be one of {sorted(coeffs)}; got {criterion!r}")
    eps = np.asarray(mu1, dtype=float) + np.asarray(mu2, dtype=float)
    if np.any(eps < 0):
        raise ValueError("mass ratios must be non-negative")
    one_minus_alpha = coeffs[criterion] * eps ** (2.0 / 7.0)
    alpha = np.clip(1.0 - one_minus_alpha, 0.0, None)
    with np.errstate(divide="ignore"):
        return alpha ** -1.5


def in_overlap_zone(ratio, mu1, mu2, criterion="deck2013"):
    """True where a period ratio lies inside the first-order overlap zone."""
    return _check_ratio(ratio) < overlap_zone(mu1, mu2, criterion)


# ---------------------------------------------------------------------------
# Gap complexity (Gilbert & Fabrycky 2020) and spacing uniformity
# ---------------------------------------------------------------------------

def _sorted_periods(periods):
    P = np.asarray(periods, dtype=float)
    if P.ndim == 0:
        raise ValueError("periods must have a planet axis (last axis); got a scalar")
    return np.sort(P, axis=-1)


def _lmc(p):
    """LMC complexity H * D of distributions p along the last axis (natural log)."""
    n = p.shape[-1]
    plogp = np.where(p > 0, p * np.log(np.where(p > 0, p, 1.0)), 0.0)
    H = -plogp.sum(axis=-1)  # Shannon entropy
    D = ((p - 1.0 / n) ** 2).sum(axis=-1)  # disequilibrium
    return H * D


def _family(x, n):
    """Distributions (x, (1-x)/(n-1), ..., (1-x)/(n-1)), shape (len(x), n)."""
    x = np.atleast_1d(x)[:, None]
    return np.concatenate([x, np.repeat((1.0 - x) / (n - 1), n - 1, axis=1)], axis=1)


@lru_cache(maxsize=None)
def _lmc_max(n):
    # One component x, the other n-1 equal: the maximum of the LMC complexity
    # lies on this family (Anteneodo & Plastino 1996, from memory; checked in
    # the tests against unrestricted maximisation).  Dense grid, then
    # golden-section refinement of the best bracket.
    x = np.linspace(0.0, 1.0, 20001)
    i = int(np.argmax(_lmc(_family(x, n))))
    lo, hi = x[max(i - 1, 0)], x[min(i + 1, x.size - 1)]
    g = (np.sqrt(5.0) - 1.0) / 2.0
    for _ in range(80):
        a, b = hi - g * (hi - lo), lo + g * (hi - lo)
        if _lmc(_family(a, n))[0] > _lmc(_family(b, n))[0]:
            hi = b
        else:
            lo = a
    xbest = 0.5 * (lo + hi)
    return float(_lmc(_family(xbest, n))[0]), xbest


def c_max(n):
    """Maximum LMC complexity C_max(n) over distributions of n gaps (cached).

    Computed numerically; values for n = 2..10 are 0.1060, 0.2123, 0.2906,
    0.3503, 0.3977, 0.4366, 0.4693, 0.4974, 0.5220.  Gilbert & Fabrycky (2020)
    tabulate 0.106 ... 0.497 (agreeing to 1e-3, recalled from memory) and 0.520
    for n = 10, which this computation does not reproduce (0.522).
    """
    n = int(n)
    if n < 2:
        raise ValueError(f"c_max needs n >= 2 gaps; got {n}")
    return _lmc_max(n)[0]


def lmc_maximiser(n):
    """Normalised gap distribution p* of n gaps with maximal complexity.

    One large gap first, then n - 1 equal small gaps (any order gives the same
    complexity).
    """
    if int(n) < 2:
        raise ValueError(f"lmc_maximiser needs n >= 2 gaps; got {n}")
    x = _lmc_max(int(n))[1]
    p = _family(x, int(n))[0]
    return p if x >= 1.0 / n else p[::-1]


def gap_complexity(periods):
    """Gap complexity C of each system (Gilbert & Fabrycky 2020).

    Parameters
    ----------
    periods : array_like, shape (..., n_planets)
        Positive periods; sorted internally along the last axis.

    Returns
    -------
    C : ndarray, shape (...)
        In [0, 1]; 0 for equal spacing in log P, 1 for the maximally complex
        spacing.  NaN when ``n_planets < 3`` (a single gap carries no
        information about the pattern of gaps).

    Notes
    -----
    With ``n = N - 1`` gaps,

    .. math:: p_i^* = \\frac{\\log(P_{i+1}/P_i)}{\\log(P_{max}/P_{min})}, \\qquad
              C = -K \\left(\\sum_i p_i^* \\log p_i^*\\right)
                  \\left(\\sum_i (p_i^* - 1/n)^2\\right),

    natural logarithms, ``K = 1 / C_max(n)`` from :func:`c_max`.  Invariant
    under scaling all periods.

    References
    ----------
    .. [1] Gilbert, G. J. & Fabrycky, D. C. 2020, AJ 159, 281
    .. [2] Lopez-Ruiz, R., Mancini, H. L. & Calbet, X. 1995, Phys. Lett. A 209, 321
    """
    P = _sorted_periods(periods)  # (..., N)
    N = P.shape[-1]
    if N < 3:
        return np.full(P.shape[:-1], np.nan)
    logr = np.log(period_ratios(P))  # (..., n)
    p_star = logr / logr.sum(axis=-1, keepdims=True)  # sum of logs = log(Pmax/Pmin)
    return _lmc(p_star) / c_max(N - 1)


def spacing_uniformity(periods):
    """Coefficient of variation of the log period ratios within each system.

    Parameters
    ----------
    periods : array_like, shape (..., n_planets)
        Positive periods; sorted internally along the last axis.

    Returns
    -------
    cv : ndarray, shape (...)
        ``std(log r) / mean(log r)`` over the adjacent pairs (population
        standard deviation, ddof = 0).  0 for equal period ratios ("peas in a
        pod"-like regular spacing), larger for irregular spacing; NaN for
        fewer than 2 pairs (3 planets).  Invariant under scaling all periods.

    References
    ----------
    .. [1] Weiss, L. M. et al. 2018, AJ 155, 48 (correlated adjacent period ratios)
    """
    P = _sorted_periods(periods)  # (..., N)
    if P.shape[-1] < 3:
        return np.full(P.shape[:-1], np.nan)
    logr = np.log(period_ratios(P))  # (..., n_pairs)
    return logr.std(axis=-1) / logr.mean(axis=-1)


# ---------------------------------------------------------------------------
# Three-body (Laplace-type) relations
# ---------------------------------------------------------------------------

#: Largest integer coefficient searched for three-body relations p/P1 - (p+q)/P2 + q/P3 ~ 0.
LAPLACE_MAX_COEFF = 4
#: A three-body relation is reported when its residual frequency is below this fraction of the
#: middle planet's mean motion (a choice of this tool: 0.3 % of n2 holds the relations of the known
#: resonant chains, whose two-body offsets are ~1 %, and rejects most chance alignments).
LAPLACE_TOL = 3e-3


def laplace_relations(periods, max_coeff=LAPLACE_MAX_COEFF, tol=LAPLACE_TOL):
    """Three-body relations ``p/P1 - (p+q)/P2 + q/P3 ~ 0`` of consecutive triples in one system.

    Parameters
    ----------
    periods : array_like, shape (n_planets,)
        Periods of one system (e.g. posterior medians), sorted.
    max_coeff : int
        Largest p and q searched (1..max_coeff).
    tol : float
        Largest ``|p n1 - (p+q) n2 + q n3| / n2`` reported (n = 1/P).

    Returns
    -------
    list of dict
        One per triple that has a relation: ``planets`` (indices i, i+1, i+2), ``p``, ``q``,
        ``residual`` (fractional, signed) and ``coefficients`` ``(p, -(p+q), q)`` of the
        three-body angle ``p lam1 - (p+q) lam2 + q lam3``.  The smallest coefficients that
        satisfy the tolerance are taken (lowest ``p + q``, then smallest residual).

    Notes
    -----
    Such relations (e.g. the Laplace relation of the Galilean satellites, n1 - 3 n2 + 2 n3 = 0)
    make a slow three-body angle whose libration marks a resonant chain (Murray & Dermott 1999,
    ch. 8); whether it librates is read from the N-body integration.
    """
    P = np.asarray(periods, dtype=float)
    out = []
    for i in range(len(P) - 2):
        n1, n2, n3 = 1.0 / P[i], 1.0 / P[i + 1], 1.0 / P[i + 2]
        best = None
        for s in range(2, 2 * max_coeff + 1):
            for p in range(1, max_coeff + 1):
                q = s - p
                if not 1 <= q <= max_coeff or gcd(p, q) != 1:
                    continue
                r = (p * n1 - (p + q) * n2 + q * n3) / n2
                if np.isfinite(r) and abs(r) < tol and (best is None or abs(r) < abs(best[2])):
                    best = (p, q, float(r))
            if best is not None:
                break
        if best is not None:
            p, q, r = best
            out.append({"planets": (i, i + 1, i + 2), "p": p, "q": q, "residual": r,
                        "coefficients": (p, -(p + q), q)})
    return out
