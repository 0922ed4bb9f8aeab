"""Validation rules of a system file that involve more than one field.

Each rule adds one line per problem to the reader's problem list (see
:mod:`archsys.model.reader`); doubtful but possible input gives one
:class:`InputWarning` line instead.
"""
from __future__ import annotations

import math
import warnings

from ..physics.constants import MEARTH_MSUN
from ..physics.kepler import msini_from_k_msun

__all__ = ["InputWarning", "has_control", "check_notes", "mass_checks", "cross_checks", "phase_checks",
           "phase_span_check", "PHASE_SPAN_WARN_DAYS"]

#: Times of one system spread over more than this many days probably mix zero points (BJD against
#: BJD - 2450000, or a Kepler/TESS offset); a one-line warning says so (common practice: ~270 yr).
PHASE_SPAN_WARN_DAYS = 1e5


class InputWarning(UserWarning):
    """Accepted input that is probably a mistake (shown as one line)."""


def has_control(text):
    """True when ``text`` holds a control character (NUL, escape, line break, ...); tabs are allowed."""
    return any(not c.isprintable() and c not in "\t" for c in str(text))


def check_notes(notes, loc, P):
    if notes is None:
        return
    items = notes if isinstance(notes, list) else [notes]
    if not all(isinstance(x, str) for x in items):
        P.add(loc, f"must be text (a string or a list of strings); got {notes!r:.40}")


def mass_checks(q, star, where, P, source):
    """m sin i against the true mass, and the true mass implied by K or m sin i with an inclination."""
    if "msini" in q and "mass" in q:
        a, b = q["msini"], q["mass"]
        if a.value is not None and b.value is not None:
            if a.value - a.minus > b.value + b.plus:
                P.add(where, f"field 'msini': m sin i = {a.value:g} M_earth exceeds the true mass 'mass' = "
                             f"{b.value:g} M_earth beyond their errors; m sin i cannot exceed the mass")
            elif a.value > b.value:
                warnings.warn(InputWarning(f"{source}: {where}: m sin i ({a.value:g} M_earth) is above the "
                                           f"true mass ({b.value:g} M_earth), though within the errors"))
    inc = q.get("inclination")
    if inc is None or inc.center is None or star is None or "mass" in q:
        return
    mstar = star.mass.center
    if "msini" in q and q["msini"].center is not None:
        msini = q["msini"].center * MEARTH_MSUN
        via = f"m sin i = {q['msini'].center:g} M_earth"
    elif "k" in q and q["k"].center is not None and "period" in q:
        msini = float(msini_from_k_msun(q["period"].center, q["k"].center, mstar))
        via = f"K = {q['k'].center:g} m/s"
    else:
        return
    sin_i = abs(math.sin(math.radians(inc.center)))
    if sin_i * mstar <= msini:
        P.add(where, f"field 'inclination': i = {inc.center:g} deg with {via} implies a true mass "
                     f"m sin i / sin i not below the stellar mass ({mstar:g} M_sun); an orbit this close to "
                     f"face-on cannot give the measured signal")


def cross_checks(q, star, where, P):
    """Rules that involve more than one field of a planet."""
    pairs = [("secosw", "sesinw"), ("ecosw", "esinw")]
    for a, b in pairs:
        if (a in q) != (b in q):
            have, miss = (a, b) if a in q else (b, a)
            P.add(where, f"field '{have}' needs its partner '{miss}'")
    given = [k for k in ("ecc", "secosw", "ecosw") if k in q]
    if len(given) > 1:
        P.add(where, f"give eccentricity one way only; got {', '.join(given)}")
    for a, b in pairs:
        if a in q and b in q and q[a].value is not None and q[b].value is not None:
            r2 = q[a].value ** 2 + q[b].value ** 2
            e = r2 if a == "secosw" else math.sqrt(r2)
            if e >= 1:
                P.add(where, f"fields '{a}', '{b}' imply e = {e:.3g}; must be < 1")
    if star is not None and star.mass.center:
        mstar_mearth = star.mass.center / MEARTH_MSUN
        for k in ("mass", "msini"):
            if k in q and q[k].center is not None and q[k].center >= mstar_mearth:
                P.add(where, f"field '{k}': planet mass {q[k].center:g} M_earth is not below "
                             f"the stellar mass ({mstar_mearth:g} M_earth)")


def phase_checks(q, transiting, has_epoch, where, P):
    """The phase of one planet: at most one of transit_time / periastron_time / mean_longitude,
    no limits on them, a transit time only for a planet that may transit, a mean longitude only
    with the system's ``epoch``."""
    given = [k for k in ("transit_time", "periastron_time", "mean_longitude") if k in q]
    if len(given) > 1:
        P.add(where, f"give the phase one way only; got {', '.join(given)} (they state the same phase)")
    for k in given:
        if q[k].is_limit:
            P.add(where, f"field '{k}': a phase takes a value (with errors), not a limit")
    if "transit_time" in q and transiting is False:
        P.add(where, "field 'transit_time' given for a planet with transiting = false")
    if "mean_longitude" in q and not has_epoch:
        P.add(where, "field 'mean_longitude' needs the top-level 'epoch' (the time it refers to, in days)")


def phase_span_check(times, source):
    """One warning when the given times (transit/periastron times, epoch) span more than
    :data:`PHASE_SPAN_WARN_DAYS`: they probably use different zero points."""
    if len(times) < 2:
        return
    lo, hi = min(times, key=lambda x: x[1]), max(times, key=lambda x: x[1])
    if hi[1] - lo[1] > PHASE_SPAN_WARN_DAYS:
        warnings.warn(f"{source}: times {lo[0]} = {lo[1]:.10g} and {hi[0]} = {hi[1]:.10g} days are "
                      f"{hi[1] - lo[1]:.3g} days apart; do all times use one zero point (e.g. BJD_TDB)?",
                      InputWarning, stacklevel=3)
