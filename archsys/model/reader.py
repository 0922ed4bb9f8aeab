"""Read and validate system files (TOML, archsys schema).

The schema is documented in README.md ("System files").  Every problem found is
reported as one line naming the file, the planet and the field; all problems
of a file are collected and raised together as one :class:`InputError`.
"""
from __future__ import annotations

import difflib
import hashlib
import math

import astropy.units as u
import numpy as np

from ..limits import MAX_NAME_CHARS, clip
from ..errors import InputError
from .inputfile import read_input_bytes
from .quantity import Measurement
from .checks import InputWarning, check_notes as _check_notes, cross_checks as _cross_checks, \
    has_control as _has_control, mass_checks as _mass_checks, phase_checks as _phase_checks, \
    phase_span_check as _phase_span_check
from .schema import (EPOCH_FIELD, PLANET_FIELDS, PLANET_META_KEYS, QUANTITY_KEYS, STAR_FIELDS,
                     STAR_META_KEYS, TOP_KEYS, Field)
from .system import Planet, Star, System

__all__ = ["read_system", "build_system", "parse_quantity", "MAX_PLANETS", "REFERENCE_PLANES", "InputWarning"]

#: Largest system we accept; far above any known system, it bounds memory use.
MAX_PLANETS = 64
#: Values of the top-level key ``reference_plane`` (what ``inclination`` is measured from): the sky
#: plane of RV and transit work, or the ecliptic / invariable plane of solar-system elements.
REFERENCE_PLANES = ("sky", "ecliptic", "invariable")



class _Problems:
    def __init__(self, source):
        self.source = source
        self.lines = []

    def add(self, where, msg):
        line = f"{self.source}: {where}: {msg}" if where else f"{self.source}: {msg}"
        # user text (names, units, keys) may hold newlines: escape them to keep one line per problem
        self.lines.append("".join(c if c.isprintable() else repr(c)[1:-1] for c in line))

    def raise_if_any(self):
        if self.lines:
            err = InputError(self.lines[0])
            err.problems = list(self.lines)
            err.args = ("\n".join(self.lines),)
            raise err


def _suggest(key, known):
    close = difflib.get_close_matches(key, list(known), n=1, cutoff=0.5)
    return f" (did you mean '{close[0]}'?)" if close else ""


def _is_number(x):
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _is_finite(x):
    """math.isfinite that also copes with TOML integers beyond the float range."""
    try:
        return math.isfinite(x)
    except OverflowError:
        return False


def _convert(x, unit_str, fld: Field):
    """Convert number x from unit_str to the field's canonical unit."""
    if unit_str is None or unit_str == fld.unit:
        return float(x)
    src = u.Unit(unit_str)
    if not isinstance(src, u.UnitBase):  # logarithmic units such as dex(m/s) are not linear
        raise u.UnitsError(f"'{unit_str}' is not a linear unit")
    dst = u.Unit(fld.unit) if fld.unit else u.dimensionless_unscaled
    with np.errstate(over="ignore", invalid="ignore"):   # overflow is reported by the caller
        return float((x * src).to_value(dst))


#: Required fields that must be measured, not bounded (field -> prefix of its location).
_NO_LIMITS = {"period": "planet", "mass": "star"}


def parse_quantity(raw, fld: Field, where: str, problems: _Problems):
    """Parse one quantity (number or table) into a Measurement, or None on error."""
    name = fld.name
    loc = f"{where}field '{name}'"
    if _is_number(raw):
        spec = {"value": raw}
    elif isinstance(raw, dict):
        spec = dict(raw)
    else:
        problems.add(loc, f"expected a number or a table like {{value, err}}; got {type(raw).__name__} {raw!r:.40}")
        return None
    for k in spec:
        if k not in QUANTITY_KEYS:
            problems.add(loc, f"unknown key '{k}'{_suggest(k, QUANTITY_KEYS)}")
            return None
    unit_str = spec.pop("unit", None)
    if unit_str is not None:
        if not isinstance(unit_str, str):
            problems.add(loc, f"unit must be a string; got {unit_str!r:.40}")
            return None
        try:
            _convert(1.0, unit_str, fld)
        except (ValueError, u.UnitsError, TypeError, ArithmeticError):
            want = fld.unit or "a dimensionless unit"
            problems.add(loc, f"unit '{clip(unit_str)}' does not convert to {want}")
            return None
    for k, v in spec.items():
        if not _is_number(v):
            problems.add(loc, f"'{k}' must be a number; got {v!r:.40}")
            return None
        if not _is_finite(v):
            shown = v if isinstance(v, float) else "an integer beyond the float range"
            problems.add(loc, f"'{k}' must be finite; got {shown}")
            return None
    has_val = "value" in spec
    lims = [k for k in ("upper", "lower") if k in spec]
    if has_val and lims:
        problems.add(loc, f"give either 'value' or '{lims[0]}', not both")
        return None
    if not has_val and not lims:
        problems.add(loc, "needs 'value', 'upper' or 'lower'")
        return None
    if len(lims) == 2:
        problems.add(loc, "give only one of 'upper' and 'lower'")
        return None
    if ("minus" in spec) != ("plus" in spec):
        given, missing = ("minus", "plus") if "minus" in spec else ("plus", "minus")
        problems.add(loc, f"'{given}' given without '{missing}'")
        return None
    if "err" in spec and "minus" in spec:
        problems.add(loc, "give either 'err' or 'minus'/'plus', not both")
        return None
    for k in ("err", "minus", "plus"):
        if k in spec and spec[k] < 0:
            problems.add(loc, f"'{k}' must not be negative; got {spec[k]}")
            return None
    if lims and any(k in spec for k in ("err", "minus", "plus")):
        problems.add(loc, f"a limit ('{lims[0]}') takes no errors; use 'cl' for its confidence level")
        return None
    cl = spec.get("cl", 0.95)
    if "cl" in spec and not lims:
        problems.add(loc, "'cl' applies only to an 'upper' or 'lower' limit")
        return None
    if not 0.0 < cl < 1.0:
        problems.add(loc, f"'cl' must be in (0, 1); got {cl}")
        return None
    if fld.periodic and lims:
        problems.add(loc, "an angle defined modulo 360 deg cannot take a limit")
        return None
    if lims and name in _NO_LIMITS and where.startswith(_NO_LIMITS[name]):
        problems.add(loc, f"needs a measured value; a limit ('{lims[0]}') cannot define it")
        return None

    # convert to canonical units (errors scale linearly; all our units are linear)
    conv = lambda x: _convert(x, unit_str, fld)  # noqa: E731
    scale = abs(conv(1.0) - conv(0.0)) if unit_str else 1.0
    lo, hi = fld.support
    if has_val:
        value = conv(spec["value"])
        if "err" in spec:
            minus = plus = spec["err"] * scale
            kind = "normal"
        elif "minus" in spec:
            minus, plus = spec["minus"] * scale, spec["plus"] * scale
            kind = "asym" if minus != plus else "normal"
        else:
            minus = plus = 0.0
            kind = "exact"
        if kind != "exact" and minus == 0 and plus == 0:
            kind = "exact"
        if not all(math.isfinite(x) for x in (value, minus, plus)):
            problems.add(loc, f"value or error overflows when converted from '{clip(unit_str)}' to {fld.unit}")
            return None
        if not _in_support(value, fld, problems, loc, "value"):
            return None
        if fld.sane is not None and kind != "exact" and value + plus > fld.sane[1]:
            problems.add(loc, f"value + error = {value + plus:g} {fld.unit} reaches beyond the largest "
                              f"accepted value {fld.sane[1]:g} {fld.unit} ({fld.sane_reason})")
            return None
        return Measurement(kind, value=value, minus=minus, plus=plus,
                           support=fld.support, unit=fld.unit)
    kind = lims[0]
    limit = conv(spec[kind])
    if not math.isfinite(limit):
        problems.add(loc, f"limit overflows when converted from '{clip(unit_str)}' to {fld.unit}")
        return None
    if not _in_support(limit, fld, problems, loc, kind):
        return None
    if kind == "upper" and limit <= lo and math.isfinite(lo):
        problems.add(loc, f"upper limit {limit} leaves no room above the physical minimum {lo}")
        return None
    if kind == "lower" and math.isfinite(hi) and limit >= hi:
        problems.add(loc, f"lower limit {limit} leaves no room below the physical maximum {hi}")
        return None
    return Measurement(kind, limit=limit, cl=cl, support=fld.support, unit=fld.unit)


def _in_support(x, fld, problems, loc, key):
    lo, hi = fld.support
    unit = f" {fld.unit}" if fld.unit else ""
    if fld.positive and x <= 0:
        problems.add(loc, f"{key} must be positive; got {x:g}{unit}")
        return False
    if fld.sane is not None and not fld.sane[0] <= x <= fld.sane[1]:
        problems.add(loc, f"{key} {x:g}{unit} is outside the range archsys accepts, "
                          f"[{fld.sane[0]:g}, {fld.sane[1]:g}]{unit} ({fld.sane_reason})")
        return False
    if x < lo or x > hi or (x == hi and not fld.closed_hi):
        br = ")" if not fld.closed_hi else "]"
        problems.add(loc, f"{key} must be in [{lo:g}, {hi:g}{br}; got {x:g}{unit}")
        return False
    return True


def build_system(data: dict, source: str = "<memory>", sha256: str = "") -> System:
    """Validate a parsed system mapping and build a :class:`System`."""
    P = _Problems(source)
    if not isinstance(data, dict):
        P.add("", "expected a table at top level")
        P.raise_if_any()
    if not data:
        P.add("", "holds no system (only comments or blank lines); see README 'System files'")
        P.raise_if_any()
    meant = set()       # what misspelt keys were probably meant as: no second line for their absence
    for k in data:
        if k not in TOP_KEYS:
            hint = _suggest(k, TOP_KEYS)
            meant.add(_meant(k, TOP_KEYS, data.get(k)))
            P.add("", f"unknown top-level key '{k}'{hint}")
    name = data.get("name")
    if name is None:
        if "name" not in meant:
            P.add("", "missing required field 'name'")
    elif not isinstance(name, str) or not name.strip():
        P.add("field 'name'", f"must be a non-empty string; got {name!r:.40}")
    elif _has_control(name):
        P.add("field 'name'", "contains control characters (NUL, escape sequences, line breaks); "
                              "names must be printable text")
    elif len(name) > MAX_NAME_CHARS:
        P.add("field 'name'", f"has {len(name)} characters; a name may have at most {MAX_NAME_CHARS}")
    rp = data.get("reference_plane")
    if rp is not None and rp not in REFERENCE_PLANES:
        P.add("field 'reference_plane'", f"must be one of {', '.join(repr(x) for x in REFERENCE_PLANES)} "
                                         f"(the plane inclinations are measured from); got {rp!r:.40}")
    _check_notes(data.get("notes"), "field 'notes'", P)
    epoch = None
    if "epoch" in data:
        em = parse_quantity(data["epoch"], EPOCH_FIELD, "", P)
        if em is not None and em.kind != "exact":
            P.add("field 'epoch'", "is a reference time (a definition, not a measurement): give a number "
                                   "of days, without errors or limits")
        elif em is not None:
            epoch = float(em.value)

    star = None
    star_raw = data.get("star")
    if star_raw is None:
        if "star" not in meant:
            P.add("", "missing required table [star]")
    elif not isinstance(star_raw, dict):
        P.add("", "'star' must be a table [star]")
    else:
        sq = {}
        star_meant = set()
        for k, v in star_raw.items():
            if k in STAR_META_KEYS:
                continue
            if k not in STAR_FIELDS:
                known = list(STAR_FIELDS) + list(STAR_META_KEYS)
                if k in ("planet", "planets"):
                    meant.add("planet")
                    P.add("star", f"unknown key '{k}': planets go in [[planet]] tables at the top level, "
                                  f"not inside [star]")
                    continue
                star_meant.add(_meant(k, known, v))
                P.add("star", f"unknown key '{k}'{_suggest(k, known)}")
                continue
            m = parse_quantity(v, STAR_FIELDS[k], "star: ", P)
            if m is not None:
                sq[k] = m
        if "mass" not in star_raw and "mass" not in star_meant:
            P.add("star", "missing required field 'mass' (solar masses)")
        sname = star_raw.get("name")
        if sname is not None and not isinstance(sname, str):
            P.add("star", f"field 'name' must be a string; got {sname!r:.40}")
        elif sname is not None and _has_control(sname):
            P.add("star", "field 'name' contains control characters; names must be printable text")
        _check_notes(star_raw.get("notes"), "star: field 'notes'", P)
        if "mass" in sq:
            star = Star(mass=sq["mass"], radius=sq.get("radius"), density=sq.get("density"),
                        name=star_raw.get("name"))

    planets = []
    praw = data.get("planet")
    if praw is None:
        if "planet" not in meant:
            P.add("", "no planets: add at least one [[planet]] table")
        praw = []
    elif not isinstance(praw, list):
        P.add("", "'planet' must be an array of tables [[planet]]")
        praw = []
    elif not praw:
        P.add("", "no planets: add at least one [[planet]] table")
    if len(praw) > MAX_PLANETS:
        P.add("", f"{len(praw)} planets in one system; archsys accepts at most {MAX_PLANETS}")
        P.raise_if_any()
    seen = {}
    for idx, pr in enumerate(praw, start=1):
        if not isinstance(pr, dict):
            P.add(f"planet #{idx}", "must be a table")
            continue
        pname = pr.get("name")
        if pname is None:
            P.add(f"planet #{idx}", "missing required field 'name'")
            pname = f"#{idx}"
        elif not isinstance(pname, str) or not pname.strip():
            P.add(f"planet #{idx}", f"field 'name' must be a non-empty string; got {pname!r:.40}")
            pname = f"#{idx}"
        elif _has_control(pname):
            P.add(f"planet #{idx}", "field 'name' contains control characters (NUL, escape sequences, "
                                    "line breaks); names must be printable text")
            pname = f"#{idx}"
        elif len(pname) > MAX_NAME_CHARS:
            P.add(f"planet #{idx}", f"field 'name' has {len(pname)} characters; a name may have at most "
                                    f"{MAX_NAME_CHARS}")
            pname = f"#{idx}"
        elif pname in seen:
            P.add(f"planet '{pname}'", f"duplicate planet name (also planet #{seen[pname]})")
        seen.setdefault(pname, idx)
        where = f"planet '{pname}'"
        q = {}
        pl_meant = set()
        for k, v in pr.items():
            if k in PLANET_META_KEYS:
                continue
            if k not in PLANET_FIELDS:
                known = list(PLANET_FIELDS) + list(PLANET_META_KEYS)
                pl_meant.add(_meant(k, known, v))
                P.add(where, f"unknown key '{k}'{_suggest(k, known)}")
                continue
            m = parse_quantity(v, PLANET_FIELDS[k], where + ": ", P)
            if m is not None:
                q[k] = m
        tr = pr.get("transiting")
        if tr is not None and not isinstance(tr, bool):
            P.add(where, f"field 'transiting' must be true or false; got {tr!r:.40}")
            tr = None
        _check_notes(pr.get("notes"), f"{where}: field 'notes'", P)
        if "period" not in pr and "period" not in pl_meant:
            P.add(where, "missing required field 'period' (days)")
        _cross_checks(q, star, where, P)
        _phase_checks(q, tr, "epoch" in data, where, P)
        _mass_checks(q, star, where, P, source)
        _plane_checks(q, tr, data.get("reference_plane", "sky"), where, P)
        if "period" in q:
            planets.append(Planet(name=pname, period=q.pop("period"), quantities=q, transiting=tr))
    P.raise_if_any()
    planets.sort(key=lambda p: p.period.center)
    for p1, p2 in zip(planets, planets[1:]):
        if p1.period.center == p2.period.center:
            P.add(f"planet '{p2.name}'", f"field 'period': same period as planet '{p1.name}' "
                                          f"({p1.period.center:g} d); co-orbital planets are not supported")
    P.raise_if_any()
    times = [(f"'{p.name}' {k}", p.quantities[k].center) for p in planets
             for k in ("transit_time", "periastron_time") if k in p.quantities]
    _phase_span_check(times + ([("epoch", epoch)] if epoch is not None else []), source)
    return System(name=name.strip(), star=star, planets=tuple(planets), source=source, sha256=sha256,
                  reference_plane=str(data.get("reference_plane", "sky")), epoch=epoch)


#: Fields whose meaning needs inclinations measured from the sky (the line of sight).
SKY_FIELDS = ("k", "msini", "b", "ror", "transit_time")


def _plane_checks(q, transiting, plane, where, P):
    """Inclinations from the ecliptic or the invariable plane cannot be combined with sky-plane data."""
    if plane in (None, "sky") or plane not in REFERENCE_PLANES:
        return
    bad = [k for k in SKY_FIELDS if k in q] + (["transiting"] if transiting else [])
    if bad:
        P.add(where, f"field '{bad[0]}' needs sky inclinations, but reference_plane = '{plane}' measures "
                     "inclinations from another plane; give sky inclinations (reference_plane = 'sky') or leave "
                     f"out {', '.join(repr(b) for b in bad)}")


def _meant(key, known, value=None):
    """The known key a misspelt ``key`` probably stands for (None if none is close)."""
    close = difflib.get_close_matches(key, list(known), n=1, cutoff=0.5)
    return close[0] if close else None


def read_system(path) -> System:
    """Read and validate a system file.

    Raises
    ------
    InputError
        One line per problem, each naming file, planet and field.
    """
    src = str(path)
    blob = read_input_bytes(path, "system file (.toml)")
    try:
        text = blob.decode("utf-8-sig")  # tolerate a UTF-8 byte-order mark
    except UnicodeDecodeError as exc:
        if blob[:2] in (b"\xff\xfe", b"\xfe\xff"):
            raise InputError(f"{src}: UTF-16 text; save the file as UTF-8") from None
        raise InputError(f"{src}: not UTF-8 text (byte {exc.start}); save the file as UTF-8") from None
    if "\x00" in text:
        raise InputError(f"{src}: contains NUL bytes; not a text system file")
    from ..limits import parse_toml
    data = parse_toml(text, src, "system file")
    return build_system(data, source=src, sha256=hashlib.sha256(blob).hexdigest())
