"""One field of a system file to a :class:`~archsys.model.quantity.Measurement`: units, limits,
asymmetric errors and the field's physical support, every problem collected as one line.
"""
from __future__ import annotations

import difflib
import math

import astropy.units as u

from ..errors import InputError
from ..limits import clip
from .quantity import Measurement
from .schema import QUANTITY_KEYS, Field

__all__ = ["parse_quantity"]


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


#: (unit, canonical unit) -> conversion factor; a catalogue has a handful of units and many rows.
_FACTORS: dict = {}


def _factor(unit_str, canonical):
    """The factor that converts a number in ``unit_str`` to ``canonical`` (every unit taken is linear).

    astropy's ``(x * unit).to_value(canonical)`` is ``x * factor`` (or ``x`` itself where the factor is
    unity to rounding), so multiplying by the factor found once gives the same float as converting
    each number through astropy, at a fraction of the cost.
    """
    key = (unit_str, canonical)
    f = _FACTORS.get(key)
    if f is None:
        src = u.Unit(unit_str)
        if not isinstance(src, u.UnitBase):  # logarithmic units such as dex(m/s) are not linear
            raise u.UnitsError(f"'{unit_str}' is not a linear unit")
        dst = u.Unit(canonical) if canonical else u.dimensionless_unscaled
        f = float((1.0 * src).to_value(dst))
        if len(_FACTORS) > 1024:
            _FACTORS.clear()
        _FACTORS[key] = f
    return f


def _convert(x, unit_str, fld: Field):
    """Convert number x from unit_str to the field's canonical unit."""
    if unit_str is None or unit_str == fld.unit:
        return float(x)
    f = _factor(unit_str, fld.unit)
    return float(x) * f          # a float product overflows to inf (reported by the caller), never raises


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
