"""Catalogue reading, column maps, the --where language, rejects and CSV escaping.

Synthetic tables are written by the tests themselves (values invented for the
test); the real-data checks are in test_survey_oec.py.
"""
import csv
import io
import json

import numpy as np
import pytest

from archsys.cli import main
from archsys.errors import InputError
from archsys.survey.catalog import group_systems, parse_where, read_catalog, select
from archsys.survey.column_map import bind, canonical_map, load_column_map, system_mapping, where_names
from archsys.survey.run import run_survey, system_seed
from archsys.survey.store import csv_text, escape_cell

HEADER = ["system", "planet", "period", "period_err", "star_mass", "star_mass_err", "msini", "msini_err",
          "ecc", "ecc_err", "method", "transiting"]


def _rows(n_systems=6, seed=1):
    """Invented two- and three-planet systems (not real planets)."""
    rng = np.random.default_rng(seed)
    rows = []
    for s in range(n_systems):
        npl = 2 + s % 2
        p = 5.0 * np.cumprod(rng.uniform(1.4, 2.6, npl))
        for j in range(npl):
            rows.append({"system": f"Sys-{s:02d}", "planet": f"Sys-{s:02d} {'bcd'[j]}", "period": f"{p[j]:.5f}",
                         "period_err": "0.0001", "star_mass": "0.95", "star_mass_err": "0.04",
                         "msini": f"{rng.uniform(3, 30):.3f}", "msini_err": "0.5",
                         "ecc": f"{rng.uniform(0.01, 0.2):.3f}", "ecc_err": "0.02",
                         "method": "Transit" if s % 3 else "RV", "transiting": "1" if s % 3 else "0"})
    return rows


def _write_csv(path, rows, header=HEADER):
    with open(path, "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=header, extrasaction="ignore")
        w.writeheader()
        for r in rows:
            w.writerow(r)
    return path


def _survey(tmp_path, cat, name="out", **kw):
    kw.setdefault("mode", "direct")
    kw.setdefault("draws", 100)
    kw.setdefault("jobs", 1)            # one process: the xdist workers already fill the cores
    kw.setdefault("figures", False)
    out = tmp_path / name
    pop = run_survey(str(cat), str(out), **kw)
    return pop, out


# ---------------------------------------------------------------- --where language

def _groups(tmp_path):
    cat = read_catalog(_write_csv(tmp_path / "c.csv", _rows()))
    cmap = bind(canonical_map(cat.columns), cat)
    return cat, cmap, group_systems(cat, "system")[0]


def test_where_selects_systems(tmp_path):
    cat, cmap, groups = _groups(tmp_path)
    names = where_names(cmap, cat.columns)

    def pick(*exprs):
        nodes = [parse_where(e, names) for e in exprs]
        return [g.system for g in groups if select(g, nodes)]

    # systems 1, 3, 5 have three planets (constructed above)
    assert pick("n_planets>=3") == ["Sys-01", "Sys-03", "Sys-05"]
    # case-insensitive strings; a bare word facing a column is a string
    assert pick("method==transit") == pick("method=='Transit'") == ["Sys-01", "Sys-02", "Sys-04", "Sys-05"]
    assert pick("transiting==1", "n_planets==2") == ["Sys-02", "Sys-04"]
    assert pick("not (method==RV) and count(transiting==1)>=3") == ["Sys-01", "Sys-05"]
    assert pick("any(period>20) || system=='Sys-00'")[0] == "Sys-00"
    assert pick("all(transiting==true)") == pick("transiting==1")


@pytest.mark.parametrize("expr, match", [
    ("n_planet>=2", "unknown column 'n_planet' \\(did you mean 'n_planets'\\?\\)"),
    ("n_planets=2", "use '=='"),
    ("__import__('os')", "expected a comparison"),
    ("n_planets>=2 and", "expression ends"),
    ("count(transiting==1)", "count\\(...\\) needs a comparison"),
    ("(n_planets>1", "expected '\\)'"),
    ("foo==bar", "unknown column 'foo'"),
])
def test_where_errors_are_clear(tmp_path, expr, match):
    cat, cmap, _ = _groups(tmp_path)
    with pytest.raises(InputError, match=match):
        parse_where(expr, where_names(cmap, cat.columns))


# ---------------------------------------------------------------- formats and units

def test_formats_give_identical_results(tmp_path):
    """CSV, ECSV, Parquet and VOTable copies of one table survey to the same systems.csv."""
    from astropy.table import Table
    rows = _rows(4)
    csv_path = _write_csv(tmp_path / "t.csv", rows)
    tab = Table.read(str(csv_path), format="ascii.csv")
    tab.write(tmp_path / "t.ecsv", format="ascii.ecsv")
    tab.write(tmp_path / "t.xml", format="votable")
    tab.to_pandas().to_parquet(tmp_path / "t.parquet")
    outs = {}
    for ext in ("csv", "ecsv", "xml", "parquet"):
        _, out = _survey(tmp_path, tmp_path / f"t.{ext}", name=f"o_{ext}")
        outs[ext] = (out / "systems.csv").read_text()
    assert len(set(outs.values())) == 1, "formats disagree"
    assert outs["csv"].count("\n") == 5


def test_ecsv_column_units_are_used(tmp_path):
    """A period column in years (ECSV unit) equals the same periods in days (Julian year, IAU)."""
    from astropy.table import Table
    import astropy.units as u
    rows = _rows(3)
    tab = Table.read(str(_write_csv(tmp_path / "d.csv", rows)), format="ascii.csv")
    tab.write(tmp_path / "d.ecsv", format="ascii.ecsv")
    ty = tab.copy()
    ty["period"] = (np.asarray(tab["period"], float) / 365.25) * u.yr   # 1 yr = 365.25 d (Julian year)
    ty["period_err"] = (np.asarray(tab["period_err"], float) / 365.25) * u.yr
    ty.write(tmp_path / "y.ecsv", format="ascii.ecsv")
    _, od = _survey(tmp_path, tmp_path / "d.ecsv", name="od")
    _, oy = _survey(tmp_path, tmp_path / "y.ecsv", name="oy")
    a = json.loads((od / "population.json").read_text())["period_ratios"]["quantiles"]
    b = json.loads((oy / "population.json").read_text())["period_ratios"]["quantiles"]
    assert a == pytest.approx(b, rel=1e-9)


# ---------------------------------------------------------------- fatal errors

def test_missing_required_column_is_fatal(tmp_path, capsys):
    path = _write_csv(tmp_path / "nop.csv", _rows(2), header=[h for h in HEADER if h != "period"])
    rc = main(["survey", str(path), "--out", str(tmp_path / "o"), "--quiet", "--mode", "direct"])
    err = capsys.readouterr().err
    assert rc == 2
    assert "nop.csv" in err and "'period'" in err


def test_map_naming_absent_column_is_fatal(tmp_path, capsys):
    path = _write_csv(tmp_path / "c.csv", _rows(2))
    mp = tmp_path / "m.toml"
    mp.write_text('[keys]\nsystem = "system"\n[star.mass]\nvalue = "star_mass"\n'
                  '[planet.period]\nvalue = "P_days"\n')
    rc = main(["survey", str(path), "--out", str(tmp_path / "o"), "--columns", str(mp), "--quiet"])
    err = capsys.readouterr().err
    assert rc == 2 and "column 'P_days' not found" in err and "c.csv" in err


@pytest.mark.parametrize("text, match", [
    ('[keys]\nplanet = "planet"\n', "needs system"),
    ('[keys]\nsystem = "system"\n[planet.periodd]\nvalue = "period"\n', "did you mean 'period'"),
    ('[keys]\nsystem = "system"\n[planet.period]\nvalue = "period"\nunit = "kg"\n', "does not convert to day"),
    ('[keys]\nsystem = "system"\n[planet.ecc]\nvalue = "ecc"\nminus = "ecc_err"\n', "both 'minus' and 'plus'"),
])
def test_bad_column_maps(tmp_path, text, match):
    mp = tmp_path / "m.toml"
    mp.write_text(text)
    with pytest.raises(InputError, match=match):
        load_column_map(mp)


def test_non_numeric_column_is_fatal(tmp_path):
    rows = _rows(2)
    for r in rows:
        r["star_mass"] = "heavy"
    path = _write_csv(tmp_path / "s.csv", rows)
    with pytest.raises(InputError, match="column 'star_mass' .* holds no numbers"):
        _survey(tmp_path, path)


def test_resume_with_other_options_is_refused(tmp_path):
    path = _write_csv(tmp_path / "c.csv", _rows(2))
    _survey(tmp_path, path, seed=1)
    with pytest.raises(InputError, match="already holds a survey"):
        _survey(tmp_path, path, seed=1)
    with pytest.raises(InputError, match="cannot resume.*seed"):
        _survey(tmp_path, path, seed=2, resume=True)


# ---------------------------------------------------------------- per-row rejects

def test_bad_rows_become_rejects_and_counts_reconcile(tmp_path):
    rows = _rows(6)
    rows.append(dict(rows[0]))                       # duplicated row of Sys-00
    rows[2]["period"] = "12.x"                        # row 3 (Sys-01 b): a non-numeric cell (mixed types)
    rows[5]["ecc"] = "1.7"                            # row 6 (Sys-02 b): an impossible eccentricity
    rows.append({**rows[3], "system": "", "planet": "orphan"})   # row without a system id
    path = _write_csv(tmp_path / "bad.csv", rows)
    with open(path, "a") as fh:                       # a row with more cells than the header
        fh.write("Sys-09,Sys-09 b,1,2,3,4,5,6,7,8,9,10,11,12\n")
    pop, out = _survey(tmp_path, path)
    c = pop["counts"]
    # the malformed row still names its system (Sys-09), which is rejected as a whole
    assert c["systems_selected"] == c["systems_analysed"] + c["systems_rejected"] == 7
    assert c["rows_without_system"] == 1 and c["rows_malformed"] == 1
    assert c["rows"] == len(rows) + 1
    rej = list(csv.DictReader(io.StringIO((out / "rejects.csv").read_text())))
    reasons = {(r["system"], r["field"]): r for r in rej}
    dup = [r for r in rej if "duplicated row" in r["reason"]]
    assert dup and dup[0]["system"] == "Sys-00" and dup[0]["row"] == str(len(_rows(6)) + 1)
    nn = [r for r in rej if "not a number" in r["reason"]]
    assert nn and nn[0]["column"] == "period" and nn[0]["row"] == "3" and "12.x" in nn[0]["reason"]
    ecc = [r for r in rej if r["field"] == "ecc"]
    assert ecc and "must be in [0, 1); got 1.7" in ecc[0]["reason"] and ecc[0]["row"] == "6"
    assert ("", "system") in reasons
    bad = [r for r in rej if "cells but the header has" in r["reason"]]
    assert bad and bad[0]["row"] == str(len(rows) + 1) and bad[0]["system"] == "Sys-09"
    # rejected systems do not appear in systems.csv, analysed ones do
    sys_ids = [r["system"] for r in csv.DictReader(io.StringIO((out / "systems.csv").read_text()))]
    assert len(sys_ids) == c["systems_analysed"]
    assert not set(sys_ids) & {r["system"] for r in rej}


def test_star_rows_that_disagree_are_rejected(tmp_path):
    rows = _rows(2)
    rows[1]["star_mass"] = "0.70"
    cat = read_catalog(_write_csv(tmp_path / "c.csv", rows))
    cmap = bind(canonical_map(cat.columns), cat)
    g = group_systems(cat, "system")[0][0]
    _, problems, _ = system_mapping(g, cmap)
    assert problems and "rows disagree on the star" in problems[0]["reason"]


def test_fixed_circular_ecc_is_not_measured(tmp_path):
    """e = 0 with no error is 'fixed circular' (OEC README, common practice): no ecc field."""
    rows = _rows(1)
    rows[0]["ecc"], rows[0]["ecc_err"] = "0", ""
    rows[1]["ecc"], rows[1]["ecc_err"] = "0", "0.05"          # a measured 0 +- 0.05 stays
    cat = read_catalog(_write_csv(tmp_path / "c.csv", rows))
    data, problems, _ = system_mapping(group_systems(cat, "system")[0][0], bind(canonical_map(cat.columns), cat))
    assert not problems
    assert "ecc" not in data["planet"][0] and data["planet"][1]["ecc"] == {"value": 0.0, "err": 0.05}


# ---------------------------------------------------------------- CSV escaping

@pytest.mark.parametrize("cell, text", [
    ("=HYPERLINK(\"http://x\")", "'=HYPERLINK(\"http://x\")"), ("+1 cmd", "'+1 cmd"), ("-x", "'-x"),
    ("@SUM(A1)", "'@SUM(A1)"), ("\tTab", "'\tTab"), ("\rCR", "'\rCR"),
    ("-0.5", "-0.5"), ("+3", "+3"), (-0.5, "-0.5"), ("Kepler-11", "Kepler-11"), (None, ""),
])
def test_escape_cell(cell, text):
    # OWASP "CSV injection" guidance (common practice): text cells starting with = + - @ TAB CR
    assert escape_cell(cell) == text


def test_formula_names_are_escaped_in_survey_output(tmp_path):
    rows = _rows(2)
    for r in rows:
        if r["system"] == "Sys-00":
            r["system"] = "=cmd|' /C calc'!A0"
            r["planet"] = "@" + r["planet"]
    pop, out = _survey(tmp_path, _write_csv(tmp_path / "f.csv", rows))
    for name in ("systems.csv", "pairs.csv", "planets.csv"):
        body = (out / name).read_text()
        for rec in csv.reader(io.StringIO(body)):
            for cell in rec:
                assert not cell.startswith(("=", "+", "@", "\t", "\r")), (name, cell)
                if cell.startswith("-"):
                    float(cell)                      # only numbers may start with '-'
    assert "'=cmd|" in (out / "systems.csv").read_text()
    assert csv_text(["a"], [{"a": -1.25}]) == "a\n-1.25\n"


def test_system_seed_depends_on_seed_and_id_only():
    assert system_seed(0, "Kepler-11") == system_seed(0, "Kepler-11")
    assert system_seed(0, "Kepler-11") != system_seed(1, "Kepler-11")
    assert system_seed(0, "Kepler-11") != system_seed(0, "Kepler-12")


def test_progress_bar_tqdm_on_a_terminal(tmp_path):
    # The survey's progress bar is tqdm's on standard error (or the given stream).
    from archsys.survey.workers import progress_bar

    class Tty(io.StringIO):
        def isatty(self):
            return True

    tty = Tty()
    bar = progress_bar(3, stream=tty)
    for _ in range(3):
        bar.update(1)
    bar.set_postfix_str("1 rejected")
    bar.close()
    text = tty.getvalue()
    assert "\r" in text and "3/3" in text and "1 rejected" in text
    quiet = Tty()
    q = progress_bar(2, quiet=True, stream=quiet)
    q.update(1)
    q.close()
    assert quiet.getvalue() == ""


def test_progress_bar_sparse_when_not_a_terminal():
    # Written to a file or a pipe, the bar refreshes at most every 30 s: a quick run of
    # 500 updates writes the first and the last state only, not 500 lines.
    from archsys.survey.workers import progress_bar
    log = io.StringIO()
    bar = progress_bar(500, stream=log)
    for _ in range(500):
        bar.update(1)
    bar.close()
    states = [x for x in log.getvalue().replace("\r", "\n").splitlines() if x.strip()]
    assert 1 <= len(states) <= 3, states
    assert "500/500" in states[-1]


def test_survey_progress_counts_rejects(tmp_path):
    rows = _rows(3)
    rows[0]["period"] = "-5"            # rejects system Sys-00
    cat = _write_csv(tmp_path / "c.csv", rows)

    class Tty(io.StringIO):
        def isatty(self):
            return True
    tty = Tty()
    _survey(tmp_path, cat, jobs=1, quiet=False, stream=tty)
    assert "3/3" in tty.getvalue() and "1 rejected" in tty.getvalue()


def test_csv_cell_fast_path_follows_the_general_rules():
    """Floats and plain text take a fast path; it gives the cell every rule gives (formula escape:
    OWASP's CSV-injection advice, common practice; control characters escaped)."""
    import math
    import random
    from archsys.output.file_names import printable
    from archsys.survey import store

    def rules(x):
        if x is None:
            return ""
        if isinstance(x, bool):
            return "true" if x else "false"
        if isinstance(x, int):
            return str(x)
        if isinstance(x, float):
            return repr(x) if math.isfinite(x) else ""
        s = printable(str(x), keep_newlines=True)
        if s.startswith(store._FORMULA_START) and not store._is_number_text(s):
            return "'" + s
        return s

    rng = random.Random(1)
    alphabet = "ab=+-@\t\n\x00\u202e 1.5e3\u00e9"
    for _ in range(20000):
        x = rng.choice([rng.random() * 10 ** rng.randint(-5, 5), float("nan"), float("inf"), rng.randint(-5, 5),
                        True, None, "".join(rng.choice(alphabet) for _ in range(rng.randint(0, 6)))])
        assert store.escape_cell(x) == rules(x), repr(x)
