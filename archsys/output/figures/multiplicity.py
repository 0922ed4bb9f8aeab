"""Posterior-predictive figure of the transit-multiplicity fit: observed against simulated counts.

Object-oriented matplotlib (a :class:`matplotlib.figure.Figure`, no pyplot
state), house style and presets from :mod:`archsys.output.style`.
"""
from __future__ import annotations

import numpy as np

from ..style import PALETTE, figure_size, rc_params

__all__ = ["plot_transit_multiplicity"]

_SERIES = (("two_populations", "flat + single population", PALETTE["vermillion"], "o", -0.12),
           ("one_population", "one population", PALETTE["blue"], "s", 0.12))


def plot_transit_multiplicity(block, fig=None, preset=None):
    """Observed numbers of systems with k transiting planets and the posterior-predictive 68/95 % ranges.

    Parameters
    ----------
    block : dict
        The ``transit_multiplicity`` block of population.json.
    fig : matplotlib.figure.Figure, optional
    preset : str, optional
        Figure preset (one-column, two-column, slide).

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib
    from matplotlib.figure import Figure
    with matplotlib.rc_context(rc_params(preset)):
        if fig is None:
            fig = Figure(figsize=figure_size(preset, aspect=0.75))
        ax = fig.add_subplot(111)
        obs = (block or {}).get("observed") or {}
        labels = obs.get("labels") or []
        counts = np.asarray(obs.get("counts") or [], dtype=float)
        x = np.arange(1, len(labels) + 1)
        fit = (block or {}).get("fit") or {}
        for key, label, colour, marker, dx in _SERIES:
            pp = (fit.get(key) or {}).get("posterior_predictive")
            if not pp:
                continue
            med, lo, hi = (np.asarray(pp[k], dtype=float) for k in ("median", "lo", "hi"))
            lo95, hi95 = np.asarray(pp["lo95"], dtype=float), np.asarray(pp["hi95"], dtype=float)
            ax.vlines(x + dx, np.maximum(lo95, 0.3), np.maximum(hi95, 0.3), color=colour, linewidth=0.8, alpha=0.6)
            ax.vlines(x + dx, np.maximum(lo, 0.3), np.maximum(hi, 0.3), color=colour, linewidth=2.4)
            ax.plot(x + dx, np.maximum(med, 0.3), marker, color=colour, markersize=3.5, linestyle="none",
                    markerfacecolor="white", label=f"{label} (simulated)")
        if counts.size:
            shown = counts > 0
            ax.plot(x[shown], counts[shown], "D", color=PALETTE["black"], markersize=3.5, linestyle="none",
                    label="observed", zorder=5)
            ax.set_yscale("log")
            ax.set_ylim(0.3, max(counts.max(), 1.0) * 2.5)
            ax.set_xticks(x, labels)
            ax.minorticks_off()
            ax.legend(loc="best")
        else:
            ax.text(0.5, 0.5, (block or {}).get("reason") or "no transiting systems counted",
                    transform=ax.transAxes, ha="center", va="center", wrap=True)
        ax.set_xlabel("transiting planets in the system $k$")
        ax.set_ylabel("systems")
    return fig
