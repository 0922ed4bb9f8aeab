"""Figure: probability that a planet transits, against period, given the architecture.

Reads only the report document (``transit_probability_curve`` and the
planets' ``transit_probability``), so it can be redrawn from a saved result.  The shaded
band is the 68.3 % spread of the per-draw probability; the dashed line is the
isotropic probability R*/a (Winn 2010 eq. 9), i.e. what one would say without
the other planets; markers are the planets not known to transit.
"""
from __future__ import annotations

import matplotlib
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

from ..style import GREY, PALETTE, get_preset, rc_params

__all__ = ["transit_odds_figure", "CAPTION"]

CAPTION = ("Probability that a planet at each period transits, given the orientation posterior of {name} "
           "(line: posterior mean; band: 68.3 % spread over the draws; circular orbit, planet centre crossing "
           "the disc). Dashed: isotropic probability R*/a (Winn 2010 eq. 9) without the other planets. "
           "Markers: planets not known to transit, with their posterior probability.")


def transit_odds_figure(document, preset=None, fig=None):
    """Draw the curve of a report document; returns the Figure, or None if the document has no curve."""
    curve = document.get("transit_probability_curve")
    if not curve:
        return None
    p = get_preset(preset)
    P = curve["period_day"]
    with matplotlib.rc_context(rc_params(p)):
        if fig is None:
            fig = Figure(figsize=(p.width_in, 0.72 * p.width_in))
        if fig.canvas is None or not isinstance(fig.canvas, FigureCanvasAgg):
            FigureCanvasAgg(fig)
        ax = fig.add_subplot(111)
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.fill_between(P, curve["lo"], curve["hi"], color=PALETTE["sky_blue"], alpha=0.35, lw=0,
                        label="68.3 % over draws")
        ax.plot(P, curve["probability"], color=PALETTE["blue"], label="given the architecture")
        ax.plot(P, curve["isotropic"], color=GREY, ls=(0, (4, 2)), label="isotropic")
        for pl in document.get("planets", []) or []:
            x, y = (pl.get("period_days") or {}).get("median"), pl.get("transit_probability")
            if x is None or not y:
                continue
            ax.plot([x], [y], "o", color=PALETTE["vermillion"], ms=4, zorder=3)
            ax.annotate(pl["name"], (x, y), xytext=(3, 3), textcoords="offset points", fontsize=p.small_pt)
        floor = max(min(min(curve["isotropic"]), min(v for v in curve["lo"] if v > 0) if any(
            v > 0 for v in curve["lo"]) else 1.0) / 2.0, 1e-4)
        ax.set_ylim(floor, 1.3)
        ax.xaxis.set_major_locator(LogLocator(base=10.0, subs=(1.0, 2.0, 5.0)))
        for axis in (ax.xaxis, ax.yaxis):
            axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
            axis.set_minor_formatter(NullFormatter())
        ax.set_xlabel("period [d]")
        ax.set_ylabel("transit probability")
        ax.legend(loc="lower left", frameon=False)
        fig.tight_layout()
    return fig
