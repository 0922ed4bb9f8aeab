"""Angular momentum deficit (AMD) and AMD stability.

Pure vectorised numpy kernels.  Internal units: masses in solar masses,
semi-major axes in au, angles in radians; Lambda carries GM_sun in
au^3/day^2, so AMD is in M_sun au^2/day (only ratios are used).

Shape convention: planet properties are arrays shaped ``(..., n_planets)``
with the planets sorted by semi-major axis along the last axis; ``m_star``
has the batch shape ``(...)`` (no planet axis) or is a scalar.

References
----------
.. [1] Laskar, J. 1997, A&A 317, L75 (AMD).
.. [2] Laskar, J. & Petit, A. C. 2017, A&A 605, A72 (AMD stability, C_c).
.. [3] Petit, A. C., Laskar, J. & Boue, G. 2017, A&A 607, A35 (MMR overlap).
"""
import numpy as np

from archsys.physics.constants import GM_SUN

__all__ = ["PLB17_R", "lambda_circ", "amd", "system_amd", "critical_amd", "mmr_overlap_g",
           "mmr_overlap_critical_amd", "pair_critical_amd", "amd_beta", "amd_stable"]

#: r in the Petit, Laskar & Boue (2017) MMR-overlap criterion.  From memory
#: ([Petit2017] in docs/references.md): consistent with the Deck et al. (2013) overlap
#: width 1.46 eps^(2/7), but not read from the paper.
PLB17_R = 0.80199

_BISECT_ITER = 64  # halves (0, 1) down to below 1e-19: machine precision in e0


def _one_minus_sqrt_one_minus(x2):
    """1 - sqrt(1 - x2) without cancellation for small x2."""
    return x2 / (1.0 + np.sqrt(1.0 - x2))


def _check(name, x, lo=None, hi=None, lo_open=False):
    x = np.asarray(x, dtype=float)
    ok = np.isfinite(x)
    if lo is not None:
        ok &= (x > lo) if lo_open else (x >= lo)
    if hi is not None:
        ok &= x < hi
    if not np.all(ok):
        bound = f"{'(' if lo_open else '['}{lo}, {hi})"
        raise ValueError(f"{name} must be finite and in {bound}; got {x[~ok].flat[0]!r}")
    return x


def lambda_circ(m, a, m_star):
    """Circular angular momentum :math:`\\Lambda = m\\sqrt{G M_\\star a}`.

    Parameters
    ----------
    m, a, m_star : array_like
        Planet mass [M_sun], semi-major axis [au], stellar mass [M_sun];
        broadcast elementwise.

    Returns
    -------
    Lambda : ndarray, M_sun au^2 / day

    Notes
    -----
    Uses ``GM_SUN * m_star`` (IAU 2015 nominal); the units cancel in every
    ratio used for AMD stability (Laskar & Petit 2017).
    """
    m = _check("m", m, 0.0, np.inf, lo_open=True)
    a = _check("a", a, 0.0, np.inf, lo_open=True)
    m_star = _check("m_star", m_star, 0.0, np.inf, lo_open=True)
    return m * np.sqrt(GM_SUN * m_star * a)


def amd(m, a, e, inc, m_star):
    """AMD of each planet, :math:`\\Lambda_k (1 - \\sqrt{1 - e_k^2}\\cos i_k)`.

    Parameters
    ----------
    m, a, e, inc : array_like, shape (..., n_planets)
        Masses [M_sun], semi-major axes [au], eccentricities, inclinations
        [rad] measured from the invariable plane.
    m_star : array_like, shape (...)
        Stellar mass [M_sun].

    Returns
    -------
    amd_k : ndarray, shape (..., n_planets)
        Per-planet AMD; :func:`system_amd` gives the sum over planets.

    Notes
    -----
    Evaluated as :math:`\\Lambda[e^2/(1+\\sqrt{1-e^2}) + 2\\sqrt{1-e^2}\\sin^2(i/2)]`,
    algebraically identical but free of cancellation for small e and i.

    References
    ----------
    .. [1] Laskar 1997, A&A 317, L75; Laskar & Petit 2017, A&A 605, A72.
    """
    e = _check("e", e, 0.0, 1.0)
    inc = _check("inc", inc)
    m_star = np.asarray(m_star, dtype=float)
    if m_star.ndim > 0 and m_star.ndim >= max(np.ndim(m), np.ndim(a), e.ndim, inc.ndim):
        raise ValueError(f"m_star must have the batch shape (...) without the planet axis; "
                         f"got shape {m_star.shape}")
    m_star = m_star[..., None]
    lam = lambda_circ(m, a, m_star)
    sqrt_1me2 = np.sqrt(1.0 - e**2)
    return lam * (_one_minus_sqrt_one_minus(e**2) + 2.0 * sqrt_1me2 * np.sin(0.5 * inc) ** 2)


def system_amd(m, a, e, inc, m_star):
    """Total AMD of each system: :func:`amd` summed over the last (planet) axis."""
    return amd(m, a, e, inc, m_star).sum(axis=-1)



def _collision_root(alpha, gamma):
    """Root in (0, 1) of F (see :func:`critical_amd`), element by element.

    Safeguarded Newton (F' = alpha + gamma alpha / D^{3/2} > 0): each element
    keeps a bracket [lo, hi] with F(lo) < 0 < F(hi); a Newton step that leaves
    the bracket is replaced by bisection.  An element stops as soon as its own
    step falls below 4 ulp of 1, and converged elements are never touched
    again, so each result depends on that element's inputs only (the same
    bytes whether it is solved alone or in a batch of other systems).  About 5
    iterations instead of 64 bisections; common practice (Press et al. 2007,
    Numerical Recipes section 9.4, "rtsafe").
    """
    shape = alpha.shape
    a = np.array(alpha, dtype=float).ravel()
    g = np.array(gamma, dtype=float).ravel()
    lo = np.zeros(a.shape)
    hi = np.ones(a.shape)
    # start from the small-e root of F (alpha e + gamma e / sqrt(alpha) = 1 - alpha): about 5 steps, not 7
    e = np.clip((1.0 - a) / (a + g / np.sqrt(a)), 1e-3, 0.999)
    idx = np.arange(a.size)
    tol = 4.0 * np.finfo(float).eps
    for _ in range(_BISECT_ITER):
        if idx.size == 0:
            break
        ai, gi, ei = a[idx], g[idx], e[idx]
        d = ai * (1.0 - ei * ei) + gi * gi * ei * ei
        sd = np.sqrt(d)
        f = ai * ei + gi * ei / sd - 1.0 + ai
        fp = ai + gi * ai / (d * sd)
        above = f > 0.0
        lo_i = np.where(above, lo[idx], ei)
        hi_i = np.where(above, ei, hi[idx])
        new = ei - f / fp
        bad = ~((new > lo_i) & (new < hi_i))
        new = np.where(bad, 0.5 * (lo_i + hi_i), new)
        new = np.where(f == 0.0, ei, new)                 # an exact root stays
        lo[idx], hi[idx], e[idx] = lo_i, hi_i, new
        done = (np.abs(new - ei) <= tol) | (hi_i - lo_i <= tol)
        idx = idx[~done]
    return e.reshape(shape)

def critical_amd(alpha, gamma):
    """Critical relative AMD :math:`C_c(\\alpha, \\gamma)` of a pair (Laskar & Petit 2017).

    Parameters
    ----------
    alpha : array_like
        Semi-major-axis ratio :math:`a/a' \\in (0, 1)` (inner over outer).
    gamma : array_like
        Mass ratio :math:`m/m' > 0` (inner over outer).

    Returns
    -------
    C_c : ndarray
        Minimum of the pair AMD divided by :math:`\\Lambda'` on the collision
        line :math:`\\alpha e + e' = 1 - \\alpha` (coplanar orbits).

    Notes
    -----
    :math:`e_0` solves

    .. math:: F(e) = \\alpha e + \\frac{\\gamma e}{\\sqrt{\\alpha(1-e^2) + \\gamma^2 e^2}}
              - 1 + \\alpha = 0,

    :math:`e_0' = 1 - \\alpha - \\alpha e_0`, and

    .. math:: C_c = \\gamma\\sqrt{\\alpha}\\,(1 - \\sqrt{1 - e_0^2}) + 1 - \\sqrt{1 - e_0'^2}.

    :math:`F` rises strictly on (0, 1) (:math:`F' = \\alpha + \\gamma\\alpha/D^{3/2}`),
    from :math:`\\alpha - 1 < 0` to :math:`2\\alpha > 0`, so the root is unique;
    it is found by bracketed Newton iterations over the whole array at once
    (:func:`_collision_root`).
    Formula from memory ([LaskarPetit2017]), re-derived (docs/references.md) as the
    Lagrange-multiplier minimum of the pair AMD on the collision line.

    References
    ----------
    .. [1] Laskar, J. & Petit, A. C. 2017, A&A 605, A72.
    """
    alpha = _check("alpha", alpha, 0.0, 1.0, lo_open=True)
    gamma = _check("gamma", gamma, 0.0, np.inf, lo_open=True)
    alpha, gamma = np.broadcast_arrays(alpha, gamma)

    e0 = _collision_root(alpha, gamma)
    e0p = 1.0 - alpha - alpha * e0
    return (gamma * np.sqrt(alpha) * _one_minus_sqrt_one_minus(e0**2)
            + _one_minus_sqrt_one_minus(e0p**2))


def mmr_overlap_g(alpha, eps):
    """Auxiliary g of the Petit, Laskar & Boue (2017) MMR-overlap criterion.

    .. math:: g = \\frac{3^4 (1-\\alpha)^5}{2^9 r \\varepsilon}
              - \\frac{32 r \\varepsilon}{9 (1-\\alpha)^2},\\quad r = 0.80199

    ``g <= 0`` means first-order MMRs overlap already for circular orbits;
    g = 0 at :math:`1 - \\alpha = (16384 r^2/729)^{1/7}\\varepsilon^{2/7}
    \\approx 1.465\\,\\varepsilon^{2/7}`.  From memory ([Petit2017]).
    """
    alpha = _check("alpha", alpha, 0.0, 1.0, lo_open=True)
    eps = _check("eps", eps, 0.0, np.inf, lo_open=True)
    x = 1.0 - alpha
    return 3.0**4 * x**5 / (2.0**9 * PLB17_R * eps) - 32.0 * PLB17_R * eps / (9.0 * x**2)


def mmr_overlap_critical_amd(alpha, gamma, eps):
    """Critical relative AMD for first-order MMR overlap (Petit, Laskar & Boue 2017).

    Parameters
    ----------
    alpha, gamma : array_like
        As in :func:`critical_amd`.
    eps : array_like
        :math:`\\varepsilon = (m + m')/M_\\star`.

    Returns
    -------
    C_MMR : ndarray
        :math:`g^2\\gamma\\sqrt{\\alpha}/(2 + 2\\gamma\\sqrt{\\alpha})` where
        :math:`g > 0`, and 0 where :math:`g \\le 0` (no AMD is allowed: the pair
        is unstable).  See :func:`mmr_overlap_g`.  Formula from memory.
    """
    gamma = _check("gamma", gamma, 0.0, np.inf, lo_open=True)
    g = mmr_overlap_g(alpha, eps)
    gsa = gamma * np.sqrt(np.asarray(alpha, float))
    return np.where(g > 0.0, g**2 * gsa / (2.0 + 2.0 * gsa), 0.0)


def pair_critical_amd(alpha, gamma, eps):
    """Critical relative AMD of a pair including the MMR-overlap correction.

    Rule used: :math:`\\min(C_c, C_{MMR})` -- the MMR-overlap value replaces
    the collision value wherever it is the more restrictive of the two
    (Petit, Laskar & Boue 2017; our reading from memory).  For
    :math:`\\varepsilon \\lesssim 10^{-3}` this happens only for close pairs
    (near the overlap width :math:`1-\\alpha \\approx 1.465\\varepsilon^{2/7}`),
    because :math:`C_{MMR}` grows as :math:`(1-\\alpha)^{10}/\\varepsilon^2`.
    """
    return np.minimum(critical_amd(alpha, gamma), mmr_overlap_critical_amd(alpha, gamma, eps))


def amd_beta(m, a, e, inc, m_star, mmr=True):
    """AMD-stability coefficients of each adjacent pair and of the innermost planet.

    Parameters
    ----------
    m, a, e, inc : array_like, shape (..., n_planets)
        Masses [M_sun], semi-major axes [au] (strictly increasing along the
        last axis), eccentricities, inclinations [rad] from the invariable plane.
    m_star : array_like, shape (...)
        Stellar mass [M_sun].
    mmr : bool
        Use :func:`pair_critical_amd` (with the Petit, Laskar & Boue 2017
        MMR-overlap correction) instead of the plain Laskar & Petit (2017)
        :func:`critical_amd`.

    Returns
    -------
    beta : ndarray, shape (..., n_planets - 1)
        :math:`\\beta = C / (\\Lambda' C_{crit}(\\alpha, \\gamma))` per adjacent
        pair, with C the *total* AMD of the system and :math:`\\Lambda'` that of
        the outer planet of the pair; ``inf`` where the critical AMD is 0.
    beta_star : ndarray, shape (...)
        :math:`C/\\Lambda_1`: collision of the innermost planet with the star
        needs :math:`e_1 = 1`, i.e. an AMD of :math:`\\Lambda_1`.

    Notes
    -----
    A system is AMD-stable if every ``beta < 1`` and ``beta_star < 1``: then
    no collision can occur in the secular (averaged) dynamics, because the
    AMD is conserved there.  Definitions from memory ([LaskarPetit2017]).

    References
    ----------
    .. [1] Laskar & Petit 2017, A&A 605, A72; Petit, Laskar & Boue 2017,
           A&A 607, A35.
    """
    m, a, e, inc = np.broadcast_arrays(*(np.asarray(x, float) for x in (m, a, e, inc)))
    if m.ndim == 0 or m.shape[-1] < 1:
        raise ValueError("planet arrays need a last (planet) axis with at least one planet")
    if np.any(np.diff(a, axis=-1) <= 0.0):
        raise ValueError("semi-major axes must be strictly increasing along the last axis")
    m_star = np.asarray(m_star, dtype=float)
    c_tot = system_amd(m, a, e, inc, m_star)                       # (...)
    lam = lambda_circ(m, a, m_star[..., None])                      # (..., n)
    beta_star = c_tot / lam[..., 0]
    alpha = a[..., :-1] / a[..., 1:]                                # (..., n-1)
    gamma = m[..., :-1] / m[..., 1:]
    if mmr:
        eps = (m[..., :-1] + m[..., 1:]) / m_star[..., None]
        c_crit = pair_critical_amd(alpha, gamma, eps)
    else:
        c_crit = critical_amd(alpha, gamma)
    denom = lam[..., 1:] * c_crit
    with np.errstate(divide="ignore", invalid="ignore"):
        beta = np.where(denom > 0.0, c_tot[..., None] / denom, np.inf)
    return beta, beta_star


def amd_stable(m, a, e, inc, m_star, mmr=True):
    """AMD stability per pair and per system (Laskar & Petit 2017).

    Returns
    -------
    pair_stable : ndarray of bool, shape (..., n_planets - 1)
        ``beta < 1`` for each adjacent pair.
    system_stable : ndarray of bool, shape (...)
        All pairs stable and ``beta_star < 1``.

    See :func:`amd_beta` for the parameters.
    """
    beta, beta_star = amd_beta(m, a, e, inc, m_star, mmr=mmr)
    pair_stable = beta < 1.0
    return pair_stable, np.all(pair_stable, axis=-1) & (beta_star < 1.0)
