"""Published population priors, read from TOML data files.

archsys ships the priors it knows in ``priors/*.toml`` (installed as the
package ``archsys.data.priors``).  Users may pass their own file in the same
format.  The id accepted by ``--prior`` is the file name without ``.toml``,
which is also the file's ``name`` field.

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

File format
-----------
::

    name = "ecc-kipping2013-rv"      # id; for bundled files = file name
    quantity = "eccentricity"        # or "mutual_inclination_sigma" (deg)
    family = "beta"                  # see FAMILIES below
    description = "one line"         # optional
    [parameters]                     # exactly the family's parameters
    alpha = 0.867
    beta = 3.03
    [uncertainty]                    # optional, published 1-sigma errors
    alpha = {value = 0.867, err = 0.044}
    beta = {value = 3.03, err_plus = 0.17, err_minus = 0.16}
    [source]                         # required
    citation = "Kipping, D. M. 2013, MNRAS 434, L51"
    from_memory = false              # true: numbers not checked in the paper
    note = "free text"               # optional
    [applies]                        # optional, all keys optional
    period_min_days = 0.0
    period_max_days = 382.3
    n_planets_min = 2
    n_planets_max = 1
    population = "free text"

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

Any problem with a file raises :class:`archsys.errors.InputError` with one
line naming the file and the field.

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
import importlib.resources
import math
import pathlib
import types
from collections.abc import Mapping

import numpy as np
from scipy import special, stats

from archsys.errors import InputError

__all__ = [
    "FAMILIES", "QUANTITIES", "DEFAULT_PRIORS", "Prior",
    "load_prior", "list_priors", "default_prior",
]

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

_TOP_KEYS = {"name", "quantity", "family", "description", "parameters",
             "uncertainty", "source", "applies"}
_SOURCE_KEYS = {"citation", "from_memory", "note"}
_APPLIES_KEYS = {"period_min_days": float, "period_max_days": float,
                 "n_planets_min": int, "n_planets_max": int, "population": str}
_UNCERTAINTY_KEYS = {"value", "err", "err_plus", "err_minus"}
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


def _require(table, key, kind, src, prefix=""):
    field = prefix + key
    if key not in table:
        raise InputError(f"field '{field}': missing", source=src, field=field)
    v = table[key]
    if not isinstance(v, kind) or (kind is str and not v.strip()):
        raise InputError(f"field '{field}': must be a non-empty {kind.__name__}; got {v!r}",
                         source=src, field=field)
    return v


def _check_unknown(table, allowed, src, prefix=""):
    extra = sorted(set(table) - set(allowed))
    if extra:
        field = prefix + extra[0]
        raise InputError(f"field '{field}': unknown key; allowed: {', '.join(sorted(allowed))}",
                         source=src, field=field)


def _table(doc, key, src, required):
    if key not in doc:
        if required:
            raise InputError(f"field '[{key}]': missing table", source=src, field=key)
        return {}
    if not isinstance(doc[key], dict):
        raise InputError(f"field '{key}': must be a table", source=src, field=key)
    return doc[key]


def _check_uncertainty(unc, params, src):
    for k, entry in unc.items():
        field = f"uncertainty.{k}"
        if k not in params:
            raise InputError(f"field '{field}': no parameter of that name", source=src, field=field)
        if not isinstance(entry, dict):
            raise InputError(f"field '{field}': must be a table like "
                             "{value = 1.0, err = 0.1}", source=src, field=field)
        _check_unknown(entry, _UNCERTAINTY_KEYS, src, prefix=field + ".")
        for sub, v in entry.items():
            if isinstance(v, bool) or not isinstance(v, (int, float)):
                raise InputError(f"field '{field}.{sub}': must be a number; got {v!r}",
                                 source=src, field=f"{field}.{sub}")
        if "err" not in entry and not {"err_plus", "err_minus"} <= set(entry):
            raise InputError(f"field '{field}': give err, or err_plus and err_minus",
                             source=src, field=field)
    return unc


def _check_applies(app, src):
    _check_unknown(app, _APPLIES_KEYS, src, prefix="applies.")
    for k, v in app.items():
        kind = _APPLIES_KEYS[k]
        ok = isinstance(v, str) if kind is str else (
            not isinstance(v, bool) and isinstance(v, int if kind is int else (int, float)))
        if not ok or (kind is not str and v < 0):
            raise InputError(f"field 'applies.{k}': must be a non-negative {kind.__name__}; "
                             f"got {v!r}", source=src, field=f"applies.{k}")
    return app


def _parse_file(path, bundled=False):
    path = pathlib.Path(path)
    src = str(path)
    from archsys.limits import parse_toml
    from archsys.model.inputfile import read_input_bytes
    if not path.exists():
        raise InputError("prior file not found", source=src)
    blob = read_input_bytes(path, "prior file (.toml)")
    try:
        text = blob.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError("not valid TOML: not UTF-8 text", source=src) from None
    doc = parse_toml(text, src, "prior file")
    _check_unknown(doc, _TOP_KEYS, src)
    name = _require(doc, "name", str, src)
    if bundled and name != path.stem:
        raise InputError(f"field 'name': {name!r} must equal the file name {path.stem!r}",
                         source=src, field="name")
    quantity = _require(doc, "quantity", str, src)
    family = _require(doc, "family", str, src)
    description = doc.get("description", "")
    if not isinstance(description, str):
        raise InputError("field 'description': must be a string", source=src, field="description")
    params = _table(doc, "parameters", src, required=True)
    source = _table(doc, "source", src, required=True)
    _check_unknown(source, _SOURCE_KEYS, src, prefix="source.")
    citation = _require(source, "citation", str, src, prefix="source.")
    from_memory = _require(source, "from_memory", bool, src, prefix="source.")
    note = source.get("note", "")
    if not isinstance(note, str):
        raise InputError("field 'source.note': must be a string", source=src, field="source.note")
    unc = _check_uncertainty(_table(doc, "uncertainty", src, required=False), params, src)
    applies = _check_applies(_table(doc, "applies", src, required=False), src)
    return Prior(name=name, quantity=quantity, family=family, parameters=params,
                 citation=citation, from_memory=from_memory, description=description,
                 note=note, applies=applies, uncertainty=unc, path=src)


# ---- bundled files -----------------------------------------------------------
def _bundled_files():
    """{name: path} of the bundled TOML files (installed package, else source tree)."""
    try:
        root = importlib.resources.files("archsys.data.priors")
        files = {p.name[:-5]: p for p in root.iterdir() if p.name.endswith(".toml")}
    except (ModuleNotFoundError, FileNotFoundError, NotADirectoryError, TypeError):
        files = {}
    if not files:  # running from the source tree
        root = pathlib.Path(__file__).resolve().parents[2] / "priors"
        files = {p.stem: p for p in root.glob("*.toml")}
    return dict(sorted(files.items()))


@functools.lru_cache(maxsize=None)
def _load_bundled(name):
    path = _bundled_files()[name]
    with importlib.resources.as_file(path) as real:
        return _parse_file(real, bundled=True)


def load_prior(name_or_path):
    """Load a bundled prior by id (e.g. ``"ecc-kipping2013-rv"``) or a user TOML file.

    A value that names an existing file, ends in ``.toml`` or contains a path
    separator is read as a path; anything else must be a bundled id.
    """
    if isinstance(name_or_path, Prior):
        return name_or_path
    text = str(name_or_path)
    p = pathlib.Path(text)
    if isinstance(name_or_path, pathlib.PurePath) or text.endswith(".toml") \
            or "/" in text or "\\" in text or p.is_file():
        return _parse_file(p)
    bundled = _bundled_files()
    if text not in bundled:
        raise InputError(f"unknown prior {text!r}; bundled priors: {', '.join(bundled)} "
                         "(or give a path to a .toml file)", field="prior")
    return _load_bundled(text)


def list_priors():
    """All bundled priors, sorted by quantity then name."""
    priors = [_load_bundled(n) for n in _bundled_files()]
    return sorted(priors, key=lambda p: (p.quantity, p.name))


def default_prior(quantity, n_planets=None):
    """The prior used when the user chooses none.

    ``eccentricity`` -> ``ecc-uniform`` (flat on [0, 1), least informative);
    ``mutual_inclination_sigma`` -> ``incl-loguniform`` (log-uniform sigma on
    [0.1, 60] deg, weakly informative about the scale).  The defaults do not
    depend on multiplicity, so a published population is never applied
    without being asked for; ``n_planets`` is only checked (a mutual
    inclination needs at least two planets).
    """
    if quantity not in DEFAULT_PRIORS:
        raise ValueError(f"quantity must be one of {', '.join(DEFAULT_PRIORS)}; got {quantity!r}")
    if n_planets is not None:
        if int(n_planets) < 1:
            raise ValueError(f"n_planets must be >= 1; got {n_planets}")
        if quantity == "mutual_inclination_sigma" and int(n_planets) < 2:
            raise ValueError(f"a mutual-inclination prior needs >= 2 planets; got {n_planets}")
    return load_prior(DEFAULT_PRIORS[quantity])
