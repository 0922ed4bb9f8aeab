"""The system-file schema: every field, its canonical unit and physical support.

Canonical (file) units are the defaults a user may override per quantity with
``unit = "..."`` (any astropy unit string that converts).
"""
from __future__ import annotations

from dataclasses import dataclass
import math

__all__ = ["INF", "Field", "STAR_FIELDS", "PLANET_FIELDS", "QUANTITY_KEYS", "TOP_KEYS", "PLANET_META_KEYS",
           "STAR_META_KEYS"]

INF = math.inf


@dataclass(frozen=True)
class Field:
    name: str
    unit: str            # canonical unit (astropy string); "" = dimensionless
    support: tuple       # (lo, hi) physical support in the canonical unit
    description: str
    positive: bool = False   # value must be > 0
    periodic: bool = False   # an angle defined modulo 360 deg: no limits
    closed_hi: bool = True   # False: the upper end is excluded (ecc < 1)
    sane: tuple | None = None    # (lo, hi) accepted range of value, value + error and limits
    sane_reason: str = ""


STAR_FIELDS = {
    f.name: f
    for f in [
        Field("mass", "solMass", (0.0, INF), "stellar mass", positive=True, sane=(1e-5, 1e4),
              sane_reason="far beyond any star or brown dwarf host"),
        Field("radius", "solRad", (0.0, INF), "stellar radius", positive=True),
        Field("density", "g / cm3", (0.0, INF), "mean stellar density", positive=True),
    ]
}

PLANET_FIELDS = {
    f.name: f
    for f in [
        Field("period", "day", (0.0, INF), "orbital period", positive=True, sane=(1e-6, 1e12),
              sane_reason="0.09 s to 2.7 billion years; beyond that the orbit is not physical"),
        Field("k", "m / s", (0.0, INF), "RV semi-amplitude", positive=True),
        Field("msini", "earthMass", (0.0, INF), "minimum mass m sin i", positive=True),
        Field("mass", "earthMass", (0.0, INF), "true mass", positive=True),
        Field("radius", "earthRad", (0.0, INF), "planet radius", positive=True),
        Field("ror", "", (0.0, 1.0), "radius ratio Rp/R*", positive=True),
        Field("ecc", "", (0.0, 1.0), "eccentricity", closed_hi=False),
        Field("omega", "deg", (-INF, INF), "argument of periastron", periodic=True),
        Field("secosw", "", (-1.0, 1.0), "sqrt(e) cos(omega)"),
        Field("sesinw", "", (-1.0, 1.0), "sqrt(e) sin(omega)"),
        Field("ecosw", "", (-1.0, 1.0), "e cos(omega)"),
        Field("esinw", "", (-1.0, 1.0), "e sin(omega)"),
        Field("b", "", (0.0, INF), "transit impact parameter"),
        Field("inclination", "deg", (0.0, 180.0), "orbital inclination"),
        Field("ascending_node", "deg", (-INF, INF), "longitude of ascending node", periodic=True),
        # phases (one per planet): a time of mid-transit, a time of periastron, or a mean longitude at
        # the system's `epoch`; times on one time scale and zero point (BJD_TDB recommended)
        Field("transit_time", "day", (-INF, INF), "time of mid-transit (inferior conjunction)"),
        Field("periastron_time", "day", (-INF, INF), "time of periastron passage"),
        Field("mean_longitude", "deg", (-INF, INF), "mean longitude at the system epoch", periodic=True),
    ]
}

#: Keys allowed inside a quantity table.
QUANTITY_KEYS = ("value", "err", "minus", "plus", "upper", "lower", "cl", "unit")
#: Non-quantity keys.
TOP_KEYS = ("name", "star", "planet", "reference_plane", "epoch", "notes")
#: Planet fields that state the orbital phase; a planet gives at most one of them.
PHASE_FIELDS = ("transit_time", "periastron_time", "mean_longitude")
#: The system-level reference time of mean longitudes and of the N-body initial conditions.
EPOCH_FIELD = Field("epoch", "day", (-INF, INF), "reference time of the phases")
PLANET_META_KEYS = ("name", "transiting", "notes")
STAR_META_KEYS = ("name", "notes")
