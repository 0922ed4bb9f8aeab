"""Crash safety: a survey killed with SIGKILL mid-run and resumed writes the
same bytes as an uninterrupted run (common practice for checkpointed batch jobs).

Data: the Open Exoplanet Catalogue extract (Rein 2012, arXiv:1211.7121,
snapshot 2026-08-22), the first 60 systems with two or more planets.
"""
import os
import pathlib
import signal
import sqlite3
import subprocess
import sys
import time


from archsys.survey.run import run_survey

ROOT = pathlib.Path(__file__).resolve().parents[1]
OEC = pathlib.Path(__file__).parent / "data" / "oec" / "open_exoplanet_catalogue_planets.csv"  # Rein 2012; see data/oec/README.md
COLUMNS = ROOT / "tests" / "data" / "oec_columns.toml"
# enough work that the survey stores its systems over several flushes (every 0.5 s) and can be killed
# between them: 30 systems of 1000 draws finished within one flush once batched fast mode came
N = 60
DRAWS = 3000
ARGS = dict(columns=str(COLUMNS), where=["n_planets>=2"], limit=N, mode="direct", draws=DRAWS, seed=2)


def _stored(db):
    if not db.exists():
        return 0
    try:
        con = sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=1.0)
        try:
            return con.execute("SELECT COUNT(*) FROM systems").fetchone()[0]
        finally:
            con.close()
    except sqlite3.Error:
        return 0


def _outputs(out):
    files = sorted(p for p in out.rglob("*") if p.is_file() and not p.name.startswith("survey.sqlite"))
    return {str(p.relative_to(out)): p.read_bytes() for p in files}


def test_sigkill_then_resume_equals_uninterrupted(tmp_path):
    ref = tmp_path / "ref"
    run_survey(str(OEC), str(ref), jobs=1, **ARGS)

    out = tmp_path / "killed"
    cmd = [sys.executable, "-m", "archsys", "survey", str(OEC), "--out", str(out), "--columns", str(COLUMNS),
           "--where", "n_planets>=2", "--limit", str(N), "--mode", "direct", "--draws", str(DRAWS), "--seed", "2",
           "--jobs", "1", "--quiet"]
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    db = out / "survey.sqlite"
    t0 = time.monotonic()
    try:
        while _stored(db) < 8:
            assert proc.poll() is None, proc.stderr.read().decode()
            assert time.monotonic() - t0 < 120, "no system stored within 120 s"
            time.sleep(0.02)
        os.kill(proc.pid, signal.SIGKILL)
    finally:
        proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    n_at_kill = _stored(db)
    assert 8 <= n_at_kill < N, "the run finished before it could be killed"
    assert not (out / "systems.csv").exists() and not (out / "population.json").exists()

    pop = run_survey(str(OEC), str(out), jobs=1, resume=True, **ARGS)
    assert pop["counts"]["systems_selected"] == N
    got, want = _outputs(out), _outputs(ref)
    assert sorted(got) == sorted(want)
    assert "figures/period_ratios.png" in got and "figures/period_ratios.pdf" in got
    for name in want:
        assert got[name] == want[name], f"{name} differs after resume"


def test_resume_of_finished_survey_rewrites_same_outputs(tmp_path):
    out = tmp_path / "o"
    kw = {**ARGS, "limit": 10, "draws": 200, "figures": False}
    run_survey(str(OEC), str(out), jobs=1, **kw)
    before = _outputs(out)
    run_survey(str(OEC), str(out), jobs=1, resume=True, **kw)
    assert _outputs(out) == before
