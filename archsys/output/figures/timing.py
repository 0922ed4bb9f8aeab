"""Figure: where the timing signatures of near-resonant pairs lie (super-period against TTV amplitude).

Reads only the report document.  Each near-first-order pair gives two points,
the approximate TTV amplitudes of its inner (circle) and outer (square) planet
(Lithwick, Xie & Wu 2012; order of magnitude) at the pair's super-period, with
their 68.3 % intervals.  Second-order pairs have a super-period only and are
marked along the bottom axis.  An observer needs a baseline of about one
super-period and a timing precision below the amplitude.
"""
from __future__ import annotations

import matplotlib
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import FuncFormatter, NullFormatter

from ..style import PALETTE, get_preset, rc_params

__all__ = ["timing_figure", "CAPTION"]

CAPTION = ("Timing signatures of the near-resonant pairs of {name}: approximate TTV amplitudes (Lithwick, Xie & "
           "Wu 2012; order of magnitude; {assumption}) of the inner (circles) and outer (squares) planet at the "
           "pair's super-period, with 68.3 % intervals. Triangles on the bottom axis: super-periods of "
           "second-order pairs (no amplitude).")


def _err(s):
    m = s["median"]
    return m, [[m - s["lo"]], [s["hi"] - m]]


def timing_figure(document, preset=None, fig=None):
    """Draw the figure of a report document; returns the Figure, or None without super-periods."""
    pairs = [q for q in document.get("pairs", []) or [] if (q.get("super_period_days") or {}).get("median")]
    if not pairs:
        return None
    p = get_preset(preset)
    sysname = document.get("system", "")
    with matplotlib.rc_context(rc_params(p)):
        if fig is None:
            fig = Figure(figsize=(p.width_in, 0.72 * p.width_in))
        if fig.canvas is None or not isinstance(fig.canvas, FigureCanvasAgg):
            FigureCanvasAgg(fig)
        ax = fig.add_subplot(111)
        ax.set_xscale("log")
        ax.set_yscale("log")
        amps, second, notes = [], [], []
        for i, q in enumerate(pairs):
            x, xerr = _err(q["super_period_days"])
            label = "–".join(n.replace(sysname, "").strip() or n for n in (q["inner"], q["outer"]))
            label += f" ({q.get('super_period_resonance', '?')})"
            got = False
            for key, marker in (("ttv_amplitude_inner_min", "o"), ("ttv_amplitude_outer_min", "s")):
                s = q.get(key)
                if not s or not s.get("median"):
                    continue
                y, yerr = _err(s)
                ax.errorbar([x], [y], xerr=xerr, yerr=yerr, fmt=marker, color=PALETTE["blue"], ms=4,
                            capsize=1.5, lw=0.8)
                amps.append(y)
                got = True
            if got:
                notes.append(ax.annotate(label, (x, y), xytext=(4, 4 if i % 2 == 0 else -11),
                                         textcoords="offset points", fontsize=p.small_pt))
            else:
                second.append((x, label))
        if amps:
            lo, hi = min(amps) / 5.0, max(amps) * 5.0
        else:
            lo, hi = 0.1, 100.0
        ax.set_ylim(lo, hi)
        for x, label in second:
            ax.plot([x], [lo * 1.15], "^", color=PALETTE["reddish_purple"], ms=5, clip_on=False)
            notes.append(ax.annotate(label, (x, lo * 1.15), xytext=(4, 2), textcoords="offset points",
                                     fontsize=p.small_pt))
        for axis in (ax.xaxis, ax.yaxis):
            axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
            axis.set_minor_formatter(NullFormatter())
        ax.set_xlabel("super-period [d]")
        ax.set_ylabel("TTV amplitude [min] (approx.)")
        fig.tight_layout()
        _drop_colliding_labels(fig, ax, notes)
    return fig


def _drop_colliding_labels(fig, ax, notes):
    """Hide pair labels that would run into a label already kept or into the tick labels (the
    markers stay; the report's table names every pair)."""
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    kept = [t.get_window_extent(r) for t in ax.get_xticklabels() + ax.get_yticklabels()
            if t.get_visible() and t.get_text()]
    kept += [ax.xaxis.label.get_window_extent(r), ax.yaxis.label.get_window_extent(r)]
    for t in notes:
        bb = t.get_window_extent(r).expanded(1.1, 1.1)
        if any(bb.overlaps(k) for k in kept):
            t.set_visible(False)
        else:
            kept.append(bb)
