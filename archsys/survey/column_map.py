"""Map catalogue columns onto archsys fields and build system mappings from rows.

Canonical columns (no ``--columns`` file)
-----------------------------------------
``system`` and ``planet`` name the system and the planet; ``period`` and
``star_mass`` are required; ``star_radius``, ``star_density`` and every planet
field of the system-file schema (``k``, ``msini``, ``mass``, ``radius``,
``ror``, ``ecc``, ``omega``, ``secosw``, ``sesinw``, ``ecosw``, ``esinw``,
``b``, ``inclination``, ``ascending_node``, ``transiting``, and the phase fields
``transit_time``, ``periastron_time``, ``mean_longitude``) are optional, as is
the system column ``epoch`` (the reference time of mean longitudes, in days;
every row of a system must agree on it).
Uncertainties are ``<field>_err`` or ``<field>_minus`` and ``<field>_plus``
(positive numbers); limits are ``<field>_upper`` / ``<field>_lower`` (the
limit value).  Units are those of the system file (day, solMass, solRad,
g / cm3, earthMass, earthRad, m / s, deg) unless an ECSV/VOTable column carries
its own unit.

Column-map file (``--columns MAP.toml``)
----------------------------------------
::

    [keys]
    system = "system_id"          # required: column naming the system
    planet = "planet"             # optional: column naming the planet

    [aliases]                     # optional: extra names for --where
    method = "discovery_method"

    [star.mass]                   # star fields: mass (required), radius, density
    value = "star_mass_msun"
    minus = "star_mass_err_minus"
    plus = "star_mass_err_plus"
    unit = "solMass"

    [planet.period]               # planet fields: period (required) and any other
    value = "period_days"         # field of the system-file schema
    err = "period_err"            # symmetric error column, or minus/plus columns
    unit = "day"

    [planet.mass]
    value = "mass_mjup"
    unit = "jupiterMass"
    limit = "mass_limit"          # flag column: makes 'value' an upper/lower limit
    msini_when = ["mass_is_msini == 1", "discovery_method == RV"]

    [planet.ecc]
    value = "ecc"
    zero_without_errors = "unmeasured"

    [planet.transiting]
    value = "transiting"          # 1/0, true/false, yes/no; empty = unknown

    [planet.transit_time]         # phase: transit_time, periastron_time or mean_longitude
    value = "tmid_bjd"
    err = "tmid_err"

    [system.epoch]                # system fields: epoch (reference time of mean longitudes)
    value = "epoch_bjd"

Keys of a field table: ``value``, ``err``, ``minus``, ``plus``, ``upper``,
``lower`` (column names: the value, its errors, or columns holding limit
values); ``limit`` (a flag column; a cell in ``upper_codes``, default
``["upper", "<", "<=", "u"]``, or ``lower_codes``, default ``["lower", ">",
">=", "l"]``, makes ``value`` that limit, and error cells of that row are then
ignored; an empty cell means a measurement); ``cl`` (confidence level of
limits, default 0.95); ``unit`` (astropy unit string of the value, error and
limit columns); ``minus_sign`` (``"positive"``, the default, or
``"negative"`` for tables that store lower errors as negative numbers; then the
absolute value is used); ``zero_without_errors`` (``"keep"`` or
``"unmeasured"``: a value of exactly 0 with no error in that row is read as
"not measured", e.g. an eccentricity fixed to circular in the source paper);
``msini_when`` (``mass`` only: row expressions in the ``--where`` language over
the table's columns; where any holds, the value is m sin i, i.e. field
``msini``).  ``[planet.transiting]`` takes ``value`` and optionally
``true_codes`` / ``false_codes``.

Eccentricity default: with canonical columns as well, ``ecc`` uses
``zero_without_errors = "unmeasured"`` (catalogues write 0 for "fixed
circular").  "Without errors" means no positive error in the row (an error of
0 counts as none); to state a measured value near zero give its error, or an
upper limit.

Every problem with the map is raised as one :class:`InputError` line naming
the map file and the key; a mapped column that the table lacks is fatal
(exit status 2) and named; one bad cell only rejects its system.
"""
from __future__ import annotations

import difflib
import hashlib
from dataclasses import dataclass, field

import astropy.units as u

from ..limits import clip
from ..errors import InputError
from ..model.inputfile import read_input_bytes
from ..model.schema import EPOCH_FIELD, PLANET_FIELDS, STAR_FIELDS
from .where import SYSTEM_VARS, parse_number, parse_where

__all__ = ["FieldMap", "ColumnMap", "canonical_map", "load_column_map", "system_mapping",
           "where_names"]

_FIELD_KEYS = ("value", "err", "minus", "plus", "upper", "lower", "limit", "upper_codes",
               "lower_codes", "cl", "unit", "minus_sign", "zero_without_errors", "msini_when",
               "true_codes", "false_codes")
_COLUMN_KEYS = ("value", "err", "minus", "plus", "upper", "lower", "limit")
_UPPER = ("upper", "<", "<=", "u")
_LOWER = ("lower", ">", ">=", "l")
_TRUE = ("1", "true", "t", "yes", "y")
_FALSE = ("0", "false", "f", "no", "n")


@dataclass(frozen=True)
class FieldMap:
    """Where one archsys field comes from (column names or None)."""

    name: str
    scope: str                       # "star", "planet" or "system"
    value: str | None = None
    err: str | None = None
    minus: str | None = None
    plus: str | None = None
    upper: str | None = None
    lower: str | None = None
    limit: str | None = None
    upper_codes: tuple = _UPPER
    lower_codes: tuple = _LOWER
    cl: float | None = None
    unit: str | None = None
    minus_sign: str = "positive"
    zero_without_errors: str = "keep"
    msini_when: tuple = ()           # parsed row expressions
    true_codes: tuple = _TRUE
    false_codes: tuple = _FALSE

    def columns(self):
        return [(k, getattr(self, k)) for k in _COLUMN_KEYS if getattr(self, k)]

    @property
    def label(self):
        return f"star_{self.name}" if self.scope == "star" else self.name


#: Fields of the system as a whole (top-level keys of a system file).
SYSTEM_FIELDS = {"epoch": EPOCH_FIELD}
_SCOPES = ("star", "planet", "system")


@dataclass(frozen=True)
class ColumnMap:
    """The whole mapping of a table onto archsys fields."""

    source: str                      # map file, or "canonical columns"
    sha256: str
    system: str
    planet: str | None
    fields: tuple                    # FieldMap, star fields first
    aliases: dict = field(default_factory=dict, hash=False)

    def field_map(self, scope, name):
        for f in self.fields:
            if f.scope == scope and f.name == name:
                return f
        return None

    def column_of(self, label):
        for f in self.fields:
            if f.label == label:
                return f.value or f.upper or f.lower
        return None


def where_names(cmap: ColumnMap, columns) -> dict:
    """Every name usable in --where / msini_when -> its key."""
    names = {c: ("col", c) for c in columns}
    for f in cmap.fields:
        col = f.value or f.upper or f.lower
        if col in columns:
            names.setdefault(f.label, ("col", col))
    for a, c in cmap.aliases.items():
        names[a] = ("col", c)
    for v in SYSTEM_VARS:
        names[v] = ("sys", v)
    return names


def _fields_for(scope):
    if scope == "system":
        return SYSTEM_FIELDS
    return STAR_FIELDS if scope == "star" else {**PLANET_FIELDS, "transiting": None}


def canonical_map(columns) -> ColumnMap:
    """The default mapping onto canonical column names (see module docstring)."""
    cols = set(columns)
    out = []
    for scope in _SCOPES:
        for name in _fields_for(scope):
            base = f"star_{name}" if scope == "star" else name
            spec = {k: f"{base}_{k}" for k in ("err", "minus", "plus", "upper", "lower")
                    if f"{base}_{k}" in cols}
            if base in cols:
                spec["value"] = base
            if not any(k in spec for k in ("value", "upper", "lower")):
                continue                  # errors without a value column carry nothing
            zero = "unmeasured" if name == "ecc" else "keep"
            out.append(FieldMap(name=name, scope=scope, zero_without_errors=zero, **spec))
    return ColumnMap(source="canonical columns", sha256="", system="system",
                     planet="planet" if "planet" in cols else None, fields=tuple(out))


def _err(src, where, msg):
    return InputError(f"{src}: {where}: {msg}" if where else f"{src}: {msg}")


def _suggest(key, known):
    close = difflib.get_close_matches(key, list(known), n=1, cutoff=0.5)
    return f" (did you mean '{close[0]}'?)" if close else ""


def _codes(src, where, v):
    if not isinstance(v, list) or not all(isinstance(x, (str, int)) for x in v):
        raise _err(src, where, "must be a list of strings")
    return tuple(str(x).strip().casefold() for x in v)


def _field_from_toml(src, scope, name, spec, fld):
    where = f"[{scope}.{name}]"
    if not isinstance(spec, dict):
        raise _err(src, where, "must be a table")
    kw = {}
    for k, v in spec.items():
        if k not in _FIELD_KEYS:
            raise _err(src, where, f"unknown key '{k}'{_suggest(k, _FIELD_KEYS)}")
        if k in _COLUMN_KEYS:
            if not isinstance(v, str) or not v.strip():
                raise _err(src, f"{where} {k}", f"must be a column name (string); got {v!r:.40}")
            kw[k] = v.strip()
        elif k in ("upper_codes", "lower_codes", "true_codes", "false_codes"):
            kw[k] = _codes(src, f"{where} {k}", v)
        elif k == "cl":
            if not isinstance(v, (int, float)) or isinstance(v, bool) or not 0 < v < 1:
                raise _err(src, f"{where} cl", f"must be a number in (0, 1); got {v!r:.40}")
            kw[k] = float(v)
        elif k == "unit":
            if not isinstance(v, str):
                raise _err(src, f"{where} unit", f"must be a unit string; got {v!r:.40}")
            _check_unit(src, where, v, fld)
            kw[k] = v
        elif k == "minus_sign":
            if v not in ("positive", "negative"):
                raise _err(src, f"{where} minus_sign", f"must be 'positive' or 'negative'; got {v!r:.40}")
            kw[k] = v
        elif k == "zero_without_errors":
            if v not in ("keep", "unmeasured"):
                raise _err(src, f"{where} zero_without_errors",
                           f"must be 'keep' or 'unmeasured'; got {v!r:.40}")
            kw[k] = v
        elif k == "msini_when":
            if name != "mass":
                raise _err(src, where, "'msini_when' applies only to [planet.mass]")
            if isinstance(v, str):
                v = [v]
            if not isinstance(v, list) or not all(isinstance(x, str) for x in v):
                raise _err(src, f"{where} msini_when", "must be a list of expressions (strings)")
            kw[k] = tuple(v)          # parsed once the table's columns are known
    if name == "transiting":
        if set(kw) - {"value", "true_codes", "false_codes"}:
            raise _err(src, where, "takes only 'value', 'true_codes' and 'false_codes'")
    if not any(k in kw for k in ("value", "upper", "lower")):
        raise _err(src, where, "needs a 'value' column (or 'upper'/'lower' limit columns)")
    if ("minus" in kw) != ("plus" in kw):
        raise _err(src, where, "give both 'minus' and 'plus' columns, or 'err'")
    return FieldMap(name=name, scope=scope, **kw)


def _check_unit(src, where, unit, fld):
    try:
        q = u.Unit(unit)
    except (ValueError, TypeError):
        raise _err(src, f"{where} unit", f"'{clip(unit)}' is not a unit astropy understands") from None
    want = u.Unit(fld.unit) if fld is not None and fld.unit else u.dimensionless_unscaled
    if fld is None or not q.is_equivalent(want):
        raise _err(src, f"{where} unit", f"'{clip(unit)}' does not convert to {fld.unit if fld and fld.unit else 'a dimensionless unit'}")


def load_column_map(path) -> ColumnMap:
    """Read and validate a column-map TOML file (format in the module docstring)."""
    src = str(path)
    blob = read_input_bytes(path, "column map (.toml)", allow_empty=True)
    from ..limits import parse_toml
    try:
        text = blob.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(f"{src}: not UTF-8 text") from None
    data = parse_toml(text, src, "column map")
    for k in data:
        if k not in ("keys", "aliases", "star", "planet", "system", "notes"):
            raise _err(src, "", f"unknown table [{k}]{_suggest(k, ('keys', 'aliases', 'star', 'planet', 'system'))}")
    keys = data.get("keys", {})
    if not isinstance(keys, dict) or not isinstance(keys.get("system"), str):
        raise _err(src, "[keys]", "needs system = \"<column naming the system>\"")
    for k in keys:
        if k not in ("system", "planet"):
            raise _err(src, "[keys]", f"unknown key '{k}'{_suggest(k, ('system', 'planet'))}")
    aliases = data.get("aliases", {})
    if not isinstance(aliases, dict) or not all(isinstance(v, str) for v in aliases.values()):
        raise _err(src, "[aliases]", "must map names to column names (strings)")
    fields = []
    for scope in _SCOPES:
        table = data.get(scope, {})
        if not isinstance(table, dict):
            raise _err(src, f"[{scope}]", "must be a table of field tables")
        known = _fields_for(scope)
        for name, spec in table.items():
            if name not in known:
                raise _err(src, f"[{scope}.{name}]", f"unknown {scope} field{_suggest(name, known)}")
            fields.append(_field_from_toml(src, scope, name, spec, known[name]))
    planet = keys.get("planet")
    if planet is not None and not isinstance(planet, str):
        raise _err(src, "[keys] planet", "must be a column name (string)")
    return ColumnMap(source=src, sha256=hashlib.sha256(blob).hexdigest(), system=keys["system"],
                     planet=planet, fields=tuple(fields), aliases=dict(aliases))


def bind(cmap: ColumnMap, cat) -> ColumnMap:
    """Check the map against a table's columns and parse ``msini_when`` (fatal errors)."""
    src = cat.path
    cols = set(cat.columns)
    tag = "" if cmap.source == "canonical columns" else f" (column map {cmap.source})"

    def need(col, what):
        if col not in cols:
            hint = _suggest(col, cat.columns)
            raise InputError(f"{src}: column '{col}' not found; it is needed for {what}{tag}{hint}")

    need(cmap.system, "the system name")
    if cmap.planet:
        need(cmap.planet, "the planet name")
    labels = {f.label for f in cmap.fields}
    for req, what in (("star_mass", "the stellar mass (solar masses)"), ("period", "the period (days)")):
        if req not in labels:
            col = "star_mass" if req == "star_mass" else "period"
            if tag:
                raise InputError(f"{cmap.source}: no mapping for {what}; add "
                                 f"[{'star.mass' if req == 'star_mass' else 'planet.period'}]")
            raise InputError(f"{src}: missing required column '{col}' ({what}); "
                             f"or pass --columns MAP.toml to map your column names")
    for a, c in cmap.aliases.items():
        need(c, f"alias '{a}'")
    names = where_names(cmap, cat.columns)
    out = []
    for f in cmap.fields:
        for key, col in f.columns():
            need(col, f"{f.scope} field '{f.name}' ({key})")
            if key != "limit" and f.name != "transiting":
                _check_numeric_column(cat, col, f)
        if f.msini_when:
            parsed = tuple(parse_where(e, names, where=f"{cmap.source}: [planet.mass] msini_when {e!r}")
                           for e in f.msini_when)
            f = FieldMap(**{**f.__dict__, "msini_when": parsed})
        out.append(f)
    return ColumnMap(source=cmap.source, sha256=cmap.sha256, system=cmap.system, planet=cmap.planet,
                     fields=tuple(out), aliases=cmap.aliases)


def _to_float(x):
    """A cell as a number in plain decimal notation (see catalog.parse_number), or None."""
    return parse_number(x)


def _check_numeric_column(cat, col, f):
    """A column with cells but not one number is a mapping mistake (fatal)."""
    first = None
    for v in cat.iter_column(col):            # rows unpacked one by one, up to the first number
        if v is None:
            continue
        if _to_float(v) is not None:
            return
        if first is None:
            first = v
    if first is not None:
        raise InputError(f"{cat.path}: column '{col}' (mapped to {f.scope} field '{f.name}') holds no "
                         f"numbers (first cell {first!r:.30}); check the column map")


# rows -> system mapping lives in .mapping; re-exported here for older imports
from .mapping import system_mapping  # noqa: E402,F401
