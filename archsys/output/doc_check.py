"""Validation of what archsys reads back: report documents (JSON) and saved chains (.npz).

These files come from archsys, but a user may hand over any file under those
names; they are checked like system files before anything is drawn from them,
each problem one :class:`~archsys.errors.InputError` line naming the file and
the key:

* documents: an object with a ``system`` name and a ``planets`` list of
  objects, each with a ``name``; names are text of at most 200 characters
  without control characters (ESC, BEL, NUL, ... as for system files);
  ``pairs`` and ``star``, when present, a list of objects and an object;
  numbers finite, period and semi-major-axis medians positive, eccentricity
  medians in [0, 1);
* chains: the draws are finite where known (NaN means unknown, as in a
  posterior; infinite values are refused), periods are finite and positive
  in every draw, semi-major axes and masses non-negative, eccentricities in
  [0, 1), and the metadata names follow the document rules.
"""
from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from ..model.checks import has_control

__all__ = ["check_document", "check_name", "check_draws", "MAX_NAME_CHARS"]

from ..limits import MAX_NAME_CHARS  # noqa: E402  (the same limit as system files)


def check_name(name, source, what):
    """Refuse a system or planet name that is not short, printable text."""
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"{source}: {what} must be a non-empty text; got {type(name).__name__}")
    if has_control(name):
        raise InputError(f"{source}: {what} holds a control character (e.g. an escape sequence); "
                         f"names must be printable text")
    if len(name) > MAX_NAME_CHARS:
        raise InputError(f"{source}: {what} has {len(name)} characters; at most {MAX_NAME_CHARS}")
    return name


def _finite_everywhere(doc, source):
    """Refuse a number that is not finite anywhere in ``doc`` (archsys writes JSON without NaN/inf)."""
    stack = [(doc, "")]
    while stack:
        x, where = stack.pop()
        if isinstance(x, float) and not math.isfinite(x):
            raise InputError(f"{source}: '{where.lstrip('.')[:80]}' is {x}; a report document holds finite "
                             f"numbers only")
        if isinstance(x, dict):
            stack.extend((v, f"{where}.{k}") for k, v in x.items())
        elif isinstance(x, list):
            stack.extend((v, f"{where}[{i}]") for i, v in enumerate(x))


def _median(x):
    v = x.get("median") if isinstance(x, dict) else x
    return v if isinstance(v, (int, float)) and not isinstance(v, bool) else None


def check_document(doc, source, strict=True):
    """Refuse a report document whose structure or names archsys would not have written.

    ``strict``: also refuse non-finite numbers anywhere (a document file; the copy inside saved
    chains may carry NaN in its sampler notes)."""
    if not isinstance(doc, dict):
        raise InputError(f"{source}: not an archsys report document (a JSON object was expected, "
                         f"got {type(doc).__name__})")
    if "planets" not in doc:
        raise InputError(f"{source}: not an archsys report document (no 'planets')")
    check_name(doc.get("system"), source, "'system'")
    planets = doc["planets"]
    if not isinstance(planets, list) or not planets:
        raise InputError(f"{source}: 'planets' must be a non-empty list of objects; "
                         f"got {type(planets).__name__}")
    for i, p in enumerate(planets):
        if not isinstance(p, dict):
            raise InputError(f"{source}: 'planets[{i}]' must be an object; got {type(p).__name__}")
        check_name(p.get("name"), source, f"'planets[{i}].name'")
        for key, lo in (("period_days", 0.0), ("a_au", 0.0)):
            v = _median(p.get(key))
            if v is not None and not (math.isfinite(v) and v > lo):
                raise InputError(f"{source}: 'planets[{i}].{key}' median is {v}; it must be positive")
        e = _median(p.get("ecc"))
        if e is not None and not (0.0 <= e < 1.0):
            raise InputError(f"{source}: 'planets[{i}].ecc' median is {e}; it must be in [0, 1)")
    if "pairs" in doc and (not isinstance(doc["pairs"], list) or not all(isinstance(q, dict) for q in doc["pairs"])):
        raise InputError(f"{source}: 'pairs' must be a list of objects")
    if "star" in doc and doc["star"] is not None and not isinstance(doc["star"], dict):
        raise InputError(f"{source}: 'star' must be an object")
    if strict:
        _finite_everywhere(doc, source)
    return doc


#: key -> (lowest, highest, upper bound included) of finite draws (internal units: day, M_sun, au, rad)
_RANGES = {"period": (0.0, np.inf, False), "a": (0.0, np.inf, False), "ecc": (0.0, 1.0, False),
           "mass": (0.0, np.inf, True), "msini": (0.0, np.inf, True), "m_star": (0.0, np.inf, False),
           "r_star": (0.0, np.inf, False), "radius": (0.0, np.inf, True)}


def check_draws(draws, source):
    """Refuse draws with infinite values, non-positive or unknown periods, or values out of range."""
    for key, arr in draws.items():
        a = np.asarray(arr, dtype=float)
        if np.isinf(a).any():
            raise InputError(f"{source}: draws {key!r} hold infinite values")
        lo_hi = _RANGES.get(key)
        if lo_hi is None:
            continue
        lo, hi, closed = lo_hi
        fin = a[np.isfinite(a)]
        if key == "period" and fin.size != a.size:
            raise InputError(f"{source}: draws 'period' hold unknown (NaN) values; every draw needs a period")
        below = fin < lo if key not in ("period", "a", "m_star", "r_star") else fin <= lo
        above = fin > hi if closed else fin >= hi
        if below.any() or above.any():
            bad = fin[below | above][0]
            rng = f"({lo:g}, {hi:g})" if key in ("period", "a", "m_star", "r_star") else f"[{lo:g}, {hi:g})"
            raise InputError(f"{source}: draws {key!r} hold {bad:g}, outside {rng}")
    return draws
