"""Timing helpers shared by the benchmarks."""
from __future__ import annotations

import time

import numpy as np

__all__ = ["best_of"]


def best_of(fn, repeat=3):
    """Shortest wall time of ``repeat`` calls of ``fn`` (seconds)."""
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best
