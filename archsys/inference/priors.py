"""Published population priors, read from TOML data files.

A :class:`Prior` is a truncated distribution of one quantity with its citation.
archsys ships the priors it knows in ``priors/*.toml`` (installed as the
package ``archsys.data.priors``); reading, validating and listing those files
(and users' own) is :mod:`archsys.inference.prior_files`.

Quantities
----------
``eccentricity``
    Orbital eccentricity ``e``, dimensionless.  Every eccentricity prior is
    restricted to bound orbits, ``0 <= e < 1``, and renormalised there
    (a half-normal with ``sigma = 0.32`` loses 0.18 % of its mass above 1).
``mutual_inclination_sigma``
    Scale ``sigma`` (degrees, not radians) of a Rayleigh distribution of the
    planets' inclinations relative to their common reference plane, the
    convention in which Fang & Margot (2012) and Fabrycky et al. (2014) speak
    of "mutual inclinations".  For small angles the pairwise inclination
    between two planets is then Rayleigh with scale ``sqrt(2) * sigma``.
    These priors are priors on ``sigma`` for the hierarchical model,
    restricted to ``0 <= sigma <= 180``.  An MCMC that works in radians may
    call ``logpdf(np.degrees(sigma_rad))``; that differs from the density in
    radians by the constant ``log(180 / pi)``.

Families and their parameters (support before the quantity's bounds):

=============  =====================  =====================================
family         parameters             density on its support
=============  =====================  =====================================
uniform        low, high              1/(high-low) on [low, high)
loguniform     low, high (> 0)        1/(x ln(high/low)) on [low, high]
beta           alpha, beta            x^(a-1) (1-x)^(b-1) / B(a, b), [0, 1]
rayleigh       sigma                  x/s^2 exp(-x^2/2s^2), x >= 0
halfnormal     sigma                  sqrt(2/pi)/s exp(-x^2/2s^2), x >= 0
lognormal      median, sigma_log      normal in ln x, mean ln(median)
=============  =====================  =====================================

References
----------
.. [1] Kipping, D. M. 2013, MNRAS 434, L51
.. [2] Van Eylen, V. & Albrecht, S. 2015, ApJ 808, 126
.. [3] Van Eylen, V. et al. 2019, AJ 157, 61
.. [4] Fang, J. & Margot, J.-L. 2012, ApJ 761, 92
.. [5] Fabrycky, D. C. et al. 2014, ApJ 790, 146
"""

from __future__ import annotations

import dataclasses
import functools
import math
import types
from collections.abc import Mapping

import numpy as np
from scipy import special, stats

from archsys.errors import InputError

__all__ = ["FAMILIES", "QUANTITIES", "DEFAULT_PRIORS", "Prior"]

# family -> required parameter names, in the order scipy needs them
FAMILIES = {
    "uniform": ("low", "high"),
    "loguniform": ("low", "high"),
    "beta": ("alpha", "beta"),
    "rayleigh": ("sigma",),
    "halfnormal": ("sigma",),
    "lognormal": ("median", "sigma_log"),
}
# quantity -> (lower bound, upper bound, upper bound excluded?, unit)
QUANTITIES = {
    "eccentricity": (0.0, 1.0, True, ""),          # bound orbits
    "mutual_inclination_sigma": (0.0, 180.0, False, "deg"),
}
# Least-informative choices, so that nothing informative is applied silently.
DEFAULT_PRIORS = {
    "eccentricity": "ecc-uniform",
    "mutual_inclination_sigma": "incl-loguniform",
}

_LOG_SQRT_2_OVER_PI = 0.5 * math.log(2.0 / math.pi)
_LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)



@dataclasses.dataclass(frozen=True)
class Prior:
    """A population prior on one quantity, validated on construction.

    Attributes
    ----------
    name, quantity, family : str
    parameters : mapping of str to float
    citation : str
    from_memory : bool
        True where the numbers were not checked against the paper.
    description, note : str
    applies : mapping
        Period range / multiplicity the fit was made for (informational).
    uncertainty : mapping
        Published errors on the parameters (informational).
    path : str
        File the prior was read from ("" if built in code).
    """

    name: str
    quantity: str
    family: str
    parameters: Mapping = dataclasses.field(hash=False)
    citation: str = ""
    from_memory: bool = False
    description: str = ""
    note: str = ""
    applies: Mapping = dataclasses.field(default_factory=dict, hash=False)
    uncertainty: Mapping = dataclasses.field(default_factory=dict, hash=False)
    path: str = ""

    def __post_init__(self):
        src = self.path or f"prior {self.name!r}"
        if self.quantity not in QUANTITIES:
            raise InputError(f"field 'quantity': unknown quantity {self.quantity!r}; "
                             f"expected one of {', '.join(QUANTITIES)}", source=src,
                             field="quantity")
        if self.family not in FAMILIES:
            raise InputError(f"field 'family': unknown family {self.family!r}; "
                             f"expected one of {', '.join(FAMILIES)}", source=src,
                             field="family")
        params = _check_parameters(self.family, self.parameters, src)
        object.__setattr__(self, "parameters", types.MappingProxyType(params))
        object.__setattr__(self, "applies", types.MappingProxyType(dict(self.applies)))
        object.__setattr__(self, "uncertainty",
                           types.MappingProxyType(dict(self.uncertainty)))
        lo, hi = self._bounds
        if not hi > lo:
            q_lo, q_hi = QUANTITIES[self.quantity][:2]
            raise InputError(f"field 'parameters': the {self.family} support does not "
                             f"overlap the {self.quantity} range [{q_lo:g}, {q_hi:g}]",
                             source=src, field="parameters")

    # ---- the distribution ------------------------------------------------
    @property
    def unit(self):
        """Unit of the quantity: "" (eccentricity) or "deg"."""
        return QUANTITIES[self.quantity][3]

    @functools.cached_property
    def _dist(self):
        """scipy.stats frozen distribution of the untruncated family."""
        p = self.parameters
        if self.family == "uniform":
            return stats.uniform(loc=p["low"], scale=p["high"] - p["low"])
        if self.family == "loguniform":
            return stats.loguniform(p["low"], p["high"])
        if self.family == "beta":
            return stats.beta(p["alpha"], p["beta"])
        if self.family == "rayleigh":
            return stats.rayleigh(scale=p["sigma"])
        if self.family == "halfnormal":
            return stats.halfnorm(scale=p["sigma"])
        return stats.lognorm(p["sigma_log"], scale=p["median"])  # lognormal

    @functools.cached_property
    def _bounds(self):
        """Support: family support intersected with the quantity's range."""
        q_lo, q_hi = QUANTITIES[self.quantity][:2]
        f_lo, f_hi = self._dist.support()
        return max(q_lo, float(f_lo)), min(q_hi, float(f_hi))

    @functools.cached_property
    def _cdf_lo_and_mass(self):
        """CDF at the lower bound and the probability mass inside the bounds."""
        lo, hi = self._bounds
        c_lo, c_hi = self._dist.cdf([lo, hi])
        return float(c_lo), float(c_hi - c_lo)

    @functools.cached_property
    def _log_norm(self):
        """log of the mass kept by the truncation (0 if none)."""
        return math.log(self._cdf_lo_and_mass[1])

    def _in_support(self, x):
        lo, hi = self._bounds
        upper_open = (QUANTITIES[self.quantity][2] and hi == QUANTITIES[self.quantity][1]) \
            or self.family == "uniform"
        return (x >= lo) & ((x < hi) if upper_open else (x <= hi))

    def logpdf(self, x):
        """Log density at ``x`` (vectorised; -inf outside the support).

        Closed forms, normalised over the support.  A Beta with alpha < 1 is
        +inf at exactly 0, as the density is.
        """
        x = np.asarray(x, dtype=float)
        p = self.parameters
        with np.errstate(divide="ignore", invalid="ignore"):
            if self.family == "uniform":
                out = np.full(x.shape, -math.log(p["high"] - p["low"]))
            elif self.family == "loguniform":
                out = -np.log(x) - math.log(math.log(p["high"] / p["low"]))
            elif self.family == "beta":
                a, b = p["alpha"], p["beta"]
                out = (special.xlogy(a - 1.0, x) + special.xlog1py(b - 1.0, -x)
                       - special.betaln(a, b))
            elif self.family == "rayleigh":
                s = p["sigma"]
                out = np.log(x) - 2.0 * math.log(s) - 0.5 * (x / s) ** 2
            elif self.family == "halfnormal":
                s = p["sigma"]
                out = _LOG_SQRT_2_OVER_PI - math.log(s) - 0.5 * (x / s) ** 2
            else:  # lognormal
                m, s = p["median"], p["sigma_log"]
                out = (-np.log(x) - math.log(s) - _LOG_SQRT_2PI
                       - 0.5 * ((np.log(x) - math.log(m)) / s) ** 2)
        out = np.where(self._in_support(x), out - self._log_norm, -np.inf)
        return out[()] if out.ndim == 0 else out

    def logpdf_e(self, e):
        """Log density of eccentricity ``e`` in [0, 1) (eccentricity priors only)."""
        if self.quantity != "eccentricity":
            raise ValueError(f"prior {self.name!r} is on {self.quantity}, not eccentricity")
        return self.logpdf(e)

    def ppf(self, q):
        """Quantile function of the (truncated) distribution."""
        q = np.asarray(q, dtype=float)
        c_lo, mass = self._cdf_lo_and_mass
        x = self._dist.ppf(c_lo + q * mass)
        lo, hi = self._bounds
        x = np.clip(x, lo, hi)
        return x[()] if x.ndim == 0 else x

    def sample(self, rng, size=None):
        """Draw from the prior with ``numpy.random.Generator`` ``rng``.

        scipy's own generator when nothing is truncated, else inverse-CDF
        sampling over the support, so truncation is exact.
        """
        rng = np.random.default_rng(rng)
        c_lo, mass = self._cdf_lo_and_mass
        if c_lo == 0.0 and mass == 1.0:
            x = self._dist.rvs(size=size, random_state=rng)
        else:
            x = self.ppf(rng.uniform(size=size))
        if self.quantity == "eccentricity":  # ppf may round up to exactly 1
            x = np.minimum(x, np.nextafter(1.0, 0.0))
        return x

    def mean(self):
        """Mean of the (truncated) distribution."""
        c_lo, mass = self._cdf_lo_and_mass
        if c_lo == 0.0 and mass == 1.0:
            return float(self._dist.mean())
        lo, hi = self._bounds
        return float(self._dist.expect(lambda x: x, lb=lo, ub=hi, conditional=True))

    def median(self):
        """Median of the (truncated) distribution."""
        return float(self.ppf(0.5))

    def with_parameters(self, **updates):
        """A copy with some parameters replaced (validated), e.g. for a hierarchy."""
        return dataclasses.replace(self, parameters={**self.parameters, **updates})


# ---- validation helpers ----------------------------------------------------
def _check_parameters(family, parameters, src):
    """Return parameters as a float dict, or raise InputError naming the field."""
    if not isinstance(parameters, Mapping):
        raise InputError("field 'parameters' must be a table", source=src, field="parameters")
    need = FAMILIES[family]
    missing = [k for k in need if k not in parameters]
    if missing:
        raise InputError(f"field 'parameters.{missing[0]}': missing; family {family!r} "
                         f"needs {', '.join(need)}", source=src, field=f"parameters.{missing[0]}")
    extra = sorted(set(parameters) - set(need))
    if extra:
        raise InputError(f"field 'parameters.{extra[0]}': not a parameter of family "
                         f"{family!r} (which needs {', '.join(need)})", source=src,
                         field=f"parameters.{extra[0]}")
    out = {}
    for k in need:
        v = parameters[k]
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise InputError(f"field 'parameters.{k}': must be a finite number; got {v!r}",
                             source=src, field=f"parameters.{k}")
        out[k] = float(v)
    positive = [k for k in need if not (family == "uniform" and k == "low")]
    for k in positive:
        if out[k] <= 0:
            raise InputError(f"field 'parameters.{k}': must be > 0; got {out[k]:g}",
                             source=src, field=f"parameters.{k}")
    if family in ("uniform", "loguniform") and not out["high"] > out["low"]:
        raise InputError(f"field 'parameters.high': must exceed low={out['low']:g}; "
                         f"got {out['high']:g}", source=src, field="parameters.high")
    return out
