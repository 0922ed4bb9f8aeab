"""How often a stopped process pool prints after the CLI's error line: ``python -m benchmarks.pool_exit_race``.

Each trial is a fresh Python process that runs one task on a one-process pool, stops the pool, busy-waits a
random 0-2 ms (seeded), writes one error line and exits with status 2: what the CLI does after a survey
fails.  A trial counts as bad when its stderr holds more than that line.  Two ways to stop the pool:

``wait=False``
    ``shutdown(wait=False, cancel_futures=True)``, the survey's way before ``stop_pool``: the pool's manager
    thread closes its wake-up pipe while the exit hook of ``concurrent.futures`` writes to it (CPython
    3.10/3.11), and now and then an ``OSError: [Errno 9] Bad file descriptor`` traceback follows the line;
``stop_pool``
    :func:`archsys.survey.workers.stop_pool`, which returns once the processes and that thread are gone.

Measured on the 2-core development machine (CPython 3.11.7), two runs: 2 bad of 100 and 2 of 150 trials
(the second under ``nice -n 19`` beside a test run) with ``wait=False``, 0 of 100 and 0 of 150 with
``stop_pool``.  A rare race: a few hundred trials are needed to see it at all.  No figure is
a pass/fail test (tests/test_pool_shutdown.py widens the race's window instead).
"""
from __future__ import annotations

import argparse
import os
import pathlib
import random
import subprocess
import sys

ROOT = pathlib.Path(__file__).resolve().parents[1]

_TRIAL = r"""
import multiprocessing, sys, time
from concurrent.futures import ProcessPoolExecutor

def task():
    return 1

if __name__ == "__main__":
    how, delay = sys.argv[1], float(sys.argv[2])
    ex = ProcessPoolExecutor(1, mp_context=multiprocessing.get_context("fork"))
    ex.submit(task).result()
    if how == "stop_pool":
        from archsys.survey.workers import stop_pool
        stop_pool(ex)
    else:
        ex.shutdown(wait=False, cancel_futures=True)
    end = time.perf_counter() + delay
    while time.perf_counter() < end:
        pass
    sys.stderr.write("archsys: error: the survey failed\n")
    sys.exit(2)
"""


def trials(how, n, seed):
    """(bad, n, an example of bad stderr or None)."""
    rng = random.Random(seed)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    bad, example = 0, None
    for _ in range(n):
        proc = subprocess.run([sys.executable, "-c", _TRIAL, how, repr(rng.uniform(0.0, 0.002))], env=env,
                              capture_output=True, text=True, timeout=120)
        if proc.returncode != 2 or len(proc.stderr.splitlines()) != 1:
            bad += 1
            example = example or proc.stderr
    return bad, n, example


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trials", type=int, default=100, help="trials per way of stopping (default 100)")
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args(argv)
    print(f"python {sys.version.split()[0]}, {args.trials} trials each")
    for how in ("wait=False", "stop_pool"):
        bad, n, example = trials(how, args.trials, args.seed)
        print(f"{how:>10}: {bad} of {n} trials printed after the error line")
        if example:
            print("            last lines: " + " | ".join(example.strip().splitlines()[-2:]))


if __name__ == "__main__":
    main()
