"""Filesystem and process faults: special files, full devices, write errors part-way, name
collisions, concurrent surveys, a dead parent, an unreachable scheduler.

Each test names the README promise it backs: "one line, exit 2", "no partial output",
"byte-identical", "resumable", "locked against concurrent runs".  Behaviour checks of
archsys itself (no outside source needed); tables and systems are invented for the test.
"""
import errno
import json
import os
import pathlib
import resource
import signal
import subprocess
import sys
import time

import pytest

from archsys.cli import main
from archsys.errors import InputError
from cli_checks import files_in, one_line_exit_2, alive, child_pids

ROOT = pathlib.Path(__file__).resolve().parents[1]
KORRIN = ROOT / "demo_systems" / "korrin.toml"
FAST = ["--mode", "direct", "--draws", "100"]
ENV = dict(os.environ, PYTHONPATH=str(ROOT))
CAT = ("system,planet,period,period_err,star_mass\n"
       "Alda,Alda b,3.1,0.001,0.9\nAlda,Alda c,7.4,0.001,0.9\n"
       "Brix,Brix b,5.2,0.001,1.1\nBrix,Brix c,11.9,0.001,1.1\n"
       "Cyra,Cyra b,2.2,0.001,0.8\nCyra,Cyra c,4.9,0.001,0.8\n")


def _run(argv, capsys):
    rc = main(argv)
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


def _cli(argv, timeout=120, **kw):
    return subprocess.run([sys.executable, "-m", "archsys", *argv], capture_output=True, text=True,
                          env=ENV, timeout=timeout, **kw)


def _system(tmp_path, name, planets=("b", "c"), fname=None):
    body = f'name = "{name}"\n[star]\nmass = 0.9\n'
    for j, p in enumerate(planets):
        body += f'[[planet]]\nname = "{p}"\nperiod = {{ value = {3.0 * 1.9 ** j:.4f}, err = 0.001 }}\n' \
                f'k = {{ value = 3.0, err = 0.5 }}\n'
    f = tmp_path / (fname or f"s{abs(hash(name)) % 10 ** 8}.toml")
    f.write_text(body)
    return f


# ------------------------------------------------------------------ special files (one line, exit 2)
def test_fifo_system_file_refused_without_hanging(tmp_path):
    fifo = tmp_path / "sys.toml"
    os.mkfifo(fifo)
    proc = _cli(["report", str(fifo), "--json"], timeout=60)      # would block for ever if opened
    one_line_exit_2(proc.returncode, proc.stderr, "named pipe", "regular files")


@pytest.mark.parametrize("dev", ["/dev/zero", "/dev/null", "/dev/urandom"])
def test_device_as_system_file_refused(dev, capsys):
    if not os.path.exists(dev):
        pytest.skip(f"{dev} not present")
    rc, out, err = _run(["report", dev], capsys)
    one_line_exit_2(rc, err, "character device")


def test_huge_system_file_refused_by_size(tmp_path, capsys):
    f = tmp_path / "big.toml"
    with open(f, "wb") as fh:          # sparse: 17 MiB without writing them
        fh.truncate(17 << 20)
    rc, out, err = _run(["report", str(f)], capsys)
    one_line_exit_2(rc, err, "17 MiB", "at most 16 MiB")


def test_fifo_column_map_refused(tmp_path, capsys):
    cat = tmp_path / "c.csv"
    cat.write_text(CAT)
    fifo = tmp_path / "map.toml"
    os.mkfifo(fifo)
    rc, out, err = _run(["survey", str(cat), "--columns", str(fifo), "--out", str(tmp_path / "o")], capsys)
    one_line_exit_2(rc, err, "named pipe")
    assert not (tmp_path / "o").exists()


def test_fifo_chains_file_refused_by_plot(tmp_path, capsys):
    fifo = tmp_path / "x.chains.npz"
    os.mkfifo(fifo)
    rc, out, err = _run(["plot", str(fifo), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, "named pipe")
    assert not (tmp_path / "f").exists()


# ------------------------------------------------------------------ standard output
@pytest.mark.parametrize("argv", [["report", str(KORRIN), "--json", *FAST], ["report", str(KORRIN), *FAST],
                                  ["priors"]])
def test_stdout_on_a_full_device(argv):
    if not os.path.exists("/dev/full"):
        pytest.skip("/dev/full not present")
    with open("/dev/full", "w") as full:
        proc = subprocess.run([sys.executable, "-m", "archsys", *argv], stdout=full, stderr=subprocess.PIPE,
                              text=True, env=ENV, timeout=120)
    one_line_exit_2(proc.returncode, proc.stderr, "cannot write to standard output", "No space left")


def test_stdout_closed_early_is_quiet():
    # `archsys priors | head -1`: the reader goes away; no traceback, no error line
    proc = subprocess.run(f"{sys.executable} -m archsys priors | head -c 10 >/dev/null", shell=True,
                          stderr=subprocess.PIPE, text=True, env=ENV, timeout=120)
    assert "Traceback" not in proc.stderr and "Exception ignored" not in proc.stderr


# ------------------------------------------------------------------ report outputs: all or nothing
def test_target_name_is_a_directory_writes_nothing(tmp_path, capsys):
    out = tmp_path / "out"
    (out / "Korrin.tex").mkdir(parents=True)
    rc, _, err = _run(["report", str(KORRIN), *FAST, "--out", str(out)], capsys)
    one_line_exit_2(rc, err, "Korrin.tex", "nothing was written")
    assert files_in(out) == []                                   # no partial output
    assert sorted(p.name for p in out.iterdir()) == ["Korrin.tex"]


def test_write_error_part_way_leaves_nothing(tmp_path, capsys, monkeypatch):
    # the fifth file fails as on a full disk: nothing of the run may stay behind
    from archsys.output import files
    real = files._write_file
    calls = []

    def failing(path, data, mode):
        calls.append(path)
        if len(calls) == 5:
            raise OSError(errno.ENOSPC, "No space left on device")
        return real(path, data, mode)
    monkeypatch.setattr(files, "_write_file", failing)
    out = tmp_path / "new" / "out"
    rc, _, err = _run(["report", str(KORRIN), *FAST, "--out", str(out)], capsys)
    one_line_exit_2(rc, err, "No space left")
    assert not (tmp_path / "new").exists()                     # folders the run made are gone too


def test_file_size_limit_mid_run_leaves_nothing(tmp_path):
    # A real write failure: RLIMIT_FSIZE makes any write beyond 20 kB fail (EFBIG), as a
    # full disk would fail part-way; the report's figures are larger than that.
    def limit():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (20_000, 20_000))
    out = tmp_path / "out"
    proc = subprocess.run([sys.executable, "-m", "archsys", "report", str(KORRIN), *FAST, "--out", str(out)],
                          capture_output=True, text=True, env=ENV, timeout=300, preexec_fn=limit)
    one_line_exit_2(proc.returncode, proc.stderr, "File too large")
    assert files_in(out) == []
    assert not out.exists()


def test_several_systems_all_or_nothing(tmp_path, capsys):
    # the second system's files cannot be written: the first system's are not kept either
    a = _system(tmp_path, "Anvo", fname="a.toml")
    b = _system(tmp_path, "Bexa", fname="b.toml")
    out = tmp_path / "out"
    (out / "Bexa.json").mkdir(parents=True)
    rc, _, err = _run(["report", str(a), str(b), *FAST, "--quiet", "--out", str(out)], capsys)
    one_line_exit_2(rc, err, "Bexa.json")
    assert files_in(out) == []


def test_separate_figure_folder_staged_too(tmp_path, capsys):
    out, figs = tmp_path / "out", tmp_path / "figs"
    (out / "Korrin.md").mkdir(parents=True)
    rc, _, err = _run(["report", str(KORRIN), *FAST, "--out", str(out), "--figures", str(figs)], capsys)
    assert rc == 2
    assert files_in(out) == [] and files_in(figs) == []


def test_report_outputs_byte_identical(tmp_path, capsys):
    # README promise "byte-identical": same input and seed, same bytes in every file
    runs = []
    for k in range(2):
        out = tmp_path / f"o{k}"
        rc, _, err = _run(["report", str(KORRIN), *FAST, "--seed", "4", "--out", str(out)], capsys)
        assert rc == 0, err
        runs.append({f: (out / f).read_bytes() for f in files_in(out)})
    assert runs[0].keys() == runs[1].keys() and len(runs[0]) >= 8
    for f in runs[0]:
        assert runs[0][f] == runs[1][f], f


# ------------------------------------------------------------------ file stems
def test_colliding_system_stems_are_unique_and_said(tmp_path, capsys):
    a = _system(tmp_path, "Col/X", fname="a.toml")
    b = _system(tmp_path, "Col_X", fname="b.toml")
    out = tmp_path / "out"
    rc, _, err = _run(["report", str(a), str(b), *FAST, "--out", str(out)], capsys)
    assert rc == 0, err
    jsons = sorted(p.name for p in out.glob("*.json") if not p.name.endswith("provenance.json"))
    assert len(jsons) == 2 and "Col_X.json" in jsons
    other = next(j for j in jsons if j != "Col_X.json")
    assert other.startswith("Col_X-") and json.loads((out / other).read_text())["system"] == "Col/X"
    assert json.loads((out / "Col_X.json").read_text())["system"] == "Col_X"
    notes = [x for x in err.splitlines() if "collide" in x]
    assert len(notes) == 1 and "'Col/X'" in notes[0]
    # deterministic: the same stems whatever the order of the files
    out2 = tmp_path / "out2"
    _run(["report", str(b), str(a), *FAST, "--out", str(out2)], capsys)
    assert sorted(p.name for p in out2.glob("*.json")) == sorted(p.name for p in out.glob("*.json"))


def test_same_system_name_twice(tmp_path, capsys):
    a = _system(tmp_path, "Twin", fname="a.toml")
    b = _system(tmp_path, "Twin", planets=("b", "c", "d"), fname="b.toml")
    out = tmp_path / "out"
    rc, _, err = _run(["report", str(a), str(b), *FAST, "--out", str(out)], capsys)
    assert rc == 0, err
    assert (out / "Twin.json").exists() and (out / "Twin-2.json").exists()
    assert len(json.loads((out / "Twin-2.json").read_text())["planets"]) == 3


def test_colliding_planet_names_get_distinct_corner_plots(tmp_path, capsys):
    body = 'name = "Pax"\n[star]\nmass = 0.9\n'
    for j, p in enumerate(("b/1", "b_1", "\U0001F600")):
        body += (f'[[planet]]\nname = "{p}"\nperiod = {{ value = {3.0 * 1.9 ** j:.4f}, err = 0.001 }}\n'
                 'k = { value = 3.0, err = 0.5 }\necc = { value = 0.1, err = 0.03 }\n'
                 'omega = { value = 80.0, err = 20.0 }\n')
    f = tmp_path / "p.toml"
    f.write_text(body, encoding="utf-8")
    out = tmp_path / "out"
    rc, _, err = _run(["report", str(f), *FAST, "--out", str(out)], capsys)
    assert rc == 0, err
    corners = sorted(p.name for p in (out / "figures").glob("Pax_corner_*.png"))
    assert "Pax_corner_system.png" in corners
    assert "Pax_corner_b_1.png" in corners and any(c.startswith("Pax_corner_b_1-") for c in corners)
    assert "Pax_corner_planet.png" in corners          # the emoji name, not a second 'system' plot
    notes = [x for x in err.splitlines() if "corner plot" in x]
    assert len(notes) == 1 and "'b/1'" in notes[0]


def test_colliding_planet_stems_in_corner_plots(tmp_path, capsys):
    from archsys.output.file_names import unique_stems
    stems, renamed = unique_stems(["b/1", "b_1"], fallback="planet", reserved=("system",))
    assert stems[1] == "b_1" and stems[0].startswith("b_1-") and renamed == [("b/1", stems[0])]
    stems, _ = unique_stems(["\U0001F600", "\U0001F601"], fallback="planet", reserved=("system",))
    assert len(set(stems)) == 2 and "system" not in stems
    assert unique_stems(["system"], reserved=("system",))[0] == ["system-2"]


# ------------------------------------------------------------------ survey faults
def _cat(tmp_path):
    c = tmp_path / "cat.csv"
    c.write_text(CAT)
    return c


SURVEY = ["--mode", "direct", "--draws", "50", "--jobs", "1", "--no-figures", "--quiet"]


def test_survey_output_in_the_way_then_resumable(tmp_path, capsys):
    # README promises "no partial output" and "resumable": a table that cannot be written
    # leaves none of the tables, and the stored systems are kept for --resume.
    cat, out = _cat(tmp_path), tmp_path / "out"
    (out / "rejects.csv").mkdir(parents=True)
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
    one_line_exit_2(rc, err, "rejects.csv")
    assert files_in(out) == ["survey.sqlite"] or all(f.startswith("survey.sqlite") for f in files_in(out))
    (out / "rejects.csv").rmdir()
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY, "--resume"], capsys)
    assert rc == 0, err
    assert {"systems.csv", "planets.csv", "pairs.csv", "rejects.csv", "population.json"} <= set(files_in(out))


def test_survey_locked_folder_refused(tmp_path, capsys):
    # README promise "locked against concurrent runs"
    from archsys.survey.lock import SurveyLock
    cat, out = _cat(tmp_path), tmp_path / "out"
    with SurveyLock(out):
        rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
        one_line_exit_2(rc, err, "another archsys survey is running")
        assert files_in(out) == []
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
    assert rc == 0, err                                  # the lock goes with its holder


def test_lock_released_when_holder_is_killed(tmp_path):
    out = tmp_path / "out"
    holder = subprocess.Popen([sys.executable, "-c", "import sys, time; from archsys.survey.lock import "
                               "SurveyLock; l = SurveyLock(sys.argv[1]).__enter__(); print('locked', "
                               "flush=True); time.sleep(120)", str(out)], env=ENV, stdout=subprocess.PIPE,
                              text=True)
    try:
        assert holder.stdout.readline().strip() == "locked"
        from archsys.survey.lock import SurveyLock
        with pytest.raises(InputError, match="another archsys survey"):
            SurveyLock(out).__enter__()
        holder.kill()
        holder.wait(timeout=30)
        with SurveyLock(out):                            # no stale lock after kill -9
            pass
    finally:
        holder.kill()
        holder.wait(timeout=30)


def test_unreachable_dask_scheduler_leaves_no_store(tmp_path, capsys):
    pytest.importorskip("distributed")
    import dask
    cat, out = _cat(tmp_path), tmp_path / "out"
    with dask.config.set({"distributed.comm.timeouts.connect": "2s"}):
        rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY, "--scheduler",
                           "tcp://127.0.0.1:9"], capsys)
    one_line_exit_2(rc, err, "--scheduler", "cannot connect")
    assert not out.exists()


def test_failed_start_leaves_no_empty_store(tmp_path, capsys):
    # a store made by a run that then fails before storing anything is removed
    from archsys.survey import run as survey_run
    cat, out = _cat(tmp_path), tmp_path / "out"

    def boom(*a, **k):
        raise InputError("simulated failure before the first system")
    orig = survey_run.run_tasks
    survey_run.run_tasks = boom
    try:
        rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
    finally:
        survey_run.run_tasks = orig
    one_line_exit_2(rc, err, "simulated failure")
    assert not out.exists()


@pytest.mark.slow
def test_concurrent_surveys_into_one_folder(tmp_path):
    # two surveys started together: exactly one runs, the other is refused with one line
    cat = tmp_path / "cat.csv"
    cat.write_text("system,planet,period,period_err,star_mass\n" + "".join(
        f"S{i:03d},S{i:03d} b,{3 + i % 7}.1,0.01,1.0\nS{i:03d},S{i:03d} c,{9 + i % 5}.3,0.01,1.0\n"
        for i in range(150)))
    out = tmp_path / "out"
    cmd = [sys.executable, "-m", "archsys", "survey", str(cat), "--out", str(out), "--mode", "direct",
           "--draws", "500", "--jobs", "1", "--no-figures", "--quiet"]
    procs = [subprocess.Popen(cmd, env=ENV, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
             for _ in range(2)]
    res = [(p.wait(timeout=600), p.stderr.read()) for p in procs]
    codes = sorted(r for r, _ in res)
    assert codes == [0, 2], res
    refused = next(e for r, e in res if r == 2)
    assert "another archsys survey is running" in refused and refused.count("\n") == 1
    pop = json.loads((out / "population.json").read_text())
    assert pop["counts"]["systems_analysed"] == 150


@pytest.mark.slow
def test_workers_exit_when_the_parent_is_killed(tmp_path):
    cat = tmp_path / "cat.csv"
    cat.write_text("system,planet,period,period_err,star_mass\n" + "".join(
        f"S{i:03d},S{i:03d} b,{3 + i % 7}.1,0.01,1.0\nS{i:03d},S{i:03d} c,{9 + i % 5}.3,0.01,1.0\n"
        for i in range(400)))
    cmd = [sys.executable, "-m", "archsys", "survey", str(cat), "--out", str(tmp_path / "out"), "--mode",
           "direct", "--draws", "4000", "--jobs", "2", "--no-figures", "--quiet"]
    proc = subprocess.Popen(cmd, env=ENV, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        t0 = time.monotonic()
        workers = set()
        while len(workers) < 2 and time.monotonic() - t0 < 120:
            assert proc.poll() is None
            workers = child_pids(proc.pid)
            time.sleep(0.2)
        assert len(workers) >= 2, "workers did not start"
        time.sleep(2.0)
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(timeout=30)
        t1 = time.monotonic()
        while any(alive(w) for w in workers) and time.monotonic() - t1 < 20:
            time.sleep(0.2)
        left = [w for w in workers if alive(w)]
        assert not left, f"workers {left} still alive 20 s after the parent died"
    finally:
        if proc.poll() is None:
            proc.kill()
