"""System-file reader: one test per validation rule, through the library and the CLI.

The rules come from the system-file format (README "System files", archsys.model.schema);
physical bounds are common practice (e in [0, 1), i in [0, 180] deg, b >= 0, masses > 0).
"""
import os
import pathlib
import subprocess
import sys

import pytest

from archsys.cli import main
from archsys.errors import InputError
from archsys.model.reader import read_system
from archsys.physics.constants import JULIAN_YEAR_DAY, MEARTH_MSUN, MJUP_MSUN

ROOT = pathlib.Path(__file__).resolve().parents[1]
STAR = 'name = "S"\n[star]\nmass = 1.0\n'


def planet(body="period = 3.0", name="b"):
    return f'[[planet]]\nname = "{name}"\n{body}\n'


# (id, file text, substrings the message must contain)
RULES = [
    ("missing-name", '[star]\nmass = 1.0\n' + planet(), ["'name'"]),
    ("missing-star", 'name = "S"\n' + planet(), ["[star]"]),
    ("missing-star-mass", 'name = "S"\n[star]\nradius = 1.0\n' + planet(), ["star", "'mass'"]),
    ("missing-planet-name", STAR + "[[planet]]\nperiod = 3.0\n", ["planet #1", "'name'"]),
    ("missing-period", STAR + planet("k = 3.0"), ["planet 'b'", "'period'"]),
    ("no-planets", STAR, ["no planets"]),
    ("empty-planet-array", 'name = "S"\nplanet = []\n[star]\nmass = 1.0\n', ["no planets"]),
    ("period-not-number", STAR + planet('period = "3 days"'), ["planet 'b'", "'period'", "number"]),
    ("period-bool", STAR + planet("period = true"), ["'period'", "number"]),
    ("err-not-number", STAR + planet('period = {value = 3.0, err = "small"}'), ["'period'", "'err'"]),
    ("period-nan", STAR + planet("period = nan"), ["'period'", "finite"]),
    ("period-inf", STAR + planet("period = inf"), ["'period'", "finite"]),
    ("err-nan", STAR + planet("period = {value = 3.0, err = nan}"), ["'period'", "'err'", "finite"]),
    ("mass-inf", 'name = "S"\n[star]\nmass = -inf\n' + planet(), ["star", "'mass'", "finite"]),
    ("period-zero", STAR + planet("period = 0.0"), ["'period'", "positive"]),
    ("period-negative", STAR + planet("period = -3.0"), ["'period'", "positive"]),
    ("star-mass-zero", 'name = "S"\n[star]\nmass = 0\n' + planet(), ["star", "'mass'", "positive"]),
    ("planet-mass-negative", STAR + planet("period = 3.0\nmass = -1.0"), ["'mass'", "positive"]),
    ("k-negative", STAR + planet("period = 3.0\nk = -2.0"), ["'k'", "positive"]),
    ("ecc-one", STAR + planet("period = 3.0\necc = 1.0"), ["'ecc'", "[0, 1)"]),
    ("ecc-above-one", STAR + planet("period = 3.0\necc = 1.3"), ["'ecc'", "[0, 1)"]),
    ("ecc-negative", STAR + planet("period = 3.0\necc = -0.1"), ["'ecc'", "[0, 1)"]),
    ("negative-err", STAR + planet("period = {value = 3.0, err = -0.1}"), ["'period'", "'err'", "negative"]),
    ("negative-minus", STAR + planet("period = {value = 3.0, minus = -0.1, plus = 0.1}"),
     ["'minus'", "negative"]),
    ("minus-without-plus", STAR + planet("period = {value = 3.0, minus = 0.1}"), ["'minus'", "'plus'"]),
    ("plus-without-minus", STAR + planet("period = {value = 3.0, plus = 0.1}"), ["'plus'", "'minus'"]),
    ("unit-kg-for-period", STAR + planet('period = {value = 3.0, unit = "kg"}'), ["'period'", "'kg'", "day"]),
    ("unit-unknown", STAR + planet('period = {value = 3.0, unit = "fortnights"}'), ["'period'", "fortnights"]),
    ("unit-logarithmic", STAR + planet('period = 3.0\nk = {value = 1.0, unit = "dex(m/s)"}'), ["'k'", "dex"]),
    ("unit-overflow", STAR + planet('period = {value = 1e300, unit = "1e300 d"}'), ["'period'", "overflow"]),
    ("unit-huge-exponent", STAR + planet('period = {value = 3.0, unit = "8day88"}'), ["'period'", "8day88"]),
    ("unknown-key-perod", STAR + planet("perod = 3.0"), ["planet 'b'", "'perod'", "did you mean 'period'"]),
    ("unknown-top-key", 'planets = 1\n' + STAR + planet(), ["'planets'", "did you mean 'planet'"]),
    ("unknown-star-key", 'name = "S"\n[star]\nmass = 1.0\nradious = 1.0\n' + planet(),
     ["star", "'radious'", "did you mean 'radius'"]),
    ("unknown-quantity-key", STAR + planet("period = {value = 3.0, error = 0.1}"),
     ["'period'", "'error'", "did you mean 'err'"]),
    ("duplicate-planet-names", STAR + planet() + planet("period = 5.0"), ["planet 'b'", "duplicate"]),
    ("impact-parameter-negative", STAR + planet("period = 3.0\nb = -0.1"), ["'b'", "[0, inf]"]),
    ("inclination-above-180", STAR + planet("period = 3.0\ninclination = 181.0"), ["'inclination'", "[0, 180]"]),
    ("inclination-negative", STAR + planet("period = 3.0\ninclination = -1.0"), ["'inclination'", "[0, 180]"]),
    ("planet-mass-above-star", STAR + planet("period = 3.0\nmass = 400000.0"), ["'mass'", "stellar mass"]),
    ("msini-above-star-in-mjup", STAR + planet('period = 3.0\nmsini = {value = 1100, unit = "jupiterMass"}'),
     ["'msini'", "stellar mass"]),
    ("value-and-limit", STAR + planet("period = 3.0\necc = {value = 0.1, upper = 0.3}"), ["'ecc'", "not both"]),
    ("cl-out-of-range", STAR + planet("period = 3.0\necc = {upper = 0.3, cl = 1.5}"), ["'ecc'", "'cl'"]),
    ("cl-without-limit", STAR + planet("period = 3.0\necc = {value = 0.1, cl = 0.9}"), ["'ecc'", "'cl'"]),
    ("limit-with-err", STAR + planet("period = 3.0\necc = {upper = 0.3, err = 0.1}"), ["'ecc'", "no errors"]),
    ("upper-limit-at-zero", STAR + planet("period = 3.0\necc = {upper = 0.0}"), ["'ecc'", "no room"]),
    ("limit-on-angle", STAR + planet("period = 3.0\nomega = {upper = 90.0}"), ["'omega'", "limit"]),
    ("secosw-without-partner", STAR + planet("period = 3.0\nsecosw = 0.1"), ["'secosw'", "'sesinw'"]),
    ("secosw-implies-e-ge-1", STAR + planet("period = 3.0\nsecosw = 0.8\nsesinw = 0.8"), ["'secosw'", "< 1"]),
    ("two-ecc-parametrisations", STAR + planet("period = 3.0\necc = 0.1\necosw = 0.05\nesinw = 0.0"),
     ["eccentricity one way"]),
    ("transiting-not-bool", STAR + planet('period = 3.0\ntransiting = "yes"'), ["'transiting'"]),
    ("name-empty", 'name = "  "\n[star]\nmass = 1.0\n' + planet(), ["'name'", "non-empty"]),
    ("star-not-table", 'name = "S"\nstar = 1.0\n' + planet(), ["'star'", "table"]),
    ("planet-not-array", STAR + "[planet]\nname = \"b\"\nperiod = 3.0\n", ["'planet'", "array"]),
    ("huge-integer", STAR + planet("period = 1" + "0" * 400), ["'period'", "finite"]),
    # user text with a newline is escaped, so each problem stays on one line (found by fuzzing)
    ("unit-with-newline", STAR + planet('period = {value = 3.0, unit = "d\\nay"}'), ["'period'", "d\\nay"]),
    # a name holding a control character is refused (it would reach terminals and LaTeX raw)
    ("planet-name-with-newline", STAR + planet("perod = 3.0", "b\\nc"), ["planet #1", "control characters",
                                                                         "'perod'"]),
]


def _write(tmp_path, text, name="system.toml"):
    f = tmp_path / name
    f.write_text(text, encoding="utf-8")
    return f


def _cli(argv, capsys):
    rc = main(argv)
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


@pytest.mark.parametrize("text, tokens", [r[1:] for r in RULES], ids=[r[0] for r in RULES])
def test_rule_library(tmp_path, text, tokens):
    f = _write(tmp_path, text)
    with pytest.raises(InputError) as exc:
        read_system(f)
    msg = str(exc.value)
    assert str(f) in msg
    for t in tokens:
        assert t in msg, (t, msg)


@pytest.mark.parametrize("text, tokens", [r[1:] for r in RULES], ids=[r[0] for r in RULES])
def test_rule_cli_in_process(tmp_path, capsys, text, tokens):
    f = _write(tmp_path, text)
    out_dir = tmp_path / "out"
    rc, out, err = _cli(["report", str(f), "--json", "--out", str(out_dir)], capsys)
    assert rc == 2
    assert out == ""
    assert "Traceback" not in err
    lines = err.splitlines()
    assert lines, "no message"
    for line in lines:  # one line per problem, each naming the file
        assert line.startswith("archsys: error: ") and str(f) in line, line
    for t in tokens:
        assert t in err, (t, err)
    assert not out_dir.exists() or not any(out_dir.iterdir())


SUBPROCESS_RULES = ["ecc-one", "unknown-key-perod"]


@pytest.mark.parametrize("rule", SUBPROCESS_RULES)
def test_rule_subprocess(tmp_path, rule):
    text, tokens = {r[0]: r[1:] for r in RULES}[rule]
    f = _write(tmp_path, text)
    out_dir = tmp_path / "out"
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.run([sys.executable, "-m", "archsys", "report", str(f), "--out", str(out_dir)],
                          capture_output=True, text=True, cwd=tmp_path, env=env, timeout=120)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    for t in tokens:
        assert t in proc.stderr
    assert all(line.startswith("archsys: error: ") for line in proc.stderr.splitlines())
    assert not out_dir.exists() or not any(out_dir.iterdir())
    assert sorted(p.name for p in tmp_path.iterdir()) == ["system.toml"]


def test_all_problems_reported_one_line_each(tmp_path, capsys):
    # Several problems in one file: every one is reported, each on its own line; one
    # problem gives one line (the misspelt 'perod' is not also reported as a missing 'period').
    text = STAR + planet("period = -1.0\necc = 2.0", "b") + planet("perod = 3", "c")
    f = _write(tmp_path, text)
    rc, _, err = _cli(["report", str(f)], capsys)
    assert rc == 2
    lines = err.splitlines()
    assert len(lines) == 3, err
    assert any("planet 'b'" in x and "'period'" in x for x in lines)
    assert any("planet 'b'" in x and "'ecc'" in x for x in lines)
    assert any("planet 'c'" in x and "did you mean 'period'" in x for x in lines)
    assert not any("missing required field 'period'" in x for x in lines)
    with pytest.raises(InputError) as exc:
        read_system(f)
    assert exc.value.problems == [x.removeprefix("archsys: error: ") for x in lines]


# ------------------------------------------------------------------ units
def test_unit_override_period_years(tmp_path):
    # 1 Julian year = 365.25 d (IAU convention; [Luzum2011]), errors scale too.
    s_yr = read_system(_write(tmp_path, STAR + planet('period = {value = 2.0, err = 0.1, unit = "yr"}'), "a.toml"))
    s_d = read_system(_write(tmp_path, STAR + planet("period = {value = 730.5, err = 36.525}"), "b.toml"))
    p_yr, p_d = s_yr.planets[0].period, s_d.planets[0].period
    assert p_yr.value == pytest.approx(2 * JULIAN_YEAR_DAY, rel=1e-14)
    assert p_yr.value == pytest.approx(p_d.value, rel=1e-14)
    assert p_yr.minus == pytest.approx(p_d.minus, rel=1e-14)
    assert p_yr.plus == pytest.approx(p_d.plus, rel=1e-14)
    assert p_yr.unit == "day"


def test_unit_override_msini_jupiter_masses(tmp_path):
    # M_J / M_E = 317.8284 (ratio of IAU 2015 B3 nominal GMs, [Prsa2016] derived);
    # astropy's jupiterMass/earthMass are defined from the same nominal values.
    text = STAR + planet('period = 3.0\nmsini = {value = 1.0, minus = 0.1, plus = 0.2, unit = "jupiterMass"}')
    m = read_system(_write(tmp_path, text)).planets[0].get("msini")
    assert m.value == pytest.approx(317.8284, abs=5e-5)
    assert m.value == pytest.approx(MJUP_MSUN / MEARTH_MSUN, rel=1e-12)
    assert (m.minus, m.plus) == (pytest.approx(31.78284, abs=5e-6), pytest.approx(63.56568, abs=5e-6))
    assert m.kind == "asym"


def test_unit_override_angles_and_speed(tmp_path):
    text = STAR + planet('period = 3.0\ninclination = {value = 1.5, unit = "rad"}\nk = {value = 0.05, unit = "km/s"}')
    p = read_system(_write(tmp_path, text)).planets[0]
    assert p.get("inclination").value == pytest.approx(85.94366926962348, rel=1e-14)  # 1.5 rad in deg
    assert p.get("k").value == pytest.approx(50.0, rel=1e-14)


# ------------------------------------------------------------------ quantity forms
def test_quantity_forms(tmp_path):
    text = STAR.replace("mass = 1.0", "mass = {value = 0.9, err = 0.05}\nradius = 0.8") + planet(
        "period = {value = 3.0, minus = 0.1, plus = 0.2}\n"
        "ecc = {upper = 0.2, cl = 0.95}\n"
        "msini = {lower = 5.0}\n"
        "omega = {value = 90.0, err = 10.0}")
    s = read_system(_write(tmp_path, text))
    assert (s.star.mass.kind, s.star.mass.value, s.star.mass.minus, s.star.mass.plus) == ("normal", 0.9, 0.05, 0.05)
    assert (s.star.radius.kind, s.star.radius.value) == ("exact", 0.8)
    p = s.planets[0]
    assert (p.period.kind, p.period.value, p.period.minus, p.period.plus) == ("asym", 3.0, 0.1, 0.2)
    ecc = p.get("ecc")
    assert (ecc.kind, ecc.limit, ecc.cl, ecc.support) == ("upper", 0.2, 0.95, (0.0, 1.0))
    assert ecc.is_limit and ecc.center == 0.2
    ms = p.get("msini")
    assert (ms.kind, ms.limit, ms.cl) == ("lower", 5.0, 0.95)  # default confidence level
    # minus == plus is plain Gaussian; zero errors mean an exact value.
    s2 = read_system(_write(tmp_path, STAR + planet("period = {value = 3.0, minus = 0.1, plus = 0.1}"), "c.toml"))
    assert s2.planets[0].period.kind == "normal"
    s3 = read_system(_write(tmp_path, STAR + planet("period = {value = 3.0, err = 0.0}"), "d.toml"))
    assert s3.planets[0].period.kind == "exact"


def test_planets_sorted_by_period_and_hash(tmp_path):
    import hashlib
    text = STAR + planet("period = 30.0", "c") + planet("period = 3.0", "b")
    f = _write(tmp_path, text)
    s = read_system(f)
    assert s.planet_names == ["b", "c"]
    assert s.sha256 == hashlib.sha256(f.read_bytes()).hexdigest()
    assert s.name == "S" and s.source == str(f)


def test_utf8_bom_is_accepted(tmp_path):
    # Editors on some platforms write a UTF-8 byte-order mark; it is still UTF-8 text.
    f = tmp_path / "bom.toml"
    f.write_bytes(b"\xef\xbb\xbf" + (STAR + planet()).encode())
    assert read_system(f).planets[0].period.value == 3.0


# Rules added after review (common practice: a required quantity needs a measured value;
# the adjacent-pair analysis assumes distinct periods).
@pytest.mark.parametrize("star_mass, period, token", [
    ({"lower": 2.0}, 3.0, "'mass': needs a measured value"),
    (1.0, {"upper": 3.0}, "'period': needs a measured value"),
])
def test_required_fields_reject_limits(tmp_path, star_mass, period, token):
    from archsys.errors import InputError
    from archsys.model.reader import build_system
    with pytest.raises(InputError, match=token):
        build_system({"name": "X", "star": {"mass": star_mass}, "planet": [{"name": "b", "period": period}]},
                     source="x.toml")


def test_same_period_rejected():
    from archsys.errors import InputError
    from archsys.model.reader import build_system
    with pytest.raises(InputError, match="same period as planet 'b'"):
        build_system({"name": "X", "star": {"mass": 1.0},
                      "planet": [{"name": "b", "period": 5.0}, {"name": "c", "period": 5.0}]}, source="x.toml")
