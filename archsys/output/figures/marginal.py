"""Pieces of a corner panel: plot ranges, reflected kernel densities, prior curves, panel ticks."""
from __future__ import annotations

import math

import matplotlib.ticker
import numpy as np

__all__ = ["axis_range", "density", "prior_curve", "PanelTicks"]


def axis_range(q, x):
    """Plot range: the central 99 % of the draws; a one-sided posterior piled against a physical
    bound runs from the bound to its 99th percentile."""
    x = x[np.isfinite(x)]
    lo, hi = np.quantile(x, (0.005, 0.995))
    if hi <= lo:
        lo, hi = x.min(), x.max()
    w = hi - lo
    if q.circular and w > 300.0:
        return (q.lower, q.upper), (True, True)
    lo_b = hi_b = False
    if not q.log and q.lower is not None and lo - q.lower < 0.15 * w:
        lo, lo_b = q.lower, True
        hi = np.quantile(x, 0.99)
    elif not q.log and q.upper is not None and q.upper - hi < 0.15 * w:
        hi, hi_b = q.upper, True
        lo = np.quantile(x, 0.01)
    w = hi - lo
    return (lo if lo_b else lo - 0.03 * w, hi if hi_b else hi + 0.03 * w), (lo_b, hi_b)


def density(x, lo, hi, bounded, circular, n=512):
    """Gaussian kernel density on [lo, hi] (Scott's bandwidth), reflected at bounds or wrapped on a full
    circle, normalised over the plotted range.  Binned: a fine histogram smoothed with the kernel."""
    from scipy.ndimage import gaussian_filter1d
    x = x[np.isfinite(x)]
    grid = np.linspace(lo, hi, n)
    sd = np.std(x)
    if x.size < 5 or sd <= 0 or hi <= lo:
        return grid, np.zeros_like(grid)
    bw = sd * x.size ** (-1.0 / 5.0)               # Scott (1992) rule for one dimension
    dx = (hi - lo) / (n - 1)
    if not circular:                                # reflect only where the draws pile against the bound
        dens, _ = np.histogram(x, bins=20, range=(lo, hi))
        peak = max(dens.max(), 1)
        bounded = (bounded[0] and dens[0] >= 0.5 * peak, bounded[1] and dens[-1] >= 0.5 * peak)
    pad = 0 if (bounded[0] and bounded[1]) else int(min(4 * bw / dx, 4 * n)) + 1
    edges = lo - dx / 2 + dx * np.arange(-pad * (not bounded[0]), n + 1 + pad * (not bounded[1]))
    h, _ = np.histogram(x, bins=edges)
    mode = "wrap" if circular and bounded[0] and bounded[1] else "reflect"
    y = gaussian_filter1d(h.astype(float), bw / dx, mode=mode if all(bounded) else "constant")
    if any(bounded) and not all(bounded):            # reflect at the one bound by hand
        y = gaussian_filter1d(h.astype(float), bw / dx, mode="constant")
        m = int(round(4 * bw / dx)) + 1
        if bounded[0]:
            yr = gaussian_filter1d(np.concatenate([h[:m][::-1], h]).astype(float), bw / dx, mode="constant")
            y = yr[m:]
        else:
            yr = gaussian_filter1d(np.concatenate([h, h[-m:][::-1]]).astype(float), bw / dx, mode="constant")
            y = yr[:len(h)]
    start = pad * (not bounded[0])
    y = y[start:start + n]
    area = y.sum() * dx
    return grid, y / area if area > 0 else y


class PanelTicks(matplotlib.ticker.Locator):
    """At most ``nbins`` nice ticks kept clear of the panel edges.

    Angles spanning at least 10 degrees step by 5, 10, 15, 30, 45, 60, 90 or
    180 degrees; everything else by 1, 2, 2.5 or 5 times a power of ten.
    """

    def __init__(self, nbins, angle=False, span=None, margin=0.06):
        self.nbins, self.margin = max(1, int(nbins)), margin
        self.angle = bool(angle and span is not None and span >= 10.0)

    def __call__(self):
        lo, hi = sorted(self.axis.get_view_interval())
        return self.tick_values(lo, hi)

    def tick_values(self, vmin, vmax):
        lo, hi = sorted((vmin, vmax))
        m = self.margin * (hi - lo)
        a, b = lo + m, hi - m
        if not b > a:
            return []
        if self.angle:
            steps = [5.0, 10.0, 15.0, 20.0, 30.0, 40.0, 45.0, 60.0, 90.0, 120.0, 180.0]
        else:
            e0 = int(math.floor(math.log10(b - a))) - 2
            steps = [f * 10.0 ** e for e in range(e0, e0 + 4) for f in (1, 2, 5)]
            steps += [f * 10.0 ** e for e in range(e0, e0 + 4) for f in (2.5, 3, 4, 6)]   # second choice
        fits, multi = [], []
        for step in steps:
            if (b - a) / step > max(self.nbins, 5) + 2:
                continue
            k0 = math.ceil(a / step - 1e-9)
            t = [round(k * step, 12) for k in range(k0, int(math.floor(b / step + 1e-9)) + 1)]
            if t and len(t) <= self.nbins:
                if len(t) >= min(2, self.nbins):
                    return t
                fits.append(t)
            elif 3 <= len(t) <= 5:
                multi.append(t)
        if self.nbins >= 2 and multi:               # no step gives two ticks: the ends of a finer set
            odd = [t for t in multi if len(t) % 2 == 1]
            t = (odd or multi)[0]
            return [t[0], t[-1]]
        return fits[0] if fits else []


def prior_curve(prior, lo, hi, log=False):
    """(x, density) of a prior on the plotted axis [lo, hi]; log axes carry log10 of the value.

    The density of u = log10 x is p(x) x ln 10.
    """
    u = np.linspace(lo, hi, 400)
    x = 10.0 ** u if log else u
    jac = x * math.log(10.0) if log else 1.0
    if hasattr(prior, "logpdf"):
        return u, np.exp(np.asarray(prior.logpdf(x), dtype=float)) * jac
    if callable(prior):
        return u, np.asarray(prior(x), dtype=float) * jac
    s = np.asarray(prior, dtype=float)
    s = s[np.isfinite(s)]
    if log:
        s = np.log10(s[s > 0])
    dens, edges = np.histogram(s, bins=40, range=(lo, hi))
    dens = dens / (max(s.size, 1) * np.diff(edges))
    return np.repeat(edges, 2)[1:-1], np.repeat(dens, 2)
