"""The fast quantiles of posterior summaries give the same bytes as numpy's reference implementation.

Reference: ``numpy.quantile`` (default "linear" method, Hyndman & Fan 1996 definition 7), a general
reference library; every survey and report summary goes through :func:`archsys.inference.summary.quantiles`.
"""
import numpy as np
import pytest

from archsys.inference.summary import QUANTILES, quantiles, summarize


def _cases():
    rng = np.random.default_rng(20261205)
    for n in (1, 2, 3, 4, 5, 7, 10, 99, 100, 250, 1000, 1001, 4000):
        yield rng.standard_normal(n)
        yield rng.lognormal(0.0, 3.0, n)
        yield rng.integers(-3, 4, n).astype(float)            # ties
        yield np.where(rng.random(n) < 0.5, -0.0, 0.0)        # signed zeros
    yield np.array([1e308, -1e308, 1e308])
    yield np.array([np.inf, 1.0, -np.inf, 2.0])


@pytest.mark.parametrize("q", [np.asarray(QUANTILES), np.array([0.0, 1.0]), np.array([0.05, 0.5, 0.95, 0.999])])
def test_same_bytes_as_numpy_quantile(q):
    for x in _cases():
        with np.errstate(invalid="ignore", over="ignore"):
            ref = np.quantile(x, q)
            got = quantiles(x.copy(), q)
        assert ref.tobytes() == got.tobytes(), (x[:5], ref, got)


def test_summarize_unchanged_against_numpy():
    rng = np.random.default_rng(7)
    x = rng.standard_normal(1000)
    x[::17] = np.nan
    s = summarize(x, scale=3.5)
    lo, med, hi = np.quantile(x[np.isfinite(x)] * 3.5, QUANTILES)
    assert (s["lo"], s["median"], s["hi"], s["n_invalid"]) == (float(lo), float(med), float(hi), 59)
    y = rng.standard_normal(500)
    keep = y.copy()
    summarize(y)
    assert np.array_equal(y, keep)                            # the caller's draws are not reordered
