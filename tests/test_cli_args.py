"""Every command-line argument is validated: a bad value gives exit status 2, one line
naming the option and the accepted range, no traceback and no output (README promise
"one line, exit 2, no partial output").  The typed options of the Python API refuse the
same values.  Behaviour checks of archsys itself (no outside source needed).
"""
import os
import pathlib
import subprocess
import sys

import pytest

import archsys
from archsys.cli import main
from archsys.errors import InputError
from archsys.options import (FAST_DRAWS, MAX_DRAWS, MAX_SEED, AnalysisOptions, Mode, SurveyOptions,
                             split_keywords)

ROOT = pathlib.Path(__file__).resolve().parents[1]
KORRIN = ROOT / "demo_systems" / "korrin.toml"
FAST = ["--mode", "direct", "--draws", "100"]


def _run(argv, capsys):
    try:
        rc = main(argv)
    except SystemExit as exc:          # argparse usage errors
        rc = exc.code
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


def _one_line_refusal(rc, out, err, tokens):
    assert rc == 2, err
    assert out == ""
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("archsys: error: "), err
    for t in tokens:
        assert t in err, (t, err)


@pytest.fixture
def binary_file(tmp_path):
    f = tmp_path / "prior.bin"
    f.write_bytes(bytes(range(256)) * 4)
    return f


@pytest.fixture
def fifo(tmp_path):
    f = tmp_path / "prior.fifo"
    os.mkfifo(f)
    return f


# option values -> substrings of the one error line
REPORT_CASES = {
    "seed-negative": (["--seed", "-1"], ["--seed", "between 0 and"]),
    "seed-too-large": (["--seed", str(MAX_SEED + 1)], ["--seed", str(MAX_SEED)]),
    "seed-not-a-number": (["--seed", "abc"], ["--seed", "invalid int"]),
    "max-steps-negative": (["--max-steps", "-5"], ["--max-steps", "at least 1", "-5"]),
    "max-steps-zero": (["--max-steps", "0"], ["--max-steps", "at least 1", "got 0"]),
    "nbody-negative": (["--nbody", "-5"], ["--nbody", "between 0 and"]),
    "nbody-absurd": (["--nbody", "100000000"], ["--nbody"]),
    "nbody-orbits-zero": (["--nbody-orbits", "0"], ["--nbody-orbits", "(0, 1e+07]"]),
    "nbody-orbits-nan": (["--nbody-orbits", "nan"], ["--nbody-orbits"]),
    "nbody-orbits-inf": (["--nbody-orbits", "inf"], ["--nbody-orbits"]),
    "draws-absurd": (["--draws", "1000000000"], ["--draws", str(MAX_DRAWS), "memory"]),
    "draws-too-few": (["--draws", "5"], ["--draws", "between 10 and"]),
    "draws-zero": (["--draws", "0"], ["--draws", "got 0"]),
    "draws-negative": (["--draws", "-3"], ["--draws", "got -3"]),
    "draws-float": (["--draws", "1e3"], ["--draws", "invalid int"]),
    "jobs-negative": (["--jobs", "-1"], ["--jobs", "0 = one per core"]),
    "jobs-absurd": (["--jobs", "100000"], ["--jobs"]),
    "mode-unknown": (["--mode", "sideways"], ["--mode", "sideways"]),
    "unknown-flag": (["--frobnicate"], ["--frobnicate"]),
    "format-unknown": (["--format", "docx"], ["--format", "docx"]),
    "prior-misspelt-auto": (["--prior", "ecc-kiping2013-rv"], ["--prior", "ecc-kiping2013-rv", "unknown prior"]),
    "prior-misspelt-direct": (["--prior", "ecc-kiping2013-rv", "--mode", "direct"], ["--prior", "unknown prior"]),
    "prior-misspelt-fast": (["--prior", "ecc-kiping2013-rv", "--mode", "fast"], ["--prior", "unknown prior"]),
    "prior-misspelt-mcmc": (["--prior", "ecc-kiping2013-rv", "--mode", "mcmc"], ["--prior", "unknown prior"]),
    "incl-prior-misspelt": (["--incl-prior", "incl-fabrycky"], ["--incl-prior", "unknown prior"]),
    "prior-wrong-quantity": (["--prior", "incl-loguniform"], ["--prior", "not eccentricity"]),
    "incl-prior-wrong-quantity": (["--incl-prior", "ecc-uniform"], ["--incl-prior", "not mutual_inclination"]),
    "prior-empty-string": (["--prior", ""], ["--prior"]),
    "prior-control-characters": (["--prior", "ecc\x1b[31m"], ["--prior", "control characters"]),
    "prior-missing-file": (["--prior", "no/such/prior.toml"], ["--prior", "not found"]),
}


@pytest.mark.parametrize("case", sorted(REPORT_CASES))
def test_report_argument_refused(case, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    argv, tokens = REPORT_CASES[case]
    base = [a for a in FAST if a not in argv] if any(a in ("--mode", "--draws") for a in argv) else FAST
    if "--mode" in argv:
        base = ["--draws", "100"] if "--draws" not in argv else []
    elif "--draws" in argv:
        base = ["--mode", "direct"]
    rc, out, err = _run(["report", str(KORRIN), *base, *argv, "--out", str(tmp_path / "out")], capsys)
    _one_line_refusal(rc, out, err, tokens)
    assert not (tmp_path / "out").exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_prior_directory_refused(tmp_path, capsys):
    rc, out, err = _run(["report", str(KORRIN), *FAST, "--prior", str(tmp_path)], capsys)
    _one_line_refusal(rc, out, err, ["--prior", "is a directory"])


def test_prior_binary_file_refused(binary_file, capsys):
    rc, out, err = _run(["report", str(KORRIN), *FAST, "--prior", str(binary_file)], capsys)
    _one_line_refusal(rc, out, err, ["--prior", "not UTF-8"])


def test_prior_fifo_refused_without_hanging(fifo, capsys):
    rc, out, err = _run(["report", str(KORRIN), *FAST, "--incl-prior", str(fifo)], capsys)
    _one_line_refusal(rc, out, err, ["--incl-prior", "not a regular file"])


def test_prior_device_refused(capsys):
    rc, out, err = _run(["report", str(KORRIN), *FAST, "--prior", "/dev/zero"], capsys)
    _one_line_refusal(rc, out, err, ["--prior", "not a regular file"])


def test_valid_prior_in_direct_mode_is_not_recorded_as_used(capsys):
    # --prior has no effect on direct draws: say so on one line, and the provenance
    # lists no prior as used.
    import json
    rc, out, err = _run(["report", str(KORRIN), *FAST, "--prior", "ecc-kipping2013-rv", "--json"], capsys)
    assert rc == 0, err
    assert err.count("\n") == 1 and "warning: --prior has no effect with --mode direct" in err
    doc = json.loads(out)
    assert doc["provenance"]["priors"] in ({}, None)


SURVEY_CASES = {
    "seed-negative": (["--seed", "-1"], ["--seed"]),
    "max-steps-negative": (["--max-steps", "-5"], ["--max-steps"]),
    "max-steps-zero": (["--max-steps", "0"], ["--max-steps"]),
    "nbody-negative": (["--nbody", "-5"], ["--nbody"]),
    "draws-absurd": (["--draws", "1000000000"], ["--draws"]),
    "limit-zero": (["--limit", "0"], ["--limit", "at least 1"]),
    "limit-negative": (["--limit", "-4"], ["--limit"]),
    "jobs-negative": (["--jobs", "-2"], ["--jobs"]),
    "prior-misspelt-fast": (["--prior", "ecc-vaneylen", "--mode", "fast"], ["--prior", "unknown prior"]),
    "where-empty": (["--where", ""], ["--where", "empty expression"]),
}


@pytest.mark.parametrize("case", sorted(SURVEY_CASES))
def test_survey_argument_refused_before_any_file(case, tmp_path, capsys):
    cat = tmp_path / "cat.csv"
    cat.write_text("system,planet,period,star_mass\nA,A b,3.0,1.0\nA,A c,7.0,1.0\n")
    argv, tokens = SURVEY_CASES[case]
    out_dir = tmp_path / "out"
    rc, out, err = _run(["survey", str(cat), "--out", str(out_dir), "--jobs", "1", *argv], capsys)
    _one_line_refusal(rc, out, err, tokens)
    assert not out_dir.exists()               # no store, no tables


def test_survey_out_is_a_file(tmp_path, capsys):
    cat = tmp_path / "cat.csv"
    cat.write_text("system,planet,period,star_mass\nA,A b,3.0,1.0\n")
    f = tmp_path / "out"
    f.write_text("x")
    rc, out, err = _run(["survey", str(cat), "--out", str(f), "--jobs", "1"], capsys)
    _one_line_refusal(rc, out, err, ["--out", "not a directory"])
    assert f.read_text() == "x"


def test_version(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["--version"])
    assert exc.value.code == 0
    assert capsys.readouterr().out.strip() == f"archsys {archsys.__version__}"


def test_out_says_where_files_went(tmp_path, capsys):
    out_dir = tmp_path / "res"
    rc, out, err = _run(["report", str(KORRIN), *FAST, "--out", str(out_dir)], capsys)
    assert rc == 0, err
    n = sum(1 for p in out_dir.rglob("*") if p.is_file())
    assert f"archsys: wrote {n} files to {out_dir}" in err
    assert not [p for p in out_dir.rglob(".archsys-staging-*")]     # no staging folder left


def test_usage_error_is_one_line_subprocess():
    proc = subprocess.run([sys.executable, "-m", "archsys", "report", "--seed", "x"], capture_output=True,
                          text=True, env=dict(os.environ, PYTHONPATH=str(ROOT)), timeout=120)
    assert proc.returncode == 2
    assert proc.stderr.count("\n") == 1 and proc.stderr.startswith("archsys: error: ")


# ------------------------------------------------------------------ Python API: the same refusals
@pytest.mark.parametrize("kw, token", [
    ({"seed": -1}, "seed"), ({"n_draws": 10 ** 9}, "n_draws"), ({"n_draws": 9}, "n_draws"),
    ({"max_steps": 0}, "max_steps"), ({"nbody": -1}, "nbody"), ({"jobs": -1}, "jobs"),
    ({"mode": "sideways"}, "mode"), ({"ecc_prior": "nope"}, "ecc_prior"), ({"seed": 1.5}, "integer"),
    ({"seed": True}, "integer"), ({"quiet": "yes"}, "quiet"), ({"incl_prior": "ecc-uniform"}, "incl_prior"),
])
def test_api_options_refuse_bad_values(kw, token):
    with pytest.raises(InputError) as exc:
        AnalysisOptions(**kw)
    assert token in str(exc.value) and "\n" not in str(exc.value)


def test_api_options_typed_and_defaults():
    from archsys.inference.draws import DEFAULT_DRAWS
    assert AnalysisOptions().n_draws == DEFAULT_DRAWS
    fast = AnalysisOptions(mode="fast")
    assert fast.mode is Mode.FAST and fast.n_draws == FAST_DRAWS and not fast.uses_mcmc
    assert AnalysisOptions(mode=Mode.MCMC).uses_mcmc
    assert fast.as_dict()["mode"] == "fast" and "jobs" not in fast.as_dict()
    with pytest.raises(InputError):
        fast.replace(seed=-2)                       # a copy is validated too
    from archsys.pipeline import AnalysisOptions as PipelineOptions
    assert PipelineOptions is AnalysisOptions


def test_survey_options_and_keywords():
    with pytest.raises(InputError):
        SurveyOptions(limit=0)
    a, s = split_keywords(mode="fast", draws=50, limit=3, where="n_planets>=2")
    assert a.n_draws == 50 and a.jobs == 0 and s.limit == 3 and s.where == ("n_planets>=2",)
    with pytest.raises(TypeError):
        split_keywords(modes="fast")


def test_readme_options_example_runs(tmp_path, monkeypatch):
    # the "Options in Python" example of the README, exactly as written, on an invented catalogue
    import re
    text = (ROOT / "README.md").read_text()
    section = text[text.index("## Options in Python"):text.index("## The JSON document")]
    code = re.search(r"```python\n(.*?)```", section, re.S).group(1)
    (tmp_path / "catalogue.csv").write_text(
        "system,planet,period,period_err,star_mass\n"
        + "".join(f"S{i},S{i} {c},{p * (1 + i / 10):.3f},0.001,1.0\n"
                  for i in range(3) for c, p in zip("bcd", (3.0, 5.1, 9.7))))
    monkeypatch.chdir(tmp_path)
    ns = {"__name__": "__main__"}
    exec(compile(code, "README.md", "exec"), ns)
    assert ns["pop"]["counts"]["systems_analysed"] == 3
    assert (tmp_path / "survey" / "population.json").exists()


def test_report_of_several_files_shows_progress_on_stderr(capsys):
    # a piped report of several systems is not silent: a tqdm bar on stderr counts the systems
    rc, out, err = _run(["report", *FAST], capsys)          # the bundled demo systems
    assert rc == 0
    assert "report" in err and "3/3" in err
    rc, out, err = _run(["report", *FAST, "--quiet"], capsys)
    assert rc == 0 and err == ""
