"""Transit-timing signatures of near-resonant pairs (Lithwick, Xie & Wu 2012).

A pair near a j:(j-k) mean-motion resonance has transit-timing variations
(TTVs) that are sinusoids with the *super-period*

.. math:: P^{sup} = \\frac{1}{|j/P' - (j-k)/P|}

(P inner, P' outer).  For first-order resonances (k = 1) Lithwick, Xie & Wu
(2012, hereafter LXW12) give the complex TTV amplitudes

.. math:: V  = P \\frac{\\mu'}{\\pi j^{2/3} (j-1)^{1/3} \\Delta}
               \\left(-f - \\frac{3}{2}\\frac{Z^*_{free}}{\\Delta}\\right),\\qquad
          V' = P' \\frac{\\mu}{\\pi j \\Delta}
               \\left(-g + \\frac{3}{2}\\frac{Z^*_{free}}{\\Delta}\\right),

with :math:`\\Delta = (P'/P)(j-1)/j - 1`, :math:`\\mu = m/M_\\star`, and f, g
the first-order disturbing-function coefficients (Laplace coefficients; the
indirect term enters g for 2:1).  The amplitude formulae are from memory of
LXW12 ([LithwickXieWu2012] verifies the super-period and Delta only) and
hold for small eccentricities, outside the resonance and away from exact
commensurability; they are order-of-magnitude estimates and labelled
"approximate" wherever they are shown.  Z_free is the free-eccentricity
combination (LXW12: :math:`f z_{free} + g z'_{free}`), whose phase is
unknown; :func:`ttv_amplitudes` returns the amplitude averaged in quadrature
over that phase.

Internal units: day; masses as ratios to the stellar mass.

References
----------
.. [1] Lithwick, Y., Xie, J. & Wu, Y. 2012, ApJ 761, 122.
.. [2] Murray, C. D. & Dermott, S. F. 1999, *Solar System Dynamics* (Laplace coefficients,
       first-order resonant terms f_27, f_31 and the 2:1 indirect term).
"""
from __future__ import annotations

import numpy as np

__all__ = ["super_period", "lxw_delta", "laplace_coefficient", "ttv_coefficients", "ttv_amplitudes",
           "N_LAPLACE"]

#: Most trapezoid nodes for the Laplace-coefficient integrals.  The integrand
#: is periodic and analytic, so the error falls like alpha^N; the node count is
#: chosen per call so that alpha_max^N < 1e-15 (at most N_LAPLACE: alpha < 0.97).
N_LAPLACE = 1024


def super_period(p_in, p_out, j, k=1):
    """Super-period :math:`1/|j/P' - (j-k)/P|` [day] of a pair near the j:(j-k) resonance (LXW12).

    Parameters
    ----------
    p_in, p_out : array_like
        Inner and outer periods [day].
    j, k : int or array_like
        Resonance j:(j-k) of order k (k = 1: first order; 2: second order).

    Returns
    -------
    ndarray
        ``inf`` at exact commensurability.
    """
    P, Pp = np.asarray(p_in, dtype=float), np.asarray(p_out, dtype=float)
    j, k = np.asarray(j), np.asarray(k)
    if np.any(k < 1) or np.any(j <= k):
        raise ValueError("resonance needs 1 <= k < j")
    with np.errstate(divide="ignore"):
        return 1.0 / np.abs(j / Pp - (j - k) / P)


def lxw_delta(p_in, p_out, j):
    """Normalised distance to the j:(j-1) resonance, :math:`\\Delta = (P'/P)(j-1)/j - 1` (LXW12).

    Positive wide of (outside) the resonance.
    """
    j = np.asarray(j, dtype=float)
    return np.asarray(p_out, dtype=float) / np.asarray(p_in, dtype=float) * (j - 1.0) / j - 1.0


def laplace_coefficient(s, j, alpha, derivative=False, n=None):
    r"""Laplace coefficient :math:`b_s^{(j)}(\alpha)` or its derivative :math:`\mathrm{d}b/\mathrm{d}\alpha`.

    .. math:: b_s^{(j)}(\alpha) = \frac{1}{\pi}\int_0^{2\pi}
              \frac{\cos j\psi\,\mathrm{d}\psi}{(1 - 2\alpha\cos\psi + \alpha^2)^s}

    (Murray & Dermott 1999 eq. 6.67), by the trapezoid rule, which converges
    geometrically for this periodic integrand.  ``j`` and ``alpha`` broadcast;
    ``n`` (nodes) defaults to what makes :math:`\alpha_{max}^n < 10^{-15}`.
    """
    a = np.asarray(alpha, dtype=float)[..., None]
    jj = np.asarray(j, dtype=float)[..., None]
    if np.any((a <= 0) | (a >= 1)):
        raise ValueError("alpha must be in (0, 1)")
    if n is None:
        n = int(np.clip(np.ceil(np.log(1e-15) / np.log(a.max())) + 2 * np.max(jj), 64, N_LAPLACE))
    psi = 2.0 * np.pi * np.arange(n) / n
    base = 1.0 - 2.0 * a * np.cos(psi) + a * a
    if derivative:
        integrand = np.cos(jj * psi) * (-s) * (2.0 * a - 2.0 * np.cos(psi)) * base ** (-s - 1.0)
    else:
        integrand = np.cos(jj * psi) * base ** (-s)
    return 2.0 * integrand.mean(axis=-1)


def ttv_coefficients(j, alpha=None):
    r"""First-order resonant coefficients (f, g) of the j:(j-1) resonance at :math:`\alpha = a/a'`.

    .. math:: f = -j\,b^{(j)}_{1/2} - \frac{\alpha}{2}\frac{\mathrm{d}b^{(j)}_{1/2}}{\mathrm{d}\alpha},\qquad
              g = \left(j - \tfrac12\right) b^{(j-1)}_{1/2} + \frac{\alpha}{2}
                  \frac{\mathrm{d}b^{(j-1)}_{1/2}}{\mathrm{d}\alpha} - 2\alpha\,\delta_{j,2}

    (Murray & Dermott 1999 terms f_27, f_31; the last term is the indirect
    part for the outer planet at 2:1; forms from memory).  ``alpha`` defaults
    to the exact commensurability :math:`((j-1)/j)^{2/3}`.
    """
    j = np.asarray(j)
    if np.any(j < 2):
        raise ValueError("first-order resonance j:(j-1) needs j >= 2")
    a = ((j - 1.0) / j) ** (2.0 / 3.0) if alpha is None else np.asarray(alpha, dtype=float)
    f = -j * laplace_coefficient(0.5, j, a) - 0.5 * a * laplace_coefficient(0.5, j, a, derivative=True)
    g = ((j - 0.5) * laplace_coefficient(0.5, j - 1, a)
         + 0.5 * a * laplace_coefficient(0.5, j - 1, a, derivative=True)
         - np.where(j == 2, 2.0 * a, 0.0))
    return f, g


def ttv_amplitudes(p_in, p_out, mu_in, mu_out, j, z_free=0.0, coeff_alpha=None):
    """Approximate TTV amplitudes [day] of a pair near the j:(j-1) resonance (LXW12), inner and outer.

    Parameters
    ----------
    p_in, p_out : array_like
        Periods [day].
    mu_in, mu_out : array_like
        Planet-to-star mass ratios.
    j : int or array_like
        First-order resonance j:(j-1).
    z_free : float or array_like
        Assumed magnitude of the free-eccentricity combination
        :math:`|Z_{free}|`; 0 gives the forced TTV alone.
    coeff_alpha : float, optional
        :math:`\alpha` at which f and g are evaluated; default each element's
        own :math:`(P/P')^{2/3}`.  f and g vary slowly with alpha, so a scalar
        (e.g. the posterior median) saves the Laplace integrals per draw.

    Returns
    -------
    amp_in, amp_out : ndarray
        :math:`|V|` and :math:`|V'|` averaged in quadrature over the unknown
        phase of Z_free: :math:`\\sqrt{f^2 + (3|Z|/2\\Delta)^2}` in place of
        :math:`|-f - 3Z^*/2\\Delta|` (and g for the outer planet).  Order of
        magnitude only; see the module notes.  Not finite at exact
        commensurability (Delta = 0), where the formulae do not apply.
    """
    P, Pp = np.asarray(p_in, dtype=float), np.asarray(p_out, dtype=float)
    j = np.asarray(j)
    delta = lxw_delta(P, Pp, j)
    alpha = (P / Pp) ** (2.0 / 3.0) if coeff_alpha is None else coeff_alpha
    f, g = ttv_coefficients(j, alpha)
    with np.errstate(divide="ignore", invalid="ignore"):
        free = 1.5 * np.asarray(z_free, dtype=float) / np.abs(delta)
        amp_in = P * np.asarray(mu_out) / (np.pi * j ** (2.0 / 3.0) * (j - 1.0) ** (1.0 / 3.0) * np.abs(delta)) \
            * np.hypot(f, free)
        amp_out = Pp * np.asarray(mu_in) / (np.pi * j * np.abs(delta)) * np.hypot(g, free)
    return amp_in, amp_out
