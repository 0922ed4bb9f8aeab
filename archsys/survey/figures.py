"""Survey figures: one per population distribution, PNG and PDF, house style.

Style, palette (Okabe & Ito 2008, colour-blind safe) and resonance line
styles come from :mod:`archsys.output.style`.  Files carry no creation date,
so the same survey gives the same bytes.  Plot functions return the Figure
and accept ``fig=``; they never call ``show()``.
"""
from __future__ import annotations

import io
import math
import pathlib

import numpy as np

from ..output.files import atomic_write
from ..output.style import ORDER_STYLES, PALETTE, figure_size, rc_params

__all__ = ["survey_figures", "plot_period_ratios", "plot_hill_separations", "plot_multiplicity",
           "plot_gap_complexity", "plot_eccentricity_population"]

#: Kipping 2013 (MNRAS 434, L51) Beta fit to RV planets, shown for reference.
KIPPING2013 = (0.867, 3.03)


def _new(fig, aspect=0.75):
    import matplotlib.pyplot as plt
    if fig is None:
        fig = plt.figure(figsize=figure_size(None, aspect=aspect))
    ax = fig.add_subplot(111)
    return fig, ax


def _finite(values):
    v = np.array([x for x in values if isinstance(x, (int, float)) and not isinstance(x, bool)], dtype=float)
    return v[np.isfinite(v)]


def plot_period_ratios(pairs, fig=None, max_ratio=5.0):
    """Histogram of adjacent-pair period ratios with first/second-order resonances."""
    from ..physics.spacing import MMR_TABLE
    fig, ax = _new(fig)
    r = _finite(p.get("period_ratio_median") for p in pairs)
    edges = np.geomspace(1.0, max_ratio, 61)
    ax.hist(r[r <= max_ratio], bins=edges, color=PALETTE["sky_blue"], edgecolor=PALETTE["blue"], linewidth=0.4)
    done = set()
    for j, k, ratio in MMR_TABLE:
        # first order to 5:4, second order to 7:5: finer resonances crowd near 1
        if k > 2 or ratio > max_ratio or j > (5 if k == 1 else 7):
            continue
        st = dict(ORDER_STYLES[int(k)])
        label = st.pop("label")
        label = label if int(k) not in done else None
        done.add(int(k))
        ax.axvline(ratio, label=label, zorder=3, alpha=0.8, **st)
    ax.set_xscale("log")
    ax.set_xlim(1.0, max_ratio)
    ticks = [1, 1.25, 1.5, 2, 3, 4, 5]
    ax.set_xticks(ticks, [f"{t:g}" for t in ticks])
    ax.set_xlabel(r"period ratio $P_{i+1}/P_i$ (adjacent pairs)")
    ax.set_ylabel("pairs")
    ax.legend(loc="upper right", frameon=True, framealpha=0.9, edgecolor="none")
    return fig


def plot_hill_separations(pairs, fig=None):
    """Histogram of mutual-Hill-radius separations with 2 sqrt(3) and 10."""
    fig, ax = _new(fig)
    h = _finite(p.get("hill_separation_median") for p in pairs)
    h = h[h > 0]
    if h.size:
        edges = np.geomspace(max(0.5, h.min() * 0.9), max(h.max() * 1.1, 20.0), 41)
        ax.hist(h, bins=edges, color=PALETTE["sky_blue"], edgecolor=PALETTE["blue"], linewidth=0.4)
    ax.axvline(2 * math.sqrt(3), color=PALETTE["vermillion"], linestyle=(0, (1, 1)),
               label=r"$2\sqrt{3}$ (Gladman 1993)")
    ax.axvline(10.0, color=PALETTE["black"], linestyle=(0, (4, 2)), label=r"$\Delta = 10$")
    ax.set_xscale("log")
    ax.set_xlabel(r"separation $\Delta$ [mutual Hill radii]")
    ax.set_ylabel("pairs")
    ax.legend(loc="upper left")
    return fig


def plot_multiplicity(multiplicity, fig=None):
    """Fraction of systems by number of planets, with bootstrap 68 % intervals."""
    fig, ax = _new(fig)
    fr = multiplicity.get("fractions", {})
    ks = sorted(int(k) for k in fr)
    if ks:
        v = np.array([fr[str(k)]["value"] for k in ks])
        lo = np.array([fr[str(k)]["lo"] for k in ks])
        hi = np.array([fr[str(k)]["hi"] for k in ks])
        ax.bar(ks, v, color=PALETTE["sky_blue"], edgecolor=PALETTE["blue"], linewidth=0.5)
        ax.errorbar(ks, v, yerr=[np.maximum(v - lo, 0), np.maximum(hi - v, 0)], fmt="none",
                    ecolor=PALETTE["black"], elinewidth=0.8, capsize=2)
        ax.set_yscale("log")
        ax.set_xticks(ks)
        ax.minorticks_off()
    ax.set_xlabel("planets in the system")
    ax.set_ylabel("fraction of systems")
    return fig


def plot_gap_complexity(systems, fig=None):
    """Histogram of gap complexity (systems with at least three planets)."""
    fig, ax = _new(fig)
    g = _finite(s.get("gap_complexity_median") for s in systems)
    ax.hist(g, bins=np.linspace(0, 1, 21), color=PALETTE["sky_blue"], edgecolor=PALETTE["blue"], linewidth=0.4)
    ax.set_xlim(0, 1)
    ax.set_xlabel(r"gap complexity $\mathcal{C}$ (Gilbert & Fabrycky 2020)")
    ax.set_ylabel("systems")
    return fig


def plot_eccentricity_population(planets, ecc_pop, fig=None):
    """Measured eccentricities (posterior medians) and the fitted population models."""
    from scipy import stats
    fig, ax = _new(fig)
    e = _finite(p.get("ecc_median") for p in planets if p.get("ecc_measured"))
    x = np.linspace(0.0005, 0.9995, 400)
    if e.size:
        ax.hist(e, bins=np.linspace(0, 1, 26), density=True, color=PALETTE["sky_blue"],
                edgecolor=PALETTE["blue"], linewidth=0.4, label=f"medians ({e.size} planets)")
    b = (ecc_pop or {}).get("beta")
    if b:
        a_, b_ = b["alpha"]["median"], b["beta"]["median"]
        ax.plot(x, stats.beta.pdf(x, a_, b_), color=PALETTE["vermillion"],
                label=fr"Beta($\alpha$={a_:.2f}, $\beta$={b_:.2f})")
    ry = (ecc_pop or {}).get("rayleigh")
    if ry:
        s = ry["sigma"]["median"]
        norm = -math.expm1(-1.0 / (2 * s * s))
        ax.plot(x, x / s ** 2 * np.exp(-x ** 2 / (2 * s * s)) / norm, color=PALETTE["bluish_green"],
                linestyle=(0, (4, 2)), label=fr"Rayleigh($\sigma$={s:.2f})")
    ax.plot(x, stats.beta.pdf(x, *KIPPING2013), color=PALETTE["black"], linestyle=(0, (1, 1)),
            label="Kipping 2013 (RV)")
    ax.set_xlim(0, 1)
    ax.set_ylim(0, None)
    ax.set_xlabel("eccentricity $e$")
    ax.set_ylabel("density")
    ax.legend(loc="upper right")
    return fig


def _save(fig, stem: pathlib.Path):
    for ext, meta in (("png", {"Software": None}), ("pdf", {"CreationDate": None, "ModDate": None})):
        buf = io.BytesIO()
        fig.savefig(buf, format=ext, metadata=meta, bbox_inches="tight")
        atomic_write(stem.with_suffix(f".{ext}"), buf.getvalue(), mode="wb")


def _transit_figure(block):
    from .multiplicity_figure import plot_transit_multiplicity
    return plot_transit_multiplicity(block)


def survey_figures(pop, systems, pairs, planets, out_dir):
    """Write every survey figure to ``out_dir`` (PNG and PDF); returns the file stems."""
    import matplotlib
    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt
    out_dir = pathlib.Path(out_dir)
    stems = []
    with matplotlib.rc_context(rc_params(None)):
        for name, make in (
                ("period_ratios", lambda: plot_period_ratios(pairs)),
                ("hill_separation", lambda: plot_hill_separations(pairs)),
                ("multiplicity", lambda: plot_multiplicity(pop.get("multiplicity", {}))),
                ("gap_complexity", lambda: plot_gap_complexity(systems)),
                ("eccentricity_population",
                 lambda: plot_eccentricity_population(planets, pop.get("eccentricity_population"))),
                ("transit_multiplicity", lambda: _transit_figure(pop.get("transit_multiplicity")))):
            fig = make()
            try:
                _save(fig, out_dir / name)
            finally:
                plt.close(fig)
            stems.append(str(out_dir / name))
    return stems
