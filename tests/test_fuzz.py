"""Fuzzing the system-file reader: anything either parses into a valid System or raises
archsys.errors.InputError, never another exception (common practice for input parsers)."""
import math
import re
import warnings

import pytest

from archsys.compat import tomllib
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from archsys.errors import InputError
from archsys.inference.draws import direct_draws
from archsys.model.reader import MAX_PLANETS, build_system, read_system
from archsys.model.schema import PLANET_FIELDS, QUANTITY_KEYS, STAR_FIELDS, TOP_KEYS
from archsys.model.system import System

FUZZ = settings(max_examples=150, deadline=None,
                suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])

# ------------------------------------------------------------------ strategies
numbers = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(-10.0, 10.0),
    st.integers(-(10**25), 10**25),
    st.sampled_from([0, 1, -1, 0.5, 0.999999, 1.0, 1e-300, 1e300, 3.0, 365.25, 1e5, 10**400]),
)
units = st.one_of(
    st.sampled_from(["day", "yr", "h", "kg", "m / s", "km/s", "deg", "rad", "jupiterMass", "earthMass",
                     "solMass", "solRad", "earthRad", "g / cm3", "", "%", "dex(m/s)", "8day88", "1e300 d",
                     "fortnights", "mag"]),
    st.text(max_size=8),
)
junk = st.one_of(st.none(), st.booleans(), st.text(max_size=6), numbers,
                 st.lists(st.integers(-3, 3), max_size=3), st.dictionaries(st.text(max_size=4), st.integers(), max_size=2))
quantity_table = st.dictionaries(
    st.sampled_from(QUANTITY_KEYS + ("error", "sigma")),
    st.one_of(numbers, units, st.booleans()), max_size=4)
quantity = st.one_of(numbers, quantity_table, junk)
names = st.one_of(st.text(min_size=1, max_size=6), st.sampled_from(["b", "c", "b ", "  "]), junk)


def _table(fields, extra):
    opt = {k: quantity for k in fields}
    opt.update(extra)
    return st.fixed_dictionaries({}, optional=opt)


star = st.one_of(_table(STAR_FIELDS, {"name": names, "notes": junk, "mas": quantity}), junk)
planet = st.one_of(
    _table(PLANET_FIELDS, {"name": names, "transiting": st.one_of(st.booleans(), junk), "notes": junk,
                           "perod": quantity}),
    junk,
)
wild_document = st.fixed_dictionaries(
    {},
    optional={"name": names, "star": star, "planet": st.one_of(st.lists(planet, max_size=4), junk),
              "reference_plane": junk, "notes": junk, "planets": junk},
)

# Near-valid documents: a valid skeleton with plausible or random quantities, so that the
# deeper rules (cross-checks, limits, units) and the draws are reached too.
plausible = st.one_of(
    st.floats(0.01, 0.99),
    st.fixed_dictionaries({"value": st.floats(0.01, 0.99), "err": st.floats(0.0, 0.5)}),
    st.fixed_dictionaries({"value": st.floats(0.01, 0.99), "minus": st.floats(0.0, 0.5),
                           "plus": st.floats(0.0, 0.5)}),
    st.fixed_dictionaries({"upper": st.floats(0.01, 0.99)}, optional={"cl": st.floats(0.5, 0.999)}),
    st.fixed_dictionaries({"lower": st.floats(0.01, 0.99)}, optional={"cl": st.floats(0.5, 0.999)}),
    st.fixed_dictionaries({"value": st.floats(0.01, 0.99), "unit": units}),
)
field_value = st.one_of(plausible, plausible, plausible, plausible, plausible, plausible, quantity)
core_planet = st.fixed_dictionaries(
    {"name": st.sampled_from(["b", "c", "d", "e"]),
     "period": st.one_of(st.floats(0.1, 1e4), plausible, quantity)},
    optional={**{k: field_value for k in PLANET_FIELDS if k != "period"}, "transiting": st.booleans()})
near_valid_document = st.fixed_dictionaries({
    "name": st.just("F"),
    "star": st.fixed_dictionaries({"mass": st.one_of(st.floats(0.05, 5.0), plausible, quantity)},
                                  optional={"radius": field_value, "density": field_value}),
    "planet": st.lists(core_planet, min_size=1, max_size=4, unique_by=lambda p: p["name"]),
})
document = st.one_of(wild_document, near_valid_document)


# ------------------------------------------------------------------ a small TOML writer
_BARE = re.compile(r"^[A-Za-z0-9_-]+$")


def _toml_str(s):
    out = []
    for ch in s:
        if ch in '"\\' or ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _toml_value(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return _toml_str(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_toml_key(k)} = {_toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def _toml_key(k):
    return k if _BARE.match(k) else _toml_str(k)


def to_toml(doc):
    """Top-level keys as `key = value` lines; tables and arrays of tables written inline."""
    return "".join(f"{_toml_key(k)} = {_toml_value(v)}\n" for k, v in doc.items() if v is not None)


def _strip_none(x):
    if isinstance(x, dict):
        return {k: _strip_none(v) for k, v in x.items() if v is not None}
    if isinstance(x, list):
        return [_strip_none(v) for v in x if v is not None]
    return x


# ------------------------------------------------------------------ checks
def _check_valid(system):
    assert isinstance(system, System)
    assert 1 <= system.n_planets <= MAX_PLANETS
    assert system.name.strip()
    assert math.isfinite(system.star.mass.center) and system.star.mass.center > 0
    periods = [p.period.center for p in system.planets]
    assert periods == sorted(periods) and all(math.isfinite(x) and x > 0 for x in periods)
    assert len(set(system.planet_names)) == system.n_planets
    for p in system.planets:
        for m in p.quantities.values():
            assert math.isfinite(m.center) and math.isfinite(m.minus) and math.isfinite(m.plus)
    # A valid system can be propagated without an exception (warnings are fine).
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        post = direct_draws(system, n=8, seed=0)
    assert post["period"].shape == (8, system.n_planets)


def _parse(fn, *args):
    try:
        system = fn(*args)
    except InputError as exc:
        msg = str(exc)
        assert msg.strip()
        for line in getattr(exc, "problems", [msg]):
            assert "\n" not in line
        return None
    _check_valid(system)
    return system


@pytest.fixture(scope="module")
def scratch(tmp_path_factory):
    return tmp_path_factory.mktemp("fuzz") / "system.toml"


@FUZZ
@given(doc=document)
def test_random_documents_through_toml(doc, scratch):
    doc = _strip_none(doc)
    text = to_toml(doc)
    assert tomllib.loads(text) == doc or any(isinstance(v, float) and math.isnan(v) for v in _leaves(doc))
    scratch.write_text(text, encoding="utf-8")
    _parse(read_system, scratch)


def _leaves(x):
    if isinstance(x, dict):
        for v in x.values():
            yield from _leaves(v)
    elif isinstance(x, list):
        for v in x:
            yield from _leaves(v)
    else:
        yield x


@FUZZ
@given(doc=st.one_of(document, junk))
def test_random_mappings_through_build_system(doc):
    # The parsed-mapping entry point (also used for catalogue rows) gets the same guarantee.
    _parse(build_system, doc, "<fuzz>")


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(blob=st.one_of(st.binary(max_size=300),
                      st.text(max_size=200).map(lambda s: s.encode("utf-8")),
                      st.sampled_from([b"\xef\xbb\xbf", b"\xff\xfe", b"name = \"x\"\n[star]\nmass = 1\n[[planet]]\n"])
                      .flatmap(lambda head: st.binary(max_size=60).map(lambda tail: head + tail))))
def test_random_bytes(blob, scratch):
    scratch.write_bytes(blob)
    _parse(read_system, scratch)


def test_fuzz_reaches_valid_systems():
    # Guard against a fuzzer that only ever produces rejections: the likely-valid core
    # strategy must yield valid systems (seeded example).
    doc = {"name": "F", "star": {"mass": 1.0}, "planet": [{"name": "b", "period": 3.0, "ecc": {"upper": 0.3}}]}
    assert _parse(build_system, doc, "<fuzz>") is not None
    assert tomllib.loads(to_toml(doc)) == doc


# ------------------------------------------------------------------ valid but wide systems, end to end
wide = st.floats(1e-6, 1e6)
wide_q = st.one_of(wide, st.fixed_dictionaries({"value": wide, "err": wide}),
                   st.fixed_dictionaries({"upper": st.floats(1e-3, 0.99)}))
wide_planet = st.fixed_dictionaries(
    {"name": st.sampled_from("bcdef"), "period": st.one_of(wide, st.fixed_dictionaries({"value": wide, "err": wide}))},
    optional={"k": wide_q, "msini": wide_q, "mass": wide_q, "radius": wide_q,
              "ecc": st.one_of(st.floats(0.0, 0.999), st.fixed_dictionaries({"upper": st.floats(1e-3, 0.99)})),
              "b": st.floats(0.0, 5.0), "inclination": st.floats(0.0, 180.0), "ror": st.floats(1e-4, 1.0),
              "transiting": st.booleans()})
wide_document = st.fixed_dictionaries({
    "name": st.just("W"),
    "star": st.fixed_dictionaries(
        {"mass": st.one_of(st.floats(1e-3, 100.0),
                           st.fixed_dictionaries({"value": st.floats(0.01, 10.0), "err": st.floats(0.0, 5.0)}))},
        optional={"radius": st.floats(0.01, 100.0), "density": st.floats(1e-3, 100.0)}),
    "planet": st.lists(wide_planet, min_size=1, max_size=3, unique_by=lambda p: p["name"]),
})


@settings(max_examples=60, deadline=None)
@given(doc=wide_document)
def test_wide_valid_systems_give_finite_json(doc):
    # Regressions found by this strategy and fixed: face-on draws (i = 0) gave a = inf,
    # overlapping period summaries gave period ratios < 1, denormal error bars gave M* = 0.
    import json

    from archsys.pipeline import AnalysisOptions, analyze
    try:
        system = build_system(doc, "<fuzz>")
    except InputError:
        return
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            res = analyze(system, AnalysisOptions(n_draws=50, mode="direct"))
        except InputError:
            return
    text = json.dumps(res.document)
    assert "NaN" not in text and "Infinity" not in text
