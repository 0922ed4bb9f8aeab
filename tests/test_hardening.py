"""Issue 22, root causes 2-9: the outside world failing, deep nesting, identity of names, bad cells,
reports into survey folders, odd arguments and streams, and files read back without validation.

Each test names the README promise it backs: "one line, exit 2" (no traceback), "no partial
output" (all or nothing, staging folders removed), "bad rows never stop the survey", "limits on
every parser input".  Behaviour checks of archsys itself (no outside source needed); systems and
tables are invented for the test.  The full-disk cases use a small tmpfs when the tests run as
root (mount is possible), and are skipped with the reason otherwise.
"""
import errno
import io
import json
import os
import pathlib
import signal
import socket
import subprocess
import sys
import threading
import time

import numpy as np
import pytest

from archsys.cli import main
from archsys.errors import InputError
from cli_checks import files_in, one_line_exit_2

ROOT = pathlib.Path(__file__).resolve().parents[1]
KORRIN = ROOT / "demo_systems" / "korrin.toml"
FAST = ["--mode", "direct", "--draws", "100"]
ENV = dict(os.environ, PYTHONPATH=str(ROOT), MPLBACKEND="Agg")
SURVEY = ["--mode", "direct", "--draws", "50", "--jobs", "1", "--no-figures", "--quiet"]
CAT = ("system,planet,period,period_err,star_mass\n"
       "Alda,Alda b,3.1,0.001,0.9\nAlda,Alda c,7.4,0.001,0.9\n"
       "Brix,Brix b,5.2,0.001,1.1\nBrix,Brix c,11.9,0.001,1.1\n")


def _doc(tmp_path, name="Docia", fname="doc.json"):
    """A small report document (no analysis needed): stack draws it as one figure, PDF and PNG."""
    f = tmp_path / fname
    f.write_text(json.dumps({"system": name, "planets": [
        {"name": "b", "period_days": {"median": 3.1}, "a_au": {"median": 0.04}},
        {"name": "c", "period_days": {"median": 7.4}, "a_au": {"median": 0.07}}]}))
    return f


def _run(argv, capsys):
    rc = main(argv)
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


def _cli(argv, timeout=120, **kw):
    kw.setdefault("capture_output", True)
    return subprocess.run([sys.executable, "-m", "archsys", *argv], text=True, env=kw.pop("env", ENV),
                          timeout=timeout, **kw)


def _system(tmp_path, name, fname, planets=("b", "c")):
    body = f'name = "{name}"\n[star]\nmass = 0.9\n'
    for j, p in enumerate(planets):
        body += f'[[planet]]\nname = "{p}"\nperiod = {{ value = {3.0 * 1.9 ** j:.4f}, err = 0.001 }}\n' \
                f'k = {{ value = 3.0, err = 0.5 }}\n'
    f = tmp_path / fname
    f.write_text(body, encoding="utf-8")
    return f


def _cat(tmp_path, text=CAT, name="cat.csv"):
    c = tmp_path / name
    c.write_text(text, encoding="utf-8")
    return c


@pytest.fixture
def tmpfs(tmp_path):
    """A mounted tmpfs factory (root only): tmpfs(size) -> path; unmounted afterwards."""
    mounts = []

    def make(size):
        d = tmp_path / f"mnt{len(mounts)}"
        d.mkdir()
        r = subprocess.run(["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(d)],
                           capture_output=True, text=True)
        if r.returncode != 0:
            pytest.skip(f"cannot mount a tmpfs here ({r.stderr.strip() or 'not root'}): the full-disk and "
                        f"cross-file-system cases need one")
        mounts.append(d)
        return d
    yield make
    for d in mounts:
        subprocess.run(["umount", "-l", str(d)], capture_output=True)


# ================================================================== 2. the outside world fails
class _SilentServer:
    """Something that is not a Dask scheduler: accepts connections and never says a word."""

    def __init__(self):
        self.sock = socket.socket()
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen(8)
        self.port = self.sock.getsockname()[1]
        self.conns = []
        threading.Thread(target=self._serve, daemon=True).start()

    def _serve(self):
        while True:
            try:
                c, _ = self.sock.accept()
            except OSError:
                return
            self.conns.append(c)

    def close(self):
        for c in self.conns:
            c.close()
        self.sock.close()


def test_non_dask_server_on_scheduler_port_fails_fast(tmp_path):
    pytest.importorskip("distributed")
    srv = _SilentServer()
    try:
        cat, out = _cat(tmp_path), tmp_path / "out"
        t0 = time.monotonic()
        proc = _cli(["survey", str(cat), "--out", str(out), *SURVEY, "--scheduler", f"tcp://127.0.0.1:{srv.port}"],
                    env=dict(ENV, ARCHSYS_DASK_CONNECT_S="2"), timeout=120)
        waited = time.monotonic() - t0
    finally:
        srv.close()
    one_line_exit_2(proc.returncode, proc.stderr, "--scheduler", "no Dask scheduler answered")
    assert waited < 100                      # a deadline, not a hang (the figure is printed by nothing)
    assert not out.exists()


def test_dask_wait_gives_up_when_the_scheduler_goes_away():
    # every wait for a remote result has an end: the scheduler closes while a task runs
    pytest.importorskip("distributed")
    from distributed import Client, LocalCluster
    from archsys.survey.remote import results
    cluster = LocalCluster(n_workers=1, threads_per_worker=1, processes=False, dashboard_address=None)
    client = Client(cluster, timeout="2s")
    try:
        futs = client.map(time.sleep, [60], pure=False)
        threading.Timer(1.0, cluster.close).start()
        t0 = time.monotonic()
        with pytest.raises(InputError, match="Dask") as exc:
            list(results(client, futs))
        assert "--resume" in str(exc.value) and time.monotonic() - t0 < 50
    finally:
        client.close()
        cluster.close()


def test_oserror_inside_a_run_is_one_line(tmp_path, capsys, monkeypatch):
    from archsys.survey import run as survey_run

    def readonly(*a, **k):
        raise OSError(errno.EROFS, "Read-only file system", str(tmp_path / "out" / "systems.csv"))
    monkeypatch.setattr(survey_run, "_finish", readonly)
    rc, _, err = _run(["survey", str(_cat(tmp_path)), "--out", str(tmp_path / "out"), *SURVEY], capsys)
    one_line_exit_2(rc, err, "Read-only file system", "systems.csv")
    assert (tmp_path / "out" / "survey.sqlite").exists()        # the stored systems are kept


def test_sqlite_error_inside_a_run_is_one_line(tmp_path, capsys, monkeypatch):
    import sqlite3
    from archsys.survey.store import SurveyStore

    def full(self, res):
        raise sqlite3.OperationalError("database or disk is full")
    monkeypatch.setattr(SurveyStore, "put", full)
    monkeypatch.setattr(SurveyStore, "put_many", full)      # batched writes (issue 23) fail the same way
    rc, _, err = _run(["survey", str(_cat(tmp_path)), "--out", str(tmp_path / "out"), *SURVEY], capsys)
    one_line_exit_2(rc, err, "survey store", "disk is full", "--resume")


def _wait_for_staging(d, proc, limit=240):
    t0 = time.monotonic()
    while time.monotonic() - t0 < limit:
        if d.exists() and any(p.name.startswith(".archsys-staging-") for p in d.iterdir()):
            return True
        if proc.poll() is not None:
            return False
        time.sleep(0.01)
    return False


@pytest.mark.parametrize("sig, code", [(signal.SIGTERM, 143), (signal.SIGINT, 130)], ids=["SIGTERM", "SIGINT"])
def test_signal_while_staging_removes_staging(sig, code, tmp_path, capsys, monkeypatch):
    # the signal arrives while the files are being staged: exit 143/130, no staging folder,
    # no partial output, the folder the run made is gone
    from archsys.output import files
    real, calls = files._write_file, []

    def signalled(path, data, mode):
        calls.append(path)
        if len(calls) == 2:
            os.kill(os.getpid(), sig)
            time.sleep(1.0)                     # the handler runs here, in the main thread
        return real(path, data, mode)
    monkeypatch.setattr(files, "_write_file", signalled)
    out = tmp_path / "out"
    rc, _, err = _run(["stack", str(_doc(tmp_path)), "--figures", str(out)], capsys)
    assert rc == code, err
    assert "Traceback" not in err and len(err.splitlines()) == 1
    assert not out.exists()
    assert signal.getsignal(signal.SIGTERM) is not None             # the CLI put the old handler back


@pytest.mark.slow
@pytest.mark.parametrize("sig, code", [(signal.SIGTERM, 143), (signal.SIGINT, 130)], ids=["SIGTERM", "SIGINT"])
def test_signal_to_a_report_process_removes_staging(tmp_path, sig, code):
    out = tmp_path / "out"
    files = [str(p) for p in sorted((ROOT / "demo_systems").glob("*.toml"))]
    proc = subprocess.Popen([sys.executable, "-m", "archsys", "report", *files, *FAST, "--quiet",
                             "--out", str(out)], env=ENV, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                            text=True)
    try:
        if not _wait_for_staging(out, proc):
            pytest.skip("the report finished before its staging folder was seen (machine too fast)")
        proc.send_signal(sig)
        _, err = proc.communicate(timeout=120)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert proc.returncode == code, err
    assert "Traceback" not in err
    assert files_in(out) == []                                # no partial output, no staging folder
    assert not out.exists() or list(out.iterdir()) == []


_STAGER = ("import sys, time; from archsys.output.files import StagedOutput, atomic_write; "
           "st = StagedOutput(sys.argv[1]).__enter__(); atomic_write(sys.argv[1] + '/a.txt', 'half'); "
           "print('staged', flush=True); time.sleep(120)")


def test_staging_of_a_killed_run_is_removed_by_the_next_run(tmp_path, capsys):
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-c", _STAGER, str(out)], env=ENV, stdout=subprocess.PIPE, text=True)
    try:
        assert proc.stdout.readline().strip() == "staged"
    finally:
        proc.kill()                                           # kill -9 while staging: no cleanup can run
        proc.wait()
    assert [p.name for p in out.iterdir() if p.name.startswith(".archsys-staging-")]
    rc, _, err = _run(["stack", str(_doc(tmp_path)), "--figures", str(out)], capsys)
    assert rc == 0, err
    assert not [p.name for p in out.iterdir() if p.name.startswith(".archsys-staging-")]
    assert not (out / "a.txt").exists()


def _dead_pid():
    p = subprocess.Popen([sys.executable, "-c", "pass"])
    p.wait()
    return p.pid


def test_staging_of_a_live_run_is_kept(tmp_path):
    # the lock decides: a folder named after a dead process id but locked by a live run stays
    from archsys.output.files import remove_stale_staging
    d = tmp_path / "out"
    live = d / f".archsys-staging-{_dead_pid()}-live"
    live.mkdir(parents=True)
    holder = subprocess.Popen([sys.executable, "-c", "import fcntl, os, sys, time; fd = os.open(sys.argv[1], "
                               "os.O_RDONLY); fcntl.flock(fd, fcntl.LOCK_EX); print('ok', flush=True); "
                               "time.sleep(60)", str(live)], stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout.readline().strip() == "ok"
        assert remove_stale_staging(d) == 0 and live.exists()
    finally:
        holder.kill()
        holder.wait()


def test_old_unlocked_staging_with_a_reused_process_id_is_removed(tmp_path):
    from archsys.output.files import remove_stale_staging
    old = tmp_path / ".archsys-staging-1-old"        # process 1 is alive (a reused id), nobody holds the lock
    old.mkdir()
    young = tmp_path / ".archsys-staging-1-young"    # may be a run that has not locked it yet: kept
    young.mkdir()
    two_hours_ago = time.time() - 7200
    os.utime(old, (two_hours_ago, two_hours_ago))
    assert remove_stale_staging(tmp_path) == 1
    assert not old.exists() and young.exists()


def test_final_move_failing_part_way_restores_everything(tmp_path, capsys, monkeypatch):
    # a target that cannot be replaced (read-only in effect) on the 2nd move: the file moved
    # before it is taken out again and the earlier outputs are back, byte for byte
    out = tmp_path / "out"
    rc, _, err = _run(["stack", str(_doc(tmp_path, "First")), "--figures", str(out)], capsys)
    assert rc == 0, err
    before = {f: (out / f).read_bytes() for f in files_in(out)}
    assert len(before) == 2
    from archsys.output import files
    real, calls = files._move, []

    def failing(src, final):
        calls.append(final)
        if len(calls) == 2:
            raise PermissionError(errno.EACCES, "Permission denied", str(final))
        return real(src, final)
    monkeypatch.setattr(files, "_move", failing)
    rc, _, err = _run(["stack", str(_doc(tmp_path, "Second", "doc2.json")), "--figures", str(out)], capsys)
    one_line_exit_2(rc, err, "Permission denied")
    assert len(calls) == 2
    assert {f: (out / f).read_bytes() for f in files_in(out)} == before
    assert not [p for p in out.rglob(".*")]                  # no staging folder, no backup left


def test_staged_output_rolls_back_many_files(tmp_path, monkeypatch):
    from archsys.output import files
    from archsys.output.files import StagedOutput, atomic_write
    with StagedOutput(tmp_path):
        for i in range(8):
            atomic_write(tmp_path / "figures" / f"f{i}.txt", f"old{i}")
    real, calls = files._move, []

    def failing(src, final):
        calls.append(final)
        if len(calls) == 6:
            raise PermissionError(errno.EACCES, "Permission denied", str(final))
        return real(src, final)
    monkeypatch.setattr(files, "_move", failing)
    with pytest.raises(PermissionError):
        with StagedOutput(tmp_path):
            for i in range(8):
                atomic_write(tmp_path / "figures" / f"f{i}.txt", f"new{i}")
            atomic_write(tmp_path / "figures" / "extra.txt", "new")
    assert files_in(tmp_path) == sorted(f"figures/f{i}.txt" for i in range(8))
    assert [(tmp_path / "figures" / f"f{i}.txt").read_text() for i in range(8)] == [f"old{i}" for i in range(8)]


def test_final_move_failing_in_a_new_folder_leaves_nothing(tmp_path, capsys, monkeypatch):
    from archsys.output import files
    real, calls = files._move, []

    def failing(src, final):
        calls.append(final)
        if len(calls) == 2:
            raise PermissionError(errno.EACCES, "Permission denied", str(final))
        return real(src, final)
    monkeypatch.setattr(files, "_move", failing)
    rc, _, err = _run(["stack", str(_doc(tmp_path)), "--figures", str(tmp_path / "new" / "out")], capsys)
    one_line_exit_2(rc, err, "Permission denied")
    assert not (tmp_path / "new").exists()


def test_figures_symlinked_to_another_file_system(tmp_path, capsys, tmpfs):
    # EXDEV: figures/ is a symbolic link to a folder on another file system (copy + rename there)
    other = tmpfs("64m")
    (other / "figs").mkdir()
    out = tmp_path / "out"
    out.mkdir()
    (out / "figures").symlink_to(other / "figs")
    rc, _, err = _run(["report", str(KORRIN), *FAST, "--out", str(out)], capsys)
    assert rc == 0, err
    figs = sorted(p.name for p in (other / "figs").iterdir())
    assert "Korrin_architecture.png" in figs or any(f.endswith(".png") for f in figs)
    assert not [f for f in figs if f.startswith(".")]               # no copy left half-way


def test_full_disk_during_report(tmp_path, capsys, tmpfs):
    disk = tmpfs("200k")
    rc, _, err = _run(["report", str(KORRIN), *FAST, "--out", str(disk / "out")], capsys)
    one_line_exit_2(rc, err, "No space left")
    assert files_in(disk) == [] and not [p for p in disk.rglob(".archsys-staging-*")]


def test_full_disk_during_stack(tmp_path, capsys, tmpfs):
    disk = tmpfs("60k")
    rc, out, err = _run(["stack", str(KORRIN), str(KORRIN), *FAST, "--figures", str(disk / "f")], capsys)
    one_line_exit_2(rc, err, "No space left")
    assert files_in(disk) == []                          # not page 1 alone, nothing


def test_full_disk_during_survey_then_resume(tmp_path, capsys, tmpfs):
    disk = tmpfs("400k")
    cat, out = _cat(tmp_path), disk / "out"
    filler = disk / "filler"
    with open(filler, "wb") as fh:         # leave too little room for the figures but enough for the store
        fh.write(b"\0" * (400 * 1024 - 150 * 1024))
    args = ["survey", str(cat), "--out", str(out), "--mode", "direct", "--draws", "50", "--jobs", "1", "--quiet"]
    rc, _, err = _run(args, capsys)
    one_line_exit_2(rc, err)
    assert "No space left" in err or "disk is full" in err, err
    assert not [p for p in disk.rglob(".archsys-staging-*")]
    assert not (out / "population.json").exists()
    rc, _, err = _run(args + ["--resume"], capsys)       # still full: one line again
    one_line_exit_2(rc, err)
    filler.unlink()
    subprocess.run(["mount", "-o", "remount,size=64m", str(disk)], check=True)    # room again
    rc, _, err = _run(args + ["--resume"], capsys)
    assert rc == 0, err
    assert (out / "population.json").exists()


def test_stack_into_dev_full(tmp_path):
    if not os.path.exists("/dev/full"):
        pytest.skip("/dev/full not present")
    with open("/dev/full", "w") as full:
        proc = subprocess.run([sys.executable, "-m", "archsys", "stack", str(_doc(tmp_path)), "--figures",
                               str(tmp_path / "f")], stdout=full, stderr=subprocess.PIPE, text=True,
                              env=ENV, timeout=300)
    one_line_exit_2(proc.returncode, proc.stderr, "cannot write to standard output")


@pytest.mark.parametrize("flag", ["--version", "--help"])
def test_version_and_help_into_a_full_device(flag):
    if not os.path.exists("/dev/full"):
        pytest.skip("/dev/full not present")
    with open("/dev/full", "w") as full:
        proc = subprocess.run([sys.executable, "-m", "archsys", flag], stdout=full, stderr=subprocess.PIPE,
                              text=True, env=ENV, timeout=120)
    one_line_exit_2(proc.returncode, proc.stderr, "cannot write to standard output")


def test_report_json_with_stdout_closed():
    proc = subprocess.run([sys.executable, "-m", "archsys", "report", str(KORRIN), "--json", *FAST],
                          stderr=subprocess.PIPE, text=True, env=ENV, timeout=120,
                          preexec_fn=lambda: os.close(1))
    one_line_exit_2(proc.returncode, proc.stderr, "standard output is closed")


# ================================================================== 3. depth and size limits
DEEP = 20_000


def test_deeply_nested_system_file(tmp_path, capsys):
    f = tmp_path / "deep.toml"
    f.write_text('name = "Deep"\nnotes = ' + "[" * DEEP + "]" * DEEP + "\n")
    rc, _, err = _run(["report", str(f), "--json", *FAST], capsys)
    one_line_exit_2(rc, err, "deep.toml", "nested")


def test_moderately_nested_system_file_beyond_the_limit(tmp_path, capsys):
    f = tmp_path / "deep40.toml"
    f.write_text('name = "Deep"\nnotes = ' + "[" * 40 + '"x"' + "]" * 40 + "\n")
    rc, _, err = _run(["report", str(f), "--json", *FAST], capsys)
    one_line_exit_2(rc, err, "nested more than 32 levels")


def test_deeply_nested_column_map(tmp_path, capsys):
    m = tmp_path / "map.toml"
    m.write_text('[keys]\nsystem = "system"\n[aliases]\nx = ' + "[" * DEEP + "]" * DEEP + "\n")
    rc, _, err = _run(["survey", str(_cat(tmp_path)), "--columns", str(m), "--out", str(tmp_path / "o"),
                       *SURVEY], capsys)
    one_line_exit_2(rc, err, "map.toml", "nested")
    assert not (tmp_path / "o").exists()


def test_deeply_nested_prior_file(tmp_path, capsys):
    p = tmp_path / "prior.toml"
    p.write_text('name = "deep"\nquantity = "eccentricity"\nfamily = "beta"\nx = ' + "{a=" * DEEP + "1"
                 + "}" * DEEP + "\n")
    rc, _, err = _run(["report", str(KORRIN), "--json", "--mode", "mcmc", "--prior", str(p)], capsys)
    one_line_exit_2(rc, err, "prior.toml", "nested")


@pytest.mark.parametrize("expr", ["(" * 5000 + "n_planets>=1" + ")" * 5000, "not " * 5000 + "n_planets>=1",
                                  "any(" * 5000 + "n_planets>=1" + ")" * 5000],
                         ids=["parentheses", "not", "any"])
def test_deeply_nested_where(expr, tmp_path, capsys):
    rc, _, err = _run(["survey", str(_cat(tmp_path)), "--out", str(tmp_path / "o"), *SURVEY, "--where", expr],
                      capsys)
    one_line_exit_2(rc, err, "--where", "nested more than 100 levels")
    assert len(err) < 400


def test_deeply_nested_transit_planets(tmp_path, capsys):
    rc, _, err = _run(["survey", str(_cat(tmp_path)), "--out", str(tmp_path / "o"), *SURVEY,
                       "--transit-planets", "(" * 3000 + "period>1" + ")" * 3000], capsys)
    one_line_exit_2(rc, err, "--transit-planets", "nested")


def test_thousand_or_terms_are_flat(tmp_path, capsys):
    expr = " or ".join(f"n_planets=={k}" for k in range(1000, 0, -1))
    rc, _, err = _run(["survey", str(_cat(tmp_path)), "--out", str(tmp_path / "o"), *SURVEY, "--where", expr],
                      capsys)
    assert rc == 0, err
    pop = json.loads((tmp_path / "o" / "population.json").read_text())
    assert pop["counts"]["systems_analysed"] == 2


def test_where_longer_than_the_limit(tmp_path, capsys):
    rc, _, err = _run(["survey", str(_cat(tmp_path)), "--out", str(tmp_path / "o"), *SURVEY,
                       "--where", "n_planets>=1 and " * 7000 + "n_planets>=1"], capsys)
    one_line_exit_2(rc, err, "at most 100000")


def _npz(path, meta, draws):
    arrays = {f"draws.{k}": np.asarray(v, dtype=float) for k, v in draws.items()}
    text = meta if isinstance(meta, str) else json.dumps(meta)
    arrays["meta"] = np.frombuffer(text.encode("utf-8"), dtype=np.uint8)
    np.savez(path, **arrays)
    return path


def _meta(names=("b", "c"), system="Npzia", document=None):
    doc = document if document is not None else {
        "system": system, "planets": [{"name": n, "period_days": {"median": 3.0 * (j + 1)}}
                                       for j, n in enumerate(names)]}
    return {"format": "archsys-chains", "format_version": 1, "system": system, "planet_names": list(names),
            "method": "direct", "seed": 0, "n_draws": 20, "keys": {"period": "planet"}, "document": doc}


def _periods(n=20):
    return {"period": np.column_stack([np.full(n, 3.0), np.full(n, 7.0)])}


def test_deeply_nested_npz_metadata(tmp_path, capsys):
    f = _npz(tmp_path / "deep.npz", '{"format": "archsys-chains", "x": ' + "[" * DEEP + "]" * DEEP + "}",
             _periods())
    rc, _, err = _run(["plot", str(f), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, "deep.npz", "nested")
    assert not (tmp_path / "f").exists()


def test_deeply_nested_json_document_for_stack(tmp_path, capsys):
    f = tmp_path / "doc.json"
    f.write_text('{"system": "X", "planets": ' + "[" * DEEP + "]" * DEEP + "}")
    rc, _, err = _run(["stack", str(f), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, "doc.json", "nested")


# ================================================================== 4. identity of systems and names
def _parquet(path, ids, planets, periods):
    pa = pytest.importorskip("pyarrow")
    import pyarrow.parquet as pq
    n = len(ids)
    tab = pa.table({"system": pa.array(ids, type=pa.binary()), "planet": pa.array(planets, type=pa.binary()),
                    "period": periods, "period_err": [0.001] * n, "star_mass": [0.9] * n})
    pq.write_table(tab, path)
    return path


def test_parquet_ids_that_are_not_utf8_are_rejected_not_merged(tmp_path, capsys):
    cat = _parquet(tmp_path / "c.parquet", [b"Al\xff", b"Al\xfe", b"Bo", b"Bo"],
                   [b"x b", b"y b", b"Bo b", b"Bo c"], [3.1, 7.4, 5.2, 11.9])
    out = tmp_path / "o"
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
    assert rc == 0, err
    pop = json.loads((out / "population.json").read_text())
    assert pop["counts"]["systems_analysed"] == 1            # Bo only: no merged four-planet 'Al?'
    assert pop["counts"]["rows_malformed"] == 2
    rej = (out / "rejects.csv").read_text()
    assert rej.count("not UTF-8") == 2 and "\ufffd" not in rej


def test_parquet_planet_name_not_utf8_rejects_its_system(tmp_path, capsys):
    cat = _parquet(tmp_path / "c.parquet", [b"Al", b"Al", b"Bo", b"Bo"],
                   [b"Al b", b"Al \xff", b"Bo b", b"Bo c"], [3.1, 7.4, 5.2, 11.9])
    out = tmp_path / "o"
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
    assert rc == 0, err
    pop = json.loads((out / "population.json").read_text())
    assert pop["counts"]["systems_analysed"] == 1 and pop["counts"]["systems_rejected"] == 1
    assert "column 'planet': not UTF-8 text" in (out / "rejects.csv").read_text()


def test_nfc_and_nfd_spellings_are_one_system_with_a_note(tmp_path, capsys):
    nfc, nfd = "Caf\u00e9", "Cafe\u0301"
    cat = _cat(tmp_path, "system,planet,period,period_err,star_mass\n"
                         f"{nfc},{nfc} b,3.1,0.001,0.9\n{nfd},{nfd} c,7.4,0.001,0.9\n")
    out = tmp_path / "o"
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY[:-1]], capsys)
    assert rc == 0, err
    pop = json.loads((out / "population.json").read_text())
    assert pop["counts"]["systems_selected"] == 1 and pop["counts"]["planets_analysed"] == 2
    notes = [x for x in err.splitlines() if "Unicode spellings" in x]
    assert len(notes) == 1 and "Caf\\xe9" in notes[0] and "Cafe\\u0301" in notes[0]


def test_output_names_independent_of_argument_order():
    from archsys.output.file_names import unique_stems
    names = ["vela", "Vela", "VELA", "Col/X", "Col_X"]
    want = dict(zip(names, unique_stems(names)[0]))
    for k in range(len(names)):                                # every rotation of the arguments
        order = names[k:] + names[:k]
        assert dict(zip(order, unique_stems(order)[0])) == want
    assert want["VELA"] == "VELA" and want["Col_X"] == "Col_X"         # first in code-point order keeps it
    assert want["Vela"].startswith("Vela-") and want["vela"].startswith("vela-")
    assert want["Col/X"].startswith("Col_X-")
    # the report's file stems are these (cli_commands._write_report_files: unique_stems of the system names;
    # test_faults.test_colliding_system_stems_are_unique_and_said runs the CLI in both orders)


# ================================================================== 5. one bad cell
def test_a_200000_character_cell_rejects_its_row_only(tmp_path, capsys):
    cat = _cat(tmp_path, CAT + f"Cyra,Cyra b,2.2,0.001,0.8\nCyra,{'x' * 200_000},4.9,0.001,0.8\n")
    out = tmp_path / "o"
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
    assert rc == 0, err
    pop = json.loads((out / "population.json").read_text())
    assert pop["counts"]["systems_analysed"] == 2 and pop["counts"]["systems_rejected"] == 1
    rej = (out / "rejects.csv").read_text()
    assert "200000 characters" in rej and len(rej) < 5000


# ================================================================== 6. reports and survey folders
@pytest.fixture
def survey_dir(tmp_path, capsys):
    out = tmp_path / "survey"
    rc, _, err = _run(["survey", str(_cat(tmp_path)), "--out", str(out), *SURVEY], capsys)
    assert rc == 0, err
    return out


def test_report_refuses_to_write_into_a_survey_folder(survey_dir, capsys):
    before = (survey_dir / "population.json").read_bytes()
    rc, _, err = _run(["report", str(KORRIN), *FAST, "--out", str(survey_dir)], capsys)
    one_line_exit_2(rc, err, "output folder of a survey")
    assert (survey_dir / "population.json").read_bytes() == before


def test_report_refuses_a_survey_figures_folder(survey_dir, capsys):
    rc, _, err = _run(["report", str(KORRIN), *FAST, "--figures", str(survey_dir / "figures")], capsys)
    one_line_exit_2(rc, err, "output folder of a survey")


def test_report_respects_the_survey_lock(tmp_path, capsys):
    from archsys.survey.lock import SurveyLock
    out = tmp_path / "busy"
    with SurveyLock(out):
        rc, _, err = _run(["report", str(KORRIN), *FAST, "--out", str(out)], capsys)
    one_line_exit_2(rc, err, "survey is running")
    assert files_in(out) == []


# ================================================================== 7. odd arguments and streams
def test_long_system_name_in_figures(tmp_path, capsys):
    name = "A" * 20 + " very long system designation"[:28]
    assert len(name) == 48
    f = _system(tmp_path, name, "long.toml")
    rc, _, err = _run(["report", str(f), *FAST, "--figures", str(tmp_path / "f")], capsys)
    assert rc == 0, err
    from archsys.output.figures.architecture import row_label
    assert len(row_label(name)) == 24 and row_label(name).startswith("AAAA")


@pytest.mark.parametrize("cmd", ["report", "survey"])
def test_empty_out_refused(cmd, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    args = ["report", str(KORRIN), *FAST, "--out", ""] if cmd == "report" else \
        ["survey", str(_cat(tmp_path)), *SURVEY, "--out", ""]
    rc, _, err = _run(args, capsys)
    one_line_exit_2(rc, err, "--out", "empty folder name")
    assert sorted(p.name for p in tmp_path.iterdir()) == (["cat.csv"] if cmd == "survey" else [])


@pytest.mark.parametrize("cmd", ["report", "survey"])
def test_300_character_out_refused(cmd, tmp_path, capsys):
    long = str(tmp_path / ("d" * 300))
    args = ["report", str(KORRIN), *FAST, "--out", long] if cmd == "report" else \
        ["survey", str(_cat(tmp_path)), *SURVEY, "--out", long]
    rc, _, err = _run(args, capsys)
    one_line_exit_2(rc, err, "--out", "at most 255")


def test_stack_negative_limit_refused(tmp_path, capsys):
    rc, _, err = _run(["stack", str(KORRIN), *FAST, "--limit", "-3", "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, "--limit", "at least 1")
    assert not (tmp_path / "f").exists()


def test_long_warning_is_clipped():
    from archsys.cli import _one_line_warnings
    buf = io.StringIO()
    old = sys.stderr
    sys.stderr = buf
    try:
        _one_line_warnings("unit '" + "m" * 10_000 + "' did not parse", UserWarning, "x", 1)
    finally:
        sys.stderr = old
    assert buf.getvalue().count("\n") == 1 and len(buf.getvalue()) < 400


def test_long_unit_string_is_clipped_in_the_error(tmp_path, capsys):
    f = tmp_path / "u.toml"
    f.write_text('name = "Unit"\n[star]\nmass = 0.9\n[[planet]]\nname = "b"\n'
                 f'period = {{ value = 3.0, unit = "{"furlong" * 1500}" }}\n')
    rc, _, err = _run(["report", str(f), "--json", *FAST], capsys)
    one_line_exit_2(rc, err, "unit")
    assert len(err) < 600


# ================================================================== 8. chains and documents read back
@pytest.mark.parametrize("bad, token", [
    ({"period": np.column_stack([np.full(20, 3.0), np.r_[np.full(19, 7.0), np.nan]])}, "NaN"),
    ({"period": np.column_stack([np.full(20, 3.0), np.full(20, -7.0)])}, "outside"),
    ({"period": np.column_stack([np.full(20, 3.0), np.full(20, np.inf)])}, "infinite"),
    ({"period": np.column_stack([np.full(20, 3.0), np.full(20, 7.0)]),
      "ecc": np.column_stack([np.full(20, 0.1), np.full(20, 1.5)])}, "'ecc'"),
], ids=["nan-period", "negative-period", "infinite-period", "ecc-above-1"])
def test_plot_refuses_chains_with_bad_draws(bad, token, tmp_path, capsys):
    f = _npz(tmp_path / "c.npz", _meta(), bad)
    rc, _, err = _run(["plot", str(f), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, "c.npz", token)
    assert not (tmp_path / "f").exists()


@pytest.mark.parametrize("planets, token", [("b, c", "'planets' must be a non-empty list"),
                                            ([3.0, 7.0], "'planets[0]' must be an object")],
                         ids=["string", "list-of-numbers"])
def test_chains_document_planets_of_the_wrong_type(planets, token, tmp_path, capsys):
    f = _npz(tmp_path / "c.npz", _meta(document={"system": "Npzia", "planets": planets}), _periods())
    rc, _, err = _run(["plot", str(f), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, token)


@pytest.mark.parametrize("name", ["b\x1b]0;x\x07", "c\x07"])
def test_chains_planet_name_with_control_characters(name, tmp_path, capsys):
    f = _npz(tmp_path / "c.npz", _meta(names=("b", name)), _periods())
    rc, _, err = _run(["plot", str(f), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, "control character")
    assert "\x1b" not in err and "\x07" not in err


@pytest.mark.parametrize("doc, token", [({"system": "X", "planets": "b"}, "'planets' must be"),
                                        ({"system": "X\x1b[31m", "planets": [{"name": "b"}]}, "control character"),
                                        ({"system": "X", "planets": [{"name": 5}]}, "'planets[0].name'"),
                                        ([1, 2], "a JSON object was expected")],
                         ids=["planets-string", "escape-in-name", "numeric-name", "list-of-numbers"])
def test_stack_refuses_malformed_documents(doc, token, tmp_path, capsys):
    f = tmp_path / "doc.json"
    f.write_text(json.dumps(doc))
    rc, _, err = _run(["stack", str(f), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, token)


def test_saved_chains_still_read_back(tmp_path):
    # what archsys writes passes the checks it applies on reading
    import archsys
    from archsys.options import AnalysisOptions
    from archsys.output.chains import load_posterior, save_posterior
    res = archsys.analyze(archsys.read_system(KORRIN), AnalysisOptions(mode="direct", n_draws=100))
    f = save_posterior(tmp_path / "k.chains.npz", res.posterior, res.document)
    draws, meta = load_posterior(f)
    assert draws["period"].shape == (100, 3) and meta["document"]["system"] == "Korrin"


@pytest.mark.slow
def test_scheduler_killed_mid_survey_then_resume_is_identical(tmp_path):
    # README: a scheduler that dies mid-survey: one line, the store is kept, --resume gives the same bytes
    pytest.importorskip("distributed")
    cat = _cat(tmp_path, "system,planet,period,period_err,star_mass\n" + "".join(
        f"S{i:03d},S{i:03d} b,{3 + i % 7}.1,0.01,1.0\nS{i:03d},S{i:03d} c,{9 + i % 5}.3,0.01,1.0\n"
        for i in range(120)))
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    addr = f"tcp://127.0.0.1:{port}"
    sched = subprocess.Popen([sys.executable, "-m", "distributed.cli.dask_scheduler", "--host", "127.0.0.1",
                              "--port", str(port), "--dashboard-address", ":0"], env=ENV,
                             stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    worker = subprocess.Popen([sys.executable, "-m", "distributed.cli.dask_worker", addr, "--nthreads", "1",
                               "--nworkers", "1", "--no-dashboard"], env=ENV, stdout=subprocess.DEVNULL,
                              stderr=subprocess.DEVNULL)
    out = tmp_path / "out"
    args = ["survey", str(cat), "--out", str(out), "--mode", "direct", "--draws", "3000", "--no-figures",
            "--quiet"]
    try:
        proc = subprocess.Popen([sys.executable, "-m", "archsys", *args, "--scheduler", addr], env=ENV,
                                stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        t0 = time.monotonic()
        import sqlite3
        while time.monotonic() - t0 < 240:
            assert proc.poll() is None, proc.stderr.read()
            try:
                db = sqlite3.connect(str(out / "survey.sqlite"))
                n = db.execute("SELECT COUNT(*) FROM systems").fetchone()[0]
                db.close()
            except sqlite3.Error:
                n = 0
            if n >= 5:
                break
            time.sleep(0.2)
        sched.kill()
        _, err = proc.communicate(timeout=180)
    finally:
        for p in (sched, worker):
            p.kill()
            p.wait()
    one_line_exit_2(proc.returncode, err, "--resume")
    assert (out / "survey.sqlite").exists() and not (out / "population.json").exists()
    proc = _cli([*args, "--jobs", "1", "--resume"], timeout=600)
    assert proc.returncode == 0, proc.stderr
    ref = tmp_path / "ref"
    proc = _cli(["survey", str(cat), "--out", str(ref), *args[4:], "--jobs", "1"], timeout=600)
    assert proc.returncode == 0, proc.stderr
    for f in ("systems.csv", "planets.csv", "pairs.csv", "rejects.csv", "population.json"):
        assert (out / f).read_bytes() == (ref / f).read_bytes(), f


@pytest.mark.parametrize("planet, token", [({"name": "b", "period_days": {"median": -3.0}}, "must be positive"),
                                           ({"name": "b", "a_au": {"median": 0.0}}, "must be positive"),
                                           ({"name": "b", "ecc": {"median": 1.2}}, "[0, 1)")],
                         ids=["negative-period", "zero-a", "ecc-above-1"])
def test_stack_refuses_documents_with_values_out_of_range(planet, token, tmp_path, capsys):
    f = tmp_path / "doc.json"
    f.write_text(json.dumps({"system": "X", "planets": [planet]}))
    rc, _, err = _run(["stack", str(f), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, token)


def test_stack_refuses_a_document_with_an_overflowing_number(tmp_path, capsys):
    f = tmp_path / "doc.json"
    f.write_text('{"system": "X", "planets": [{"name": "b", "mass_mearth": {"median": 1e999}}]}')
    rc, _, err = _run(["stack", str(f), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, "finite numbers only")


def test_chains_with_mismatched_document_refused(tmp_path, capsys):
    f = _npz(tmp_path / "c.npz", _meta(document={"system": "Npzia", "planets": [{"name": "b"}]}), _periods())
    rc, _, err = _run(["plot", str(f), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, "1 planets for 2 planet names")


def test_over_long_names_refused_like_in_documents(tmp_path, capsys):
    # system files and documents read back share the name limit (200 characters)
    f = _system(tmp_path, "N" * 201, "n.toml")
    rc, _, err = _run(["report", str(f), "--json", *FAST], capsys)
    one_line_exit_2(rc, err, "201 characters", "at most 200")
    g = _system(tmp_path, "N" * 200, "m.toml")
    rc, out, err = _run(["report", str(g), "--json", *FAST], capsys)
    assert rc == 0, err
    doc = tmp_path / "doc.json"
    doc.write_text(out)
    rc, _, err = _run(["stack", str(doc), "--figures", str(tmp_path / "f")], capsys)
    assert rc == 0, err


def test_stack_of_a_survey_folder_with_foreign_tables(tmp_path, capsys):
    d = tmp_path / "notasurvey"
    d.mkdir()
    (d / "systems.csv").write_text("foo\n1\n")
    (d / "planets.csv").write_text("system,planet\nA,A b\n")
    (d / "pairs.csv").write_text("system\nA\n")
    rc, _, err = _run(["stack", str(d), "--figures", str(tmp_path / "f")], capsys)
    one_line_exit_2(rc, err, "systems.csv", "no column 'system'")


def test_sigterm_during_survey_keeps_the_store_and_resume_is_identical(tmp_path, capsys, monkeypatch):
    from archsys.survey.store import SurveyStore
    cat = _cat(tmp_path, CAT + "Cyra,Cyra b,2.2,0.001,0.8\nCyra,Cyra c,4.9,0.001,0.8\n")
    ref = tmp_path / "ref"
    rc, _, err = _run(["survey", str(cat), "--out", str(ref), *SURVEY], capsys)
    assert rc == 0, err
    real, calls = SurveyStore.put_many, []

    def put_then_term(self, results):
        results = list(results)
        real(self, results)
        calls.extend(r["system"] for r in results)
        if len(calls) >= 2:
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(1.0)
    monkeypatch.setattr(SurveyStore, "put_many", put_then_term)
    out = tmp_path / "out"
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY], capsys)
    assert rc == 143 and err.strip() == "archsys: terminated", err
    assert sorted(p.name for p in out.iterdir() if not p.name.startswith("survey.sqlite")) == []
    monkeypatch.setattr(SurveyStore, "put_many", real)
    rc, _, err = _run(["survey", str(cat), "--out", str(out), *SURVEY, "--resume"], capsys)
    assert rc == 0, err
    for f in ("systems.csv", "planets.csv", "pairs.csv", "rejects.csv", "population.json"):
        assert (out / f).read_bytes() == (ref / f).read_bytes(), f


def test_full_disk_at_the_start_of_a_survey(tmp_path, capsys, tmpfs):
    disk = tmpfs("64k")
    with pytest.raises(OSError):
        with open(disk / "filler", "wb") as fh:        # fill the disk to the last byte
            while True:
                fh.write(b"\0" * 4096)
                fh.flush()
    rc, _, err = _run(["survey", str(_cat(tmp_path)), "--out", str(disk / "out"), *SURVEY], capsys)
    one_line_exit_2(rc, err)
    assert "No space left" in err or "disk is full" in err or "no room" in err, err
    assert not (disk / "out").exists()
