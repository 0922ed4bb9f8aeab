"""Population statistics of a survey, with bootstrap intervals over systems.

Every interval resamples *systems* with replacement (pairs of one system stay
together), ``n_boot`` times from a seeded generator; ``lo``/``hi`` are the
15.87/84.13 percentiles (archsys convention), ``lo95``/``hi95`` the 2.5/97.5
percentiles.  Per-pair and per-system values are posterior medians.

Near-resonant asymmetry
-----------------------
For a resonance with nominal ratio ``R`` (3:2 and 2:1), ``Delta = P2/P1 / R -
1`` (Lithwick, Xie & Wu 2012); pairs with ``Delta`` in (0, +2 %] are "wide",
in [-2 %, 0) "narrow".  Kepler's multi-transiting systems show an excess wide
and a deficit narrow of these first-order resonances (Fabrycky et al. 2014).
We report both fractions of all pairs, their difference with its bootstrap
interval, and a one-sided binomial test of ``n_wide`` among ``n_wide +
n_narrow`` against ``p0 = log(1.02) / (log(1.02) - log(0.98)) = 0.495``, the
share expected when period ratios are locally uniform in ``log P2/P1``.  An
excess is "detected" when the lower 95 % bootstrap bound of the difference is
above zero.

References
----------
.. [1] Fabrycky, D. C. et al. 2014, ApJ 790, 146
.. [2] Lithwick, Y., Xie, J. & Wu, Y. 2012, ApJ 761, 122
.. [3] Gladman, B. 1993, Icarus 106, 247 (2 sqrt(3) mutual Hill radii)
.. [4] Gilbert, G. J. & Fabrycky, D. C. 2020, AJ 159, 281 (gap complexity)
"""
from __future__ import annotations

import math

import numpy as np
from scipy import stats

from .hierarchical import interval

__all__ = ["population_statistics", "resonance_asymmetry", "RESONANCES", "WINDOW"]

RESONANCES = {"3:2": 1.5, "2:1": 2.0}
#: Half-width of the wide/narrow windows (fractional offset from resonance).
WINDOW = 0.02
HILL_CUT = 10.0
GLADMAN = 2.0 * math.sqrt(3.0)   # Gladman 1993, circular orbits
N_BOOT = 1000
_P0_WIDE = math.log1p(WINDOW) / (math.log1p(WINDOW) - math.log1p(-WINDOW))


def _boot_weights(n, n_boot, rng):
    """(n_boot, n) multiplicities of each system in each bootstrap resample."""
    if n == 0:
        return np.zeros((n_boot, 0))
    return rng.multinomial(n, np.full(n, 1.0 / n), size=n_boot).astype(float)


def _ratio_interval(W, num, den):
    """Bootstrap interval of sum(num) / sum(den) with weights W (n_boot, n)."""
    d = W @ den
    r = np.divide(W @ num, d, out=np.full(len(W), np.nan), where=d > 0)
    r = r[np.isfinite(r)]
    return interval(r) if r.size else None


def _quantiles(x):
    x = np.asarray(x, dtype=float)
    if not x.size:
        return None
    q = np.percentile(x, [5, 15.8655, 50, 84.1345, 95])
    return dict(zip(("p05", "p16", "p50", "p84", "p95"), (float(v) for v in q)))


def _histogram(x, edges):
    counts, _ = np.histogram(np.asarray(x, dtype=float), bins=edges)
    return {"edges": [float(e) for e in edges], "counts": [int(c) for c in counts]}


def _median_interval(values_per_system, rng, n_boot):
    """Bootstrap interval of the median over systems (1-D values, one per system)."""
    v = np.asarray(values_per_system, dtype=float)
    if not v.size:
        return None
    idx = rng.integers(0, v.size, size=(n_boot, v.size))
    return interval(np.median(v[idx], axis=1))


def resonance_asymmetry(ratios_by_system, rng, n_boot=N_BOOT, window=WINDOW):
    """Wide/narrow statistics of adjacent-pair period ratios near 3:2 and 2:1.

    Parameters
    ----------
    ratios_by_system : list of 1-D arrays
        Period ratios (outer/inner) of each system's adjacent pairs.

    Returns
    -------
    dict keyed by resonance label, see module docstring.
    """
    n_pairs = np.array([len(r) for r in ratios_by_system], dtype=float)
    W = _boot_weights(len(ratios_by_system), n_boot, rng)
    out = {}
    for label, R in RESONANCES.items():
        wide = np.array([np.sum((r / R - 1 > 0) & (r / R - 1 <= window)) for r in ratios_by_system], float)
        narrow = np.array([np.sum((r / R - 1 < 0) & (r / R - 1 >= -window)) for r in ratios_by_system], float)
        nw, nn, npairs = int(wide.sum()), int(narrow.sum()), int(n_pairs.sum())
        entry = {"nominal_ratio": R, "window": window, "n_pairs": npairs, "n_wide": nw, "n_narrow": nn}
        if npairs == 0:
            entry.update(fraction_wide=None, fraction_narrow=None, difference=None, excess_wide_detected=False,
                         binomial_p_value=None)
            out[label] = entry
            continue
        den = W @ n_pairs
        ok = den > 0
        fw, fn = (W @ wide)[ok] / den[ok], (W @ narrow)[ok] / den[ok]
        diff = interval(fw - fn)
        entry.update(
            fraction_wide={"value": nw / npairs, **interval(fw)},
            fraction_narrow={"value": nn / npairs, **interval(fn)},
            difference={"value": (nw - nn) / npairs, **diff},
            wide_to_narrow=(nw / nn) if nn else None,
            binomial_p0=_P0_WIDE,
            binomial_p_value=(float(stats.binomtest(nw, nw + nn, _P0_WIDE, alternative="greater").pvalue)
                              if nw + nn else None),
            excess_wide_detected=bool(diff["lo95"] > 0),
        )
        out[label] = entry
    return out


def population_statistics(systems, pairs, seed=0, n_boot=N_BOOT):
    """All population summaries of a survey.

    Parameters
    ----------
    systems : list of dict
        Rows of systems.csv (analysed systems), sorted by system id.
    pairs : list of dict
        Rows of pairs.csv.
    seed : int
        Seeds the bootstrap.
    """
    rng = np.random.default_rng(np.random.SeedSequence([int(seed), 0xB007]))
    ids = [s["system"] for s in systems]
    pos = {sid: i for i, sid in enumerate(ids)}
    S = len(ids)
    out = {"bootstrap": {"n_resamples": n_boot, "unit": "system",
                         "interval": "lo/hi 15.87/84.13 %, lo95/hi95 2.5/97.5 % of the resamples"}}

    # multiplicity
    npl = np.array([s["n_planets"] for s in systems], dtype=int)
    W = _boot_weights(S, n_boot, rng)
    mult = {"n_systems": S, "counts": {}, "fractions": {}}
    for k in sorted(set(npl.tolist())):
        ind = (npl == k).astype(float)
        mult["counts"][str(k)] = int(ind.sum())
        mult["fractions"][str(k)] = {"value": float(ind.mean()), **_ratio_interval(W, ind, np.ones(S))}
    mult["mean"] = float(npl.mean()) if S else None
    out["multiplicity"] = mult

    # period ratios
    by_sys = [[] for _ in range(S)]
    hill = [[] for _ in range(S)]
    for p in pairs:
        i = pos.get(p["system"])
        if i is None:
            continue
        r = p.get("period_ratio_median")
        if r is not None and math.isfinite(r):
            by_sys[i].append(r)
        h = p.get("hill_separation_median")
        if h is not None and math.isfinite(h):
            hill[i].append(h)
    by_sys = [np.asarray(v, dtype=float) for v in by_sys]
    allr = np.concatenate(by_sys) if by_sys else np.array([])
    edges = np.geomspace(1.0, 5.0, 41)
    out["period_ratios"] = {
        "n_pairs": int(allr.size), "quantiles": _quantiles(allr),
        "histogram_log": _histogram(allr, edges), "n_above_5": int(np.sum(allr > 5.0)),
        "resonances": resonance_asymmetry(by_sys, rng, n_boot),
    }

    # Hill separations
    hill = [np.asarray(v, dtype=float) for v in hill]
    allh = np.concatenate(hill) if hill else np.array([])
    n_h = np.array([v.size for v in hill], dtype=float)
    below = np.array([np.sum(v < HILL_CUT) for v in hill], dtype=float)
    below_g = np.array([np.sum(v < GLADMAN) for v in hill], dtype=float)
    out["hill_separation"] = {
        "n_pairs": int(allh.size), "n_pairs_unknown": int(allr.size - allh.size) if allr.size >= allh.size else 0,
        "quantiles": _quantiles(allh),
        "histogram_log": _histogram(allh, np.geomspace(1.0, 1000.0, 31)),
        "threshold": HILL_CUT,
        "fraction_below_10": ({"value": float(below.sum() / n_h.sum()), **_ratio_interval(W, below, n_h)}
                              if n_h.sum() else None),
        "fraction_below_2sqrt3": ({"value": float(below_g.sum() / n_h.sum()), **_ratio_interval(W, below_g, n_h)}
                                  if n_h.sum() else None),
        "note": "posterior medians; with only m sin i known the spacing is an upper limit",
    }

    # gap complexity (systems with >= 3 planets)
    gc = [s.get("gap_complexity_median") for s in systems]
    gc = np.array([g for g in gc if g is not None and math.isfinite(g)], dtype=float)
    out["gap_complexity"] = {
        "n_systems": int(gc.size), "quantiles": _quantiles(gc),
        "mean": float(gc.mean()) if gc.size else None,
        "median": _median_interval(gc, rng, n_boot),
        "histogram": _histogram(gc, np.linspace(0.0, 1.0, 21)),
    }

    # flatness: every numeric system column named flatness* (medians)
    flat = {}
    keys = sorted({k for s in systems for k in s if k.startswith("flatness")
                   and not k.endswith(("_lo", "_hi"))})
    for k in keys:
        v = np.array([s[k] for s in systems if isinstance(s.get(k), (int, float))
                      and not isinstance(s.get(k), bool) and math.isfinite(s[k])], dtype=float)
        if v.size:
            flat[k] = {"n_systems": int(v.size), "quantiles": _quantiles(v),
                       "median": _median_interval(v, rng, n_boot)}
    out["flatness"] = flat or {"reason": "no analysed system reports a flatness score"}
    return out
