"""Survey figures: one per population distribution, at the same presets as the system figures.

Each function takes plain rows (dicts as in the survey's CSV files) or the
population document, returns a :class:`~matplotlib.figure.Figure`, accepts
``preset=`` and ``fig=``, and never touches pyplot.  Legends sit above the
axes, so they never cover a reference line; log axes are labelled with plain
decimals, only as many as fit.
"""
from __future__ import annotations

import math

import matplotlib
import matplotlib.ticker
import numpy as np

from ..style import ORDER_STYLES, PALETTE, get_preset, rc_params
from .common import log_axis_ticks, new_figure

__all__ = ["plot_period_ratios", "plot_hill_separations", "plot_multiplicity", "plot_gap_complexity",
           "plot_eccentricity_population", "KIPPING2013"]

#: Kipping 2013 (MNRAS 434, L51) Beta fit to RV planets, shown for reference.
KIPPING2013 = (0.867, 3.03)
_BAR = dict(color=PALETTE["sky_blue"], edgecolor=PALETTE["blue"], linewidth=0.4)


def _finite(values):
    v = np.array([x for x in values if isinstance(x, (int, float)) and not isinstance(x, bool)], dtype=float)
    return v[np.isfinite(v)]


class _Panel:
    """A one-axes survey figure in the house style: ``with _Panel(preset, fig) as (fig, ax, p): ...``."""

    def __init__(self, preset, fig, aspect=0.68):
        self.p = get_preset(preset)
        self.fig, self.aspect = fig, aspect
        self._rc = matplotlib.rc_context(rc_params(self.p))

    def __enter__(self):
        self._rc.__enter__()
        p = self.p
        aspect = self.aspect if p.width_in < 5 else 0.42
        h = min(aspect * p.width_in, p.page_height_in)
        self.fig = new_figure(p, h, self.fig)
        self.ax = self.fig.add_subplot(111)
        return self.fig, self.ax, p

    def __exit__(self, *exc):
        try:
            if exc[0] is None:
                _finish(self.fig, self.ax, self.p)
        finally:
            self._rc.__exit__(*exc)
        return False


def _legend_above(fig, ax, p, handles=None):
    h, lab = ax.get_legend_handles_labels() if handles is None else (handles, [x.get_label() for x in handles])
    if not h:
        return None
    return fig.legend(h, lab, loc="upper center", ncol=len(h), fontsize=p.small_pt - 1, frameon=False,
                      borderaxespad=0.0, handlelength=2.0, columnspacing=1.0, bbox_to_anchor=(0.5, 1.0))


def _finish(fig, ax, p):
    """Margins from the measured text: tick labels, axis labels and the legend above the axes.  Tick
    labels of every axis are plain text in the figure font (no mathtext exponents from the default
    formatter), so all survey figures share one tick font."""
    for axis in (ax.xaxis, ax.yaxis):
        if isinstance(axis.get_major_formatter(), matplotlib.ticker.ScalarFormatter):
            axis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    W, H = fig.get_size_inches()
    dpi = fig.dpi
    leg = fig.legends[-1] if fig.legends else None
    if leg is not None and leg.get_window_extent(r).width > (W - 0.1) * dpi:   # too wide: two rows
        handles, labels = leg.legend_handles, [t.get_text() for t in leg.get_texts()]
        leg.remove()
        leg = fig.legend(handles, labels, loc="upper center", ncol=math.ceil(len(handles) / 2),
                         fontsize=p.small_pt - 1, frameon=False, borderaxespad=0.0, handlelength=2.0,
                         columnspacing=1.0, bbox_to_anchor=(0.5, 1.0))
        fig.canvas.draw()
    top_in = (leg.get_window_extent(r).height / dpi + 0.08) if leg is not None else 0.08
    ab = ax.get_window_extent(r)
    tb = ax.get_tightbbox(r)
    left_in = (ab.x0 - tb.x0) / dpi + 0.05
    bottom_in = (ab.y0 - tb.y0) / dpi + 0.05
    right_in = max(0.1, (tb.x1 - ab.x1) / dpi + 0.05)
    fig.subplots_adjust(left=left_in / W, right=1 - right_in / W, bottom=bottom_in / H, top=1 - top_in / H)


#: Resonance lines in colours other than the bars' blue: first order vermillion, second order reddish purple.
_RES_STYLES = {1: {"color": PALETTE["vermillion"], "linestyle": "-", "linewidth": 0.9, "label": "first order"},
               2: {"color": PALETTE["reddish_purple"], "linestyle": (0, (4, 2)), "linewidth": 0.9,
                   "label": "second order"}}


def plot_period_ratios(pairs, fig=None, max_ratio=5.0, preset=None):
    """Histogram of adjacent-pair period ratios with first- and second-order resonances (each line named
    by its ratio); pairs wider than ``max_ratio`` are counted in a note, never silently dropped."""
    from ...physics.spacing import MMR_TABLE
    with _Panel(preset, fig) as (fig, ax, p):
        r = _finite(q.get("period_ratio_median") for q in pairs)
        edges = np.geomspace(1.0, max_ratio, 61)
        ax.hist(r[r <= max_ratio], bins=edges, **_BAR)
        done, lines = set(), []
        for j, k, ratio in MMR_TABLE:
            # first order to 5:4, second order to 7:5: finer resonances crowd near 1
            if k > 2 or ratio > max_ratio or j > (5 if k == 1 else 7):
                continue
            st = dict(_RES_STYLES[int(k)])
            label = st.pop("label") + " resonance"
            ax.axvline(ratio, label=None if int(k) in done else label, zorder=3, alpha=0.9, **st)
            lines.append((ratio, f"{j}:{j - k}" if j > k else f"{j}:1", st["color"]))
            done.add(int(k))
        ax.set_xscale("log")
        ax.set_xlim(1.0, max_ratio)
        ticks = [t for t in (1, 1.25, 1.5, 2, 3, 4, 5) if t <= max_ratio]
        if p.width_in < 5:
            ticks = [t for t in ticks if t != 1.25]
        ax.xaxis.set_major_locator(matplotlib.ticker.FixedLocator(ticks))
        ax.xaxis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
        ax.xaxis.set_minor_formatter(matplotlib.ticker.NullFormatter())
        ax.yaxis.set_major_locator(matplotlib.ticker.MaxNLocator(5, integer=True))
        ax.set_ylim(0, ax.get_ylim()[1] * 1.18)        # headroom for the resonance names
        _name_lines(fig, ax, lines, p)
        wide = int((r > max_ratio).sum())
        if wide:
            ax.text(0.98, 0.84, f"{wide} of {r.size} pairs with ratio > {max_ratio:g}\nnot shown",
                    transform=ax.transAxes, ha="right", va="top", fontsize=p.small_pt - 1, zorder=5,
                    bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 1.0})
        ax.set_xlabel(r"period ratio $P_{i+1}/P_i$ (adjacent pairs)")
        ax.set_ylabel("pairs")
        _legend_above(fig, ax, p)
    return fig


def _name_lines(fig, ax, lines, p):
    """Each resonance line named at the top of the axes ("3:2"), names that would touch dropped."""
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    kept = []
    for ratio, name, colour in sorted(lines, key=lambda x: (len(x[1]), x[0])):
        t = ax.text(ratio, 0.985, name, transform=ax.get_xaxis_transform(), ha="center", va="top",
                    fontsize=p.small_pt - 2, color=colour, clip_on=False)
        bb = t.get_window_extent(r).expanded(1.15, 1.0)
        if any(bb.overlaps(k) for k in kept):
            t.remove()
        else:
            kept.append(bb)


def plot_hill_separations(pairs, fig=None, preset=None):
    """Histogram of mutual-Hill-radius separations with 2√3 (Gladman 1993) and 10."""
    with _Panel(preset, fig) as (fig, ax, p):
        h = _finite(q.get("hill_separation_median") for q in pairs)
        h = h[h > 0]
        lo, hi = 1.0, 100.0
        if h.size:
            lo, hi = max(0.5, h.min() * 0.9), max(h.max() * 1.1, 20.0)
            ax.hist(h, bins=np.geomspace(lo, hi, 41), **_BAR)
        ax.axvline(2 * math.sqrt(3), color=PALETTE["vermillion"], linestyle=(0, (1, 1)), lw=1.2 * p.line_width,
                   label=r"$2\sqrt{3}$ (Gladman 1993)")
        ax.axvline(10.0, color=PALETTE["black"], linestyle=(0, (4, 2)), label=r"$\Delta = 10$")
        ax.set_xscale("log")
        ax.set_xlim(lo, hi)
        log_axis_ticks(ax.xaxis, lo, hi, max_labels=5 if p.width_in < 5 else 8)
        ax.yaxis.set_major_locator(matplotlib.ticker.MaxNLocator(5, integer=True))
        ax.set_xlabel(r"separation $\Delta$ [mutual Hill radii]")
        ax.set_ylabel("pairs")
        _legend_above(fig, ax, p)
    return fig


def plot_multiplicity(multiplicity, fig=None, preset=None):
    """Fraction of systems by number of planets, with bootstrap 68 % intervals (log axis)."""
    with _Panel(preset, fig) as (fig, ax, p):
        fr = multiplicity.get("fractions", {})
        ks = sorted(int(k) for k in fr)
        if ks:
            v = np.array([fr[str(k)]["value"] for k in ks], dtype=float)
            lo = np.array([fr[str(k)]["lo"] for k in ks], dtype=float)
            hi = np.array([fr[str(k)]["hi"] for k in ks], dtype=float)
            ax.bar(ks, v, width=0.7, **_BAR)
            ax.errorbar(ks, v, yerr=[np.maximum(v - lo, 0), np.maximum(hi - v, 0)], fmt="none",
                        ecolor=PALETTE["black"], elinewidth=0.8 * p.line_width, capsize=2)
            pos = np.concatenate([v, lo, hi])
            pos = pos[np.isfinite(pos) & (pos > 0)]
            y0 = 10 ** math.floor(math.log10(pos.min())) if pos.size else 1e-3
            y0 = min(y0, 0.1)         # every system of one multiplicity (fraction 1): still a decade shown
            ax.set_yscale("log")
            ax.set_ylim(y0, 1.0)
            log_axis_ticks(ax.yaxis, y0, 1.0, max_labels=6)
            ax.set_xticks(ks)
            ax.set_xlim(min(ks) - 0.6, max(ks) + 0.6)
            ax.xaxis.set_minor_locator(matplotlib.ticker.NullLocator())
            ax.tick_params(axis="x", which="both", top=False)
            n = multiplicity.get("n_systems")
            if n:
                ax.text(0.98, 0.96, f"{n} systems", transform=ax.transAxes, ha="right", va="top",
                        fontsize=p.small_pt - 1)
        ax.set_xlabel("planets in the system")
        ax.set_ylabel("fraction of systems")
    return fig


def plot_gap_complexity(systems, fig=None, preset=None):
    """Histogram of gap complexity (systems with at least three planets)."""
    with _Panel(preset, fig) as (fig, ax, p):
        g = _finite(s.get("gap_complexity_median") for s in systems)
        ax.hist(g, bins=np.linspace(0, 1, 21), **_BAR)
        ax.set_xlim(0, 1)
        ax.yaxis.set_major_locator(matplotlib.ticker.MaxNLocator(5, integer=True, prune="lower"))
        ax.set_xlabel(r"gap complexity $\mathcal{C}$ (Gilbert & Fabrycky 2020)")
        ax.set_ylabel("systems")
    return fig


def _beta_band(x, beta_fit):
    """(lo, hi) envelope of the Beta density over the 68 % intervals of alpha and beta (a grid over the
    two intervals; an approximate band, as the fit reports marginal intervals only)."""
    from scipy import stats
    a, b = beta_fit["alpha"], beta_fit["beta"]
    if not all(k in a and k in b for k in ("lo", "hi")):
        return None
    ys = [stats.beta.pdf(x, ai, bi) for ai in np.linspace(a["lo"], a["hi"], 5)
          for bi in np.linspace(b["lo"], b["hi"], 5) if ai > 0 and bi > 0]
    if not ys:
        return None
    ys = np.array(ys)
    return ys.min(axis=0), ys.max(axis=0)


def plot_eccentricity_population(planets, ecc_pop, fig=None, preset=None):
    """Measured eccentricities (posterior medians) and the fitted population models, with the Beta
    fit's uncertainty band and, where the fit's effective sample size is small, a warning on the figure."""
    from scipy import stats
    with _Panel(preset, fig) as (fig, ax, p):
        e = _finite(q.get("ecc_median") for q in planets if q.get("ecc_measured"))
        x = np.linspace(0.0005, 0.9995, 400)
        if e.size:
            ax.hist(e, bins=np.linspace(0, 1, 26), density=True, label=f"medians ({e.size} planets)", **_BAR)
        b = (ecc_pop or {}).get("beta")
        if b:
            a_, b_ = b["alpha"]["median"], b["beta"]["median"]
            band = _beta_band(x, b)
            if band is not None:
                ax.fill_between(x, band[0], band[1], color=PALETTE["vermillion"], alpha=0.18, lw=0,
                                label="Beta: 68 % of α, β")
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
        away = x >= 0.03                      # the Beta density may diverge at e = 0: scale to the rest
        peaks = [float(np.nanmax(stats.beta.pdf(x[away], *KIPPING2013)))]
        if e.size:
            peaks.append(float(np.histogram(e, bins=np.linspace(0, 1, 26), density=True)[0].max()))
        if b:
            peaks.append(float(np.nanmax(stats.beta.pdf(x[away], a_, b_))))
        ax.set_ylim(0, 1.3 * max(peaks))
        warn = (ecc_pop or {}).get("ess_warning") or (
            f"effective sample size {ecc_pop['ess_min']:.0f}: treat the fit as rough"
            if (ecc_pop or {}).get("ess_min") is not None and ecc_pop["ess_min"] < 20 else None)
        if warn:
            short = warn.split(":")[0]
            ax.text(0.98, 0.96, short + ":\nthe fit is rough", transform=ax.transAxes, ha="right", va="top",
                    fontsize=p.small_pt - 1, color=PALETTE["vermillion"])
        ax.yaxis.set_major_locator(matplotlib.ticker.MaxNLocator(5, steps=[1, 2, 5, 10], prune="lower"))
        ax.set_xlabel("eccentricity $e$")
        ax.set_ylabel("probability density")
        _legend_above(fig, ax, p)
    return fig
