"""Conditional transit probability given the architecture's orientation posterior.

A planet that is not known to transit (an RV-only planet, or one whose
``transiting`` flag is unset) transits when its impact parameter satisfies
:math:`|b| < 1 + R_p/R_\\star`, i.e. when

.. math:: |\\cos i| < c_{max} = (1 + R_p/R_\\star)\\,(R_\\star/a)\\,
          \\frac{1 + e\\sin\\omega}{1 - e^2}

(Winn 2010 eqs. 7 and 9).  Given the system's reference plane (inclination
:math:`I` to the sky) and the mutual-inclination dispersion :math:`\\sigma` of
one posterior draw, the orbit normal of a planet is tilted from the reference
normal by :math:`\\psi \\sim` Rayleigh(:math:`\\sigma`) at a uniform azimuth
:math:`\\phi` (the tool's hierarchical orientation model, truncated at
:math:`\\psi \\le \\pi`), so that

.. math:: \\cos i = \\cos I\\cos\\psi + \\sin I\\sin\\psi\\cos\\phi .

The azimuth integral is analytic (:func:`azimuth_fraction`); the tilt integral
is a Gauss-Legendre quadrature in the Rayleigh CDF, split where the transit
band starts and stops (:func:`tilt_kinks`), so a probability-against-period
curve has no Monte Carlo noise.

Internal units: au, R_sun, day, rad.  Every function broadcasts over posterior
draws; the quadrature adds one trailing axis internally and removes it.

References
----------
.. [1] Winn, J. N. 2010, "Transits and Occultations", in *Exoplanets*, ed. S. Seager (eqs. 7, 9).
.. [2] Fang, J. & Margot, J.-L. 2012, ApJ 761, 92 (Rayleigh mutual-inclination model).
"""
from __future__ import annotations

import numpy as np

from . import kepler, transit
from .constants import RSUN_AU

__all__ = ["transit_cos_limit", "transits", "azimuth_fraction", "tilt_kinks",
           "conditional_transit_probability", "isotropic_transit_probability",
           "hypothetical_planet_aor", "N_GAUSS"]

#: Gauss-Legendre nodes per segment of the tilt integral.  The segments are cut
#: at the tilts where the transit band starts or stops (kinks of the azimuth
#: fraction), and the nodes are clustered at both ends of each piece; with 24
#: nodes the relative error is ~1e-6 in the cases of tests/test_transit_odds.py
#: (measured against 96 nodes and the exact isotropic value).
N_GAUSS = 24
def transit_cos_limit(aor, ror=0.0, ecc=0.0, omega_rad=np.pi / 2):
    r"""Largest :math:`|\cos i|` that still transits, :math:`c_{max}` (Winn 2010 eq. 9), clipped to [0, 1].

    Equal to the isotropic (geometric) transit probability with grazing
    transits counted; this is :func:`archsys.physics.transit.transit_probability`.
    """
    return transit.transit_probability(aor, ror, ecc, omega_rad, grazing=True)


def transits(aor, inc_rad, ror=0.0, ecc=0.0, omega_rad=np.pi / 2):
    """Whether each draw transits: :math:`|b| < 1 + R_p/R_\\star` (Winn 2010 eq. 7), boolean array."""
    b = transit.impact_parameter(aor, inc_rad, ecc, omega_rad)
    return np.abs(b) < 1.0 + np.asarray(ror, dtype=float)


def azimuth_fraction(cos_ref, psi, c_max):
    r"""Fraction of azimuths for which a tilted orbit transits.

    Parameters
    ----------
    cos_ref : array_like
        :math:`\cos I`, inclination of the reference plane to the sky.
    psi : array_like
        Tilt of the orbit normal from the reference normal [rad].
    c_max : array_like
        Transit limit on :math:`|\cos i|` (:func:`transit_cos_limit`).

    Returns
    -------
    frac : ndarray
        Measure of :math:`\phi \in [0, 2\pi)` with
        :math:`|\cos I\cos\psi + \sin I\sin\psi\cos\phi| < c_{max}`, over :math:`2\pi`.

    Notes
    -----
    With :math:`A = \cos I\cos\psi`, :math:`B = \sin I\sin\psi`, the condition
    is :math:`(-c - A)/B < \cos\phi < (c - A)/B`, whose measure is
    :math:`2[\arccos(\ell) - \arccos(h)]` with the bounds clipped to [-1, 1]
    (spherical geometry, derived here).  For :math:`B = 0` the orbit is
    fixed and the fraction is 0 or 1.
    """
    cI = np.clip(np.asarray(cos_ref, dtype=float), -1.0, 1.0)
    return _fraction(cI, np.sqrt(1.0 - cI * cI), np.asarray(psi, dtype=float), np.asarray(c_max, dtype=float))


def _cdf(psi, sigma, kind):
    """Tilt CDF on [0, pi], normalised to 1 at pi."""
    if kind == "isotropic":
        return 0.5 * (1.0 - np.cos(psi))
    with np.errstate(over="ignore", under="ignore"):
        return np.expm1(-psi * psi / (2.0 * sigma * sigma)) / np.expm1(-np.pi ** 2 / (2.0 * sigma * sigma))


def _inverse_cdf(u, sigma, kind):
    if kind == "isotropic":
        return np.arccos(np.clip(1.0 - 2.0 * u, -1.0, 1.0))
    with np.errstate(over="ignore", under="ignore", divide="ignore"):
        f_pi = -np.expm1(-np.pi ** 2 / (2.0 * sigma * sigma))
        return np.minimum(sigma * np.sqrt(-2.0 * np.log1p(-np.minimum(u * f_pi, 1.0))), np.pi)


def tilt_kinks(ref_inc, c_max):
    r"""Tilts at which the transit band's azimuth fraction changes form, shape (..., 8).

    The fraction of :func:`azimuth_fraction` has kinks where
    :math:`\cos(I \pm \psi) = \pm c_{max}`, i.e. at
    :math:`\psi \in \{|I - \theta|, I + \theta, 2\pi - I - \theta\}` for
    :math:`\theta = \arccos(\pm c_{max})`; with the ends 0 and :math:`\pi`,
    all clipped to :math:`[0, \pi]` and sorted (derived here).
    """
    I = np.asarray(ref_inc, dtype=float)
    c = np.asarray(c_max, dtype=float)
    I, c = np.broadcast_arrays(I, c)
    t1 = np.arccos(np.clip(c, -1.0, 1.0))
    t2 = np.pi - t1
    cand = [np.zeros(I.shape), np.full(I.shape, np.pi)]
    for t in (t1, t2):
        cand += [np.abs(I - t), I + t, 2.0 * np.pi - I - t]
    return np.sort(np.clip(np.stack(cand, axis=-1), 0.0, np.pi), axis=-1)


def _check_kind(kind):
    if kind not in ("rayleigh", "isotropic"):
        raise ValueError(f"kind must be 'rayleigh' or 'isotropic'; got {kind!r}")


def conditional_transit_probability(aor, ref_inc, sigma, ror=0.0, ecc=0.0, omega_rad=np.pi / 2,
                                    n_gauss=N_GAUSS, kind="rayleigh"):
    r"""Transit probability of a planet given one draw of the reference plane and :math:`\sigma`.

    Parameters
    ----------
    aor : array_like
        :math:`a/R_\star` of the planet.
    ref_inc : array_like
        Inclination of the reference plane to the sky [rad].
    sigma : array_like
        Mutual-inclination dispersion [rad] (ignored for ``kind="isotropic"``).
    ror, ecc, omega_rad : array_like
        :math:`R_p/R_\star` (0: the planet's centre must cross the disc),
        eccentricity and argument of periastron [rad].
    n_gauss : int
        Gauss-Legendre nodes per segment (see :data:`N_GAUSS`).
    kind : {"rayleigh", "isotropic"}
        ``"rayleigh"``: tilts :math:`\psi \sim` Rayleigh(:math:`\sigma`)
        truncated at :math:`\pi` (the model of :mod:`archsys.inference.model`);
        ``"isotropic"``: orbit normals uniform on the sphere.

    Returns
    -------
    p : ndarray
        :math:`\int \mathrm{d}\psi\,p(\psi|\sigma)\,\mathrm{frac}(\psi)`, broadcast
        shape of the inputs.  The posterior predictive probability is its mean
        over the draws.

    Notes
    -----
    The tilt integral is taken in the CDF variable :math:`u = F(\psi)` (so the
    weight is uniform however small :math:`\sigma` is), split at the kinks of
    :func:`tilt_kinks`, with Gauss-Legendre nodes on each piece.  Only pieces on
    which the azimuth fraction varies are evaluated node by node: pieces of zero
    width add nothing and those where it is exactly 0 or 1 add 0 or their width
    (the same quadrature as evaluating every node, to rounding:
    tests/test_transit_odds.py).  Each element's value depends on its own inputs
    only (batch invariance).

    Limits (tested): :math:`\sigma \to 0` gives the indicator
    :math:`|b_{ref}| < 1 + R_p/R_\star` with :math:`b_{ref}` the impact
    parameter of an orbit in the reference plane; an isotropic reference plane
    (or ``kind="isotropic"``) gives :func:`isotropic_transit_probability`.
    """
    _check_kind(kind)
    c = transit_cos_limit(aor, ror, ecc, omega_rad)
    I, c, sig = np.broadcast_arrays(np.asarray(ref_inc, dtype=float), c, np.asarray(sigma, dtype=float))
    if kind == "rayleigh" and np.any(~np.isfinite(sig) | (sig <= 0)):
        raise ValueError("sigma must be positive and finite")
    shape = I.shape
    I, c, sig = (np.ravel(v) for v in (I, c, sig))                    # (N,)
    kinks = tilt_kinks(I, c)                                            # (N, 8)
    u_edges = _cdf(kinks, sig[:, None], kind)
    width = u_edges[:, 1:] - u_edges[:, :-1]                            # (N, 7)
    part = np.zeros(width.shape)
    # Pieces of zero width in u (kinks clipped to 0 or pi, or beyond the Rayleigh's reach, where
    # F(psi) is 1 to double precision) add exactly nothing.  Between two kinks the azimuth
    # fraction is either one expression or exactly 0 or exactly 1 (tilt_kinks), so the fraction
    # at the piece's middle tilt says which: 0 adds nothing, 1 adds the width times the sum of
    # the weights, and only the other pieces need the nodes.
    rows, segs = np.nonzero(width != 0)                                 # NaN widths stay (NaN result)
    cI = np.clip(np.cos(I), -1.0, 1.0)
    sI = np.sqrt(1.0 - cI * cI)
    mid = 0.5 * (kinks[rows, segs] + kinks[rows, segs + 1])
    f_mid, lo_mid, hi_mid = _fraction(cI[rows], sI[rows], mid, c[rows], bounds=True)
    x, w = np.polynomial.legendre.leggauss(n_gauss)                     # on [-1, 1]
    # u = ua + (ub - ua)(1 - cos t)/2 clusters the nodes at both ends of each piece,
    # which removes the square-root behaviour of the fraction at the kinks
    t = 0.5 * np.pi * (x + 1.0)                                         # (n_gauss,) in (0, pi)
    wt = 0.5 * np.pi * w * 0.5 * np.sin(t)                              # du/(ub - ua) weights
    omc = 1.0 - np.cos(t)
    full = f_mid == 1.0
    part[rows[full], segs[full]] = width[rows[full], segs[full]] * _ordered_sum(np.ones((n_gauss, 1)), wt)[0]
    # on the other pieces one bound of cos(phi) may stay clipped throughout (arccos(-1) = pi,
    # arccos(1) = 0): only the other one is evaluated at the nodes
    todo = ~((f_mid == 0.0) | full)
    for lo_side, hi_side in ((False, True), (True, False), (True, True)):
        sel = todo & (~(lo_mid <= -1.0) == lo_side) & (~(hi_mid >= 1.0) == hi_side)     # NaN: both
        r_all, s_all = rows[sel], segs[sel]
        for k in range(0, r_all.size, _CHUNK):
            r, s = r_all[k:k + _CHUNK], s_all[k:k + _CHUNK]
            ua, hw = u_edges[r, s], width[r, s] * 0.5
            u = ua + hw * omc[:, None]                                  # (n_gauss, chunk)
            sg = sig[r]
            if kind == "rayleigh":
                with np.errstate(over="ignore", under="ignore", divide="ignore"):
                    psi = _rayleigh_tilt(u, sg)
            else:
                psi = _inverse_cdf(u, sg, kind)
            frac = _node_fraction(cI[r], sI[r], psi, c[r], lo_side, hi_side)
            part[r, s] = width[r, s] * _ordered_sum(frac, wt)
    return np.sum(part, axis=-1).reshape(shape)


#: Pieces of the tilt integral evaluated together (node arrays of n_gauss x _CHUNK stay in cache).
_CHUNK = 2048


def _ordered_sum(frac, wt):
    """sum_k wt[k] * frac[k] over the first axis, in node order (the same rounding for every element)."""
    acc = frac[0] * wt[0]
    for k in range(1, len(wt)):
        acc += frac[k] * wt[k]
    return acc


def _rayleigh_tilt(u, sigma):
    """:func:`_inverse_cdf` (Rayleigh) of the nodes ``u`` (n_gauss, k) for ``sigma`` (k,), in place
    where it can be (the same operations, so the same numbers); ``u`` is overwritten."""
    f_pi = -np.expm1(-np.pi ** 2 / (2.0 * sigma * sigma))
    t = np.multiply(u, f_pi, out=u)
    np.minimum(t, 1.0, out=t)
    np.negative(t, out=t)
    np.log1p(t, out=t)
    t *= -2.0
    np.sqrt(t, out=t)
    t *= sigma
    return np.minimum(t, np.pi, out=t)


def _node_fraction(cI, sI, psi, c, lo_side, hi_side):
    """:func:`_fraction` at the nodes ``psi`` (n_gauss, k), with fewer temporaries (the same
    operations, so the same numbers); ``psi`` is overwritten."""
    A = np.cos(psi)
    A *= cI
    B = np.sin(psi, out=psi)
    np.abs(B, out=B)
    B *= sI
    tiny = B < 1e-15
    some_tiny = bool(tiny.any())
    Bs = np.where(tiny, 1.0, B) if some_tiny else B
    if lo_side:
        frac = np.subtract(-c, A)
        frac /= Bs
        np.clip(frac, -1.0, 1.0, out=frac)
        np.arccos(frac, out=frac)
    else:
        frac = np.full(A.shape, np.pi)
    if hi_side:
        hi = np.subtract(c, A)
        hi /= Bs
        np.clip(hi, -1.0, 1.0, out=hi)
        frac -= np.arccos(hi, out=hi)
    frac /= np.pi
    return np.where(tiny, (np.abs(A) < c).astype(float), frac) if some_tiny else frac


def _fraction(cI, sI, psi, c, lo_side=True, hi_side=True, bounds=False):
    """:func:`azimuth_fraction` from cos I clipped to [-1, 1] and sin I = sqrt(1 - cos^2 I).

    ``lo_side=False`` (``hi_side=False``): the lower (upper) bound of cos(phi) is known to be clipped
    to -1 (+1), so it is not computed.  ``bounds=True`` also returns both bounds before clipping.
    """
    A = cI * np.cos(psi)
    B = sI * np.abs(np.sin(psi))
    tiny = B < 1e-15
    Bs = np.where(tiny, 1.0, B)
    if lo_side:
        lo = (-c - A) / Bs
        frac = np.arccos(np.clip(lo, -1.0, 1.0))
    else:
        frac = np.full(A.shape, np.pi)
    if hi_side:
        hi = (c - A) / Bs
        frac -= np.arccos(np.clip(hi, -1.0, 1.0))
    frac /= np.pi
    frac = np.where(tiny, (np.abs(A) < c).astype(float), frac)
    return (frac, lo, hi) if bounds else frac


def isotropic_transit_probability(aor, ror=0.0, ecc=0.0, omega_rad=np.pi / 2):
    r"""Transit probability without architecture information (Winn 2010 eq. 9).

    :math:`(1 + R_p/R_\star)(R_\star/a)(1 + e\sin\omega)/(1 - e^2)`, clipped to 1.
    """
    return transit_cos_limit(aor, ror, ecc, omega_rad)


def hypothetical_planet_aor(period_day, m_star, r_star_rsun=np.nan, rho_star_gcc=np.nan):
    """:math:`a/R_\\star` of a massless planet at ``period_day``, from R* or else from the stellar density.

    Shapes broadcast, e.g. ``period_day`` (n_periods,) against stellar draws
    ``(n_draws, 1)``.  NaN where neither R* nor the density is finite.
    """
    P = np.asarray(period_day, dtype=float)
    rs = np.asarray(r_star_rsun, dtype=float)
    rho = np.asarray(rho_star_gcc, dtype=float)
    a = kepler.a_au(P, np.asarray(m_star, dtype=float))
    with np.errstate(invalid="ignore", divide="ignore"):
        from_r = a / (rs * RSUN_AU)
        from_rho = transit.a_over_rstar_from_density(rho, P)
    return np.where(np.isfinite(from_r), from_r, from_rho)
