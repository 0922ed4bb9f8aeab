"""Measured quantities: exact values, Gaussian and asymmetric errors, limits.

A :class:`Measurement` holds one catalogue-level summary in the field's
canonical unit (converted once, at read time, with astropy units) and knows how
to draw seeded Monte Carlo samples from the distribution it describes.

Distributions
-------------
exact
    A point mass at ``value``.
normal / asym
    Catalogue convention: ``value +plus -minus`` are the median and the
    15.87 / 84.13 percentiles.  The distribution is two half-Gaussians of
    widths ``minus`` and ``plus`` joined at ``value``, each carrying half of
    the probability (an asymmetric, median-preserving split normal), so those
    percentiles are reproduced exactly; a Gaussian is ``minus == plus``.  Draws
    are truncated to the field's physical support (e.g. ``ecc`` in [0, 1)) by
    inverse-CDF sampling restricted to the support, never by clipping.
upper / lower
    A one-sided limit read as a half-Gaussian likelihood anchored at the edge
    of the support (0 for an upper limit, the top of the support for a lower
    limit) whose width is chosen so that, under a flat prior on the support,
    the posterior has the limit at quantile ``cl`` (upper) or ``1 - cl``
    (lower).  A lower limit on a quantity without an upper bound defines no
    proper distribution; such draws stay at the limit and are flagged.
"""
from __future__ import annotations

from dataclasses import dataclass
import math

import numpy as np
from scipy import special

__all__ = ["Measurement", "split_normal_ppf", "split_normal_cdf"]

_SQRT2 = math.sqrt(2.0)
_GAUSS_CACHE: dict = {}


def _phi(z):
    return 0.5 * (1.0 + special.erf(np.asarray(z) / _SQRT2))


def _phi_inv(u):
    return _SQRT2 * special.erfinv(2.0 * np.asarray(u) - 1.0)


def split_normal_cdf(x, median, minus, plus):
    """CDF of the asymmetric normal: half-Gaussians of widths ``minus`` (below) and ``plus``
    (above) joined at ``median``, each carrying half of the probability."""
    x = np.asarray(x, dtype=float)
    return np.where(x < median, _phi((x - median) / minus), _phi((x - median) / plus))


def split_normal_ppf(u, median, minus, plus):
    """Inverse CDF of the asymmetric normal (vectorised over ``u``): the 15.87 / 50 / 84.13 %
    quantiles are exactly ``median - minus``, ``median``, ``median + plus``."""
    u = np.asarray(u, dtype=float)
    z = _phi_inv(np.clip(u, 1e-300, 1 - 1e-16))
    return median + np.where(u < 0.5, minus, plus) * z


@dataclass(frozen=True)
class Measurement:
    """One measured quantity in its field's canonical unit.

    Parameters
    ----------
    kind : {'exact', 'normal', 'asym', 'upper', 'lower'}
    value : float or None
        Central value (mode of the split-normal) or the point value.
    minus, plus : float
        Lower and upper 1-sigma widths (equal for ``normal``; 0 for ``exact``).
    limit : float or None
        The limit value for ``upper``/``lower``.
    cl : float
        Confidence level of a limit (default 0.95).
    support : (float, float)
        Physical support of the field, e.g. (0, 1) for eccentricity.
    unit : str
        Canonical unit, for display.
    """

    kind: str
    value: float | None = None
    minus: float = 0.0
    plus: float = 0.0
    limit: float | None = None
    cl: float = 0.95
    support: tuple = (-math.inf, math.inf)
    unit: str = ""

    # -- summaries -----------------------------------------------------
    @property
    def is_limit(self) -> bool:
        return self.kind in ("upper", "lower")

    @property
    def center(self) -> float:
        """A representative value: the mode, or the limit for limits."""
        return self.value if self.value is not None else self.limit

    @property
    def sigma(self) -> float:
        """Mean of the two widths (0 for exact values and limits)."""
        return 0.5 * (self.minus + self.plus)

    # -- one-sided limits ---------------------------------------------
    def limit_scale(self) -> float:
        """Half-Gaussian width s of the one-sided likelihood of a limit.

        Solves F(limit) = cl (upper) or 1 - F(limit) = cl (lower), where F is
        the CDF of the posterior under a flat prior on the support.
        """
        lo, hi = self.support
        if self.kind == "upper":
            edge, span = (lo if math.isfinite(lo) else 0.0), hi - (lo if math.isfinite(lo) else 0.0)
            d = self.limit - edge
        else:
            if not math.isfinite(hi):
                return math.nan
            edge, span = hi, hi - lo
            d = hi - self.limit
        if d <= 0:
            return 0.0
        # posterior is a half-normal(s) truncated to [0, span]
        def frac(s):
            return special.erf(d / (s * _SQRT2)) / special.erf(span / (s * _SQRT2)) - self.cl
        s_inf = d / (_SQRT2 * special.erfinv(self.cl))
        if not math.isfinite(span) or span > 40.0 * s_inf:
            return s_inf        # the support's far edge is > 40 widths away: truncation is negligible
        if frac(1e6 * span) > 0:  # flat prior alone already satisfies the level
            return math.inf
        from scipy import optimize      # here: a limit is rare, and scipy.optimize costs 0.2 s to import
        return optimize.brentq(frac, 1e-9 * d, 1e6 * span, xtol=1e-12 * d)

    # -- sampling -----------------------------------------------------
    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """Seeded Monte Carlo draws, shape (n,)."""
        lo, hi = self.support
        if self.kind == "exact":
            return np.full(n, float(self.value))
        if self.kind in ("normal", "asym"):
            m, sm, sp = float(self.value), float(self.minus), float(self.plus)
            if sm == 0 and sp == 0:
                return np.full(n, m)
            sm = sm if sm > 0 else 1e-12 * max(abs(m), 1.0)
            sp = sp if sp > 0 else 1e-12 * max(abs(m), 1.0)
            u_lo = split_normal_cdf(lo, m, sm, sp) if math.isfinite(lo) else 0.0
            u_hi = split_normal_cdf(hi, m, sm, sp) if math.isfinite(hi) else 1.0
            u = rng.uniform(u_lo, u_hi, n)
            x = split_normal_ppf(u, m, sm, sp)
            # keep strictly inside open supports such as ecc < 1
            return np.clip(x, lo, np.nextafter(hi, -np.inf) if math.isfinite(hi) else hi)
        s = self.limit_scale()
        if self.kind == "upper":
            edge = lo if math.isfinite(lo) else 0.0
            span = hi - edge
            if not math.isfinite(s):
                return rng.uniform(edge, hi, n)
            top = special.erf(span / (s * _SQRT2)) if math.isfinite(span) else 1.0
            u = rng.uniform(0.0, top, n)
            x = edge + s * _SQRT2 * special.erfinv(u)
            return np.clip(x, lo, np.nextafter(hi, -np.inf) if math.isfinite(hi) else hi)
        # lower limit
        if not math.isfinite(s):
            if math.isfinite(hi):
                return rng.uniform(lo, hi, n)
            return np.full(n, float(self.limit))
        span = hi - lo
        top = special.erf(span / (s * _SQRT2))
        u = rng.uniform(0.0, top, n)
        x = hi - s * _SQRT2 * special.erfinv(u)
        return np.clip(x, lo, np.nextafter(hi, -np.inf))

    def gauss_params(self):
        """(center, minus, plus) such that the log-likelihood is -0.5 ((x - center) / width)^2,
        width = minus below the center and plus above; None for exact values and
        for limits the flat prior already satisfies.

        Limits become half-Gaussians anchored at the support edge (see module docstring).
        """
        cached = _GAUSS_CACHE.get(self)
        if cached is not None or self in _GAUSS_CACHE:
            return cached
        out = None
        if self.kind in ("normal", "asym"):
            out = (float(self.value), float(self.minus), float(self.plus))
        elif self.kind in ("upper", "lower"):
            s = self.limit_scale()
            lo, hi = self.support
            if math.isfinite(s) and s > 0:
                if self.kind == "upper":
                    out = ((lo if math.isfinite(lo) else 0.0), math.inf, s)
                else:
                    out = (hi, s, math.inf)
        _GAUSS_CACHE[self] = out
        return out

    def log_likelihood(self, x):
        """Log-likelihood of true value(s) ``x`` given this summary (up to a constant).

        Split-normal for ``normal``/``asym``; half-Gaussian one-sided for limits;
        0 for ``exact`` (exact values are fixed, not fitted).
        """
        x = np.asarray(x, dtype=float)
        g = self.gauss_params()
        if g is None:
            return np.zeros_like(x)
        c, sm, sp = g
        d = x - c
        with np.errstate(divide="ignore", invalid="ignore"):
            r = np.where(d < 0, d / sm, d / sp)
            if math.isfinite(sm) and math.isfinite(sp) and sm != sp:
                return -0.5 * r * r - np.where(d < 0, math.log(sm), math.log(sp))
        return -0.5 * r * r
