"""A failed or interrupted survey stops its process pools before it reports: one error line, nothing after.

The promise checked here is the CLI's (README: every user-facing error is one line and exit status 2;
a CLI's error is one line, common practice).  Its enemy was a race at interpreter exit: a pool shut
down with ``wait=False`` kept its manager thread closing a wake-up pipe while the exit hook of
``concurrent.futures`` (CPython 3.10, 3.11) wrote to it without a lock, now and then printing an
``OSError: [Errno 9] Bad file descriptor`` traceback after the error line (seen once in CI, in the
slow Dask test of tests/test_hardening.py; 4 of 250 bare runs, DEVELOPERS.md "Stopping a process pool").
"""
import multiprocessing
import os
import pathlib
import signal
import sqlite3
import subprocess
import sys
import threading
import time

import pytest

from archsys.cli import main
from archsys.survey import popfits
from archsys.survey.store import SurveyStore
from cli_checks import one_line_exit_2, alive, child_pids

ROOT = pathlib.Path(__file__).resolve().parents[1]
ENV = dict(os.environ, PYTHONPATH=str(ROOT), MPLBACKEND="Agg")
CAT = "system,planet,period,period_err,star_mass\n" + "".join(
    f"S{i:03d},S{i:03d} b,{3 + i % 7}.1,0.01,1.0\nS{i:03d},S{i:03d} c,{9 + i % 5}.3,0.01,1.0\n" for i in range(24))


def _hold(marker, payload=None):
    """A population fit that never ends by itself: says it started, then waits."""
    pathlib.Path(marker).write_text("started")
    time.sleep(600)


def _pool_threads():
    """The manager threads of the process pools alive in this process (other tests' pools kept for reuse too)."""
    return {t for t in threading.enumerate() if type(t).__name__ == "_ExecutorManagerThread"}


def test_cancelled_fits_leave_no_process_and_no_pool_thread(tmp_path):
    # a fit is running and a large fit input is still queued when the survey fails: on return of
    # close(cancel=True) the fit's process is gone and no pool thread is left for the exit hook
    before, threads = set(multiprocessing.active_children()), _pool_threads()
    fits = popfits.FitRunner(1)
    marker = tmp_path / "started"
    try:
        busy = fits.submit(_hold, str(marker))
        queued = fits.submit(_hold, str(tmp_path / "never"), b"x" * (4 << 20))   # more than a pipe holds
        t0 = time.monotonic()
        while not marker.exists() and time.monotonic() - t0 < 60:
            time.sleep(0.01)
        assert marker.exists(), "the fit process did not start within 60 s"
        fits.close(cancel=True)
        assert not _pool_threads() - threads
        assert not set(multiprocessing.active_children()) - before
        assert busy.done() and queued.done() and not (tmp_path / "never").exists()
    finally:
        for p in set(multiprocessing.active_children()) - before:    # main's code leaves them running
            p.kill()


def test_survey_failing_in_its_workers_says_one_line_and_leaves_nothing_running(tmp_path, capsys, monkeypatch):
    # --jobs 2: the store fails while local workers and the transit-multiplicity fit are busy
    def failing(self, results):
        raise sqlite3.OperationalError("disk I/O error")
    monkeypatch.setattr(SurveyStore, "put_many", failing)
    cat = tmp_path / "cat.csv"
    cat.write_text(CAT)
    before, threads = set(multiprocessing.active_children()), _pool_threads()
    rc = main(["survey", str(cat), "--out", str(tmp_path / "out"), "--mode", "direct", "--draws", "3000",
               "--jobs", "2", "--no-figures", "--quiet"])
    err = capsys.readouterr().err
    left = set(multiprocessing.active_children()) - before
    threads = _pool_threads() - threads
    for p in left:
        p.kill()
    one_line_exit_2(rc, err, "survey store: disk I/O error")
    assert not left and not threads


# The exit race made certain: the pool's thread takes half a second to close its wake-up pipe, and the
# exit hook's write to that pipe waits a second between its check and its write (the race's window,
# widened).  The survey fails with the transit-multiplicity fit done and its process idle, as in the
# Dask test's CI failure.  A pool left shutting down at exit then prints a traceback after the error line.
_WIDENED_RACE = r"""
import sqlite3, sys, threading, time
import concurrent.futures.process as cfp
from archsys.cli import main
from archsys.survey import popfits, run

armed = {"close": False, "wakeup": False}
real_close, real_wakeup = cfp._ThreadWakeup.close, cfp._ThreadWakeup.wakeup

def slow_close(self):
    if armed["close"] and not self._closed:
        time.sleep(0.5)
    real_close(self)

def slow_wakeup(self):
    if armed["wakeup"] and not self._closed:
        time.sleep(1.0)
        self._writer.send_bytes(b"")
    else:
        real_wakeup(self)

cfp._ThreadWakeup.close, cfp._ThreadWakeup.wakeup = slow_close, slow_wakeup
threading._register_atexit(lambda: armed.update(wakeup=True))     # runs just before cfp's exit hook

fits = []
real_submit = popfits.FitRunner.submit
def submit(self, fn, *args):
    fits.append(real_submit(self, fn, *args))
    return fits[-1]
popfits.FitRunner.submit = submit

def failing_run_tasks(tasks, sink, jobs, client=None, batch=None, pool=None):
    for f in fits:
        f.result()
    armed["close"] = True
    raise sqlite3.OperationalError("disk I/O error")
run.run_tasks = failing_run_tasks
sys.exit(main(sys.argv[1:]))
"""


def test_pool_closing_at_exit_prints_nothing_after_the_error_line(tmp_path):
    cat = tmp_path / "cat.csv"
    cat.write_text(CAT)
    proc = subprocess.run([sys.executable, "-c", _WIDENED_RACE, "survey", str(cat), "--out", str(tmp_path / "out"),
                           "--mode", "direct", "--draws", "100", "--jobs", "2", "--no-figures", "--quiet"],
                          env=ENV, capture_output=True, text=True, timeout=120)
    one_line_exit_2(proc.returncode, proc.stderr, "survey store: disk I/O error")


@pytest.mark.parametrize("sig, code, line", [(signal.SIGINT, 130, "archsys: interrupted"),
                                             (signal.SIGTERM, 143, "archsys: terminated")], ids=["SIGINT", "SIGTERM"])
def test_signal_to_a_survey_with_workers_stops_them(tmp_path, sig, code, line):
    # --jobs 2: the two workers (which also run the population fits) are running when the signal comes;
    # the survey says one line and none of its processes outlives it (its pool is stopped, not waited for)
    cat = tmp_path / "cat.csv"
    cat.write_text(CAT + "".join(f"U{i:03d},U{i:03d} b,{3 + i % 7}.1,0.01,1.0\n"
                                 f"U{i:03d},U{i:03d} c,{9 + i % 5}.3,0.01,1.0\n" for i in range(200)))
    proc = subprocess.Popen([sys.executable, "-m", "archsys", "survey", str(cat), "--out", str(tmp_path / "out"),
                             "--mode", "direct", "--draws", "4000", "--jobs", "2", "--no-figures", "--quiet"],
                            env=ENV, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    try:
        t0, kids = time.monotonic(), set()
        while len(kids) < 3 and time.monotonic() - t0 < 120:     # two workers and the resource tracker
            assert proc.poll() is None, proc.stderr.read()
            kids = child_pids(proc.pid)
            time.sleep(0.05)
        assert len(kids) >= 3, "the workers did not start"
        proc.send_signal(sig)
        _, err = proc.communicate(timeout=120)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert proc.returncode == code, err
    assert err.splitlines() == [line], err
    left = [k for k in kids if alive(k)]
    t1 = time.monotonic()
    while left and time.monotonic() - t1 < 5:      # the resource tracker ends once its pipe closes
        time.sleep(0.05)
        left = [k for k in left if alive(k)]
    assert not left, f"processes {left} outlived the survey"
