"""Read and validate system files (TOML, archsys schema).

The schema is documented in README.md ("System files").  Every problem found is
reported as one line naming the file, the planet and the field; all problems
of a file are collected and raised together as one :class:`InputError`.
"""
from __future__ import annotations

import difflib
import hashlib


from ..limits import MAX_NAME_CHARS
from ..errors import InputError
from .inputfile import read_input_bytes
from .checks import check_notes as _check_notes, cross_checks as _cross_checks, has_control as _has_control, mass_checks as _mass_checks, phase_checks as _phase_checks, phase_span_check as _phase_span_check
from .schema import EPOCH_FIELD, PLANET_FIELDS, PLANET_META_KEYS, STAR_FIELDS, STAR_META_KEYS, TOP_KEYS
from .system import Planet, Star, System

from .quantity_parse import _Problems, _suggest, parse_quantity

__all__ = ["MAX_PLANETS", "REFERENCE_PLANES", "build_system", "SKY_FIELDS", "read_system"]

#: Largest system we accept; far above any known system, it bounds memory use.
MAX_PLANETS = 64
#: Values of the top-level key ``reference_plane`` (what ``inclination`` is measured from): the sky
#: plane of RV and transit work, or the ecliptic / invariable plane of solar-system elements.
REFERENCE_PLANES = ("sky", "ecliptic", "invariable")


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
