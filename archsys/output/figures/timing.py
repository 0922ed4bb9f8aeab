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
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.transforms import Bbox
from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

from ..style import PALETTE, get_preset, rc_params

__all__ = ["timing_figure", "CAPTION"]

CAPTION = ("Timing signatures of the near-resonant pairs of {name}: approximate TTV amplitudes (Lithwick, Xie & "
           "Wu 2012; order of magnitude; {assumption}) of the inner (circles) and outer (squares) planet at the "
           "pair's super-period, with 68.3 % intervals. Triangles in the lower strip: super-periods of "
           "second-order pairs, for which no amplitude is computed.")

#: Candidate label offsets (points) around a pair's marker, tried in turn until one is clear.
_OFFSETS = ((6, 4, "left"), (6, -12, "left"), (-6, 4, "right"), (-6, -12, "right"), (0, 12, "center"),
            (0, -20, "center"), (9, -4, "left"), (-9, -4, "right"), (0, 22, "center"), (0, -30, "center"),
            (14, 12, "left"), (-14, 12, "right"), (14, -20, "left"), (-14, -20, "right"))


def _err(s):
    m = s["median"]
    return m, [[m - s["lo"]], [s["hi"] - m]]


def _pair_label(q, sysname):
    label = "–".join(n.replace(sysname, "").strip() or n for n in (q["inner"], q["outer"]))
    return label + f" ({q.get('super_period_resonance', '?')})"


def timing_figure(document, preset=None, fig=None):
    """Draw the figure of a report document; returns the Figure, or None without super-periods.

    Pairs with amplitudes: super-period against amplitude (log-log), inner planet circles, outer
    planet squares.  Second-order pairs (super-period only) sit in a strip of their own below,
    on the same period axis, never at an invented amplitude.  A legend names the marker shapes.
    """
    pairs = [q for q in document.get("pairs", []) or [] if (q.get("super_period_days") or {}).get("median")]
    if not pairs:
        return None
    p = get_preset(preset)
    sysname = document.get("system", "")
    first, second = [], []
    for q in pairs:
        has_amp = any((q.get(k) or {}).get("median") for k in ("ttv_amplitude_inner_min", "ttv_amplitude_outer_min"))
        (first if has_amp else second).append(q)
    with matplotlib.rc_context(rc_params(p)):
        if fig is None:
            h = (0.72 if first else 0.34) * p.width_in
            fig = Figure(figsize=(p.width_in, min(h, p.page_height_in)))
        if fig.canvas is None or not isinstance(fig.canvas, FigureCanvasAgg):
            FigureCanvasAgg(fig)
        if first and second:
            ax, strip = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (4, 1), "hspace": 0.06})
        elif first:
            ax, strip = fig.add_subplot(111), None
        else:
            ax, strip = None, fig.add_subplot(111)
        notes, handles = [], {}
        xs = [q["super_period_days"]["median"] for q in pairs]
        if ax is not None:
            ax.set_xscale("log")
            ax.set_yscale("log")
            amps = []
            for q in first:
                x, xerr = _err(q["super_period_days"])
                for key, marker, what in (("ttv_amplitude_inner_min", "o", "inner planet"),
                                          ("ttv_amplitude_outer_min", "s", "outer planet")):
                    s = q.get(key)
                    if not s or not s.get("median"):
                        continue
                    y, yerr = _err(s)
                    h = ax.errorbar([x], [y], xerr=xerr, yerr=yerr, fmt=marker, color=PALETTE["blue"], ms=4,
                                    capsize=1.5, lw=0.8)
                    handles.setdefault(what, h)
                    amps.append((y, s["lo"], s["hi"]))
                top = max(v for v, _, _ in amps[-2:])
                notes.append(ax.annotate(_pair_label(q, sysname), (x, top), xytext=(4, 4), textcoords="offset points",
                                         fontsize=p.small_pt))
            lo = min(a[1] for a in amps if a[1] > 0) if any(a[1] > 0 for a in amps) else min(a[0] for a in amps)
            hi = max(a[2] for a in amps)
            ax.set_ylim(lo / 3.0, hi * 6.0)
            ax.set_ylabel("TTV amplitude [min] (approx.)")
        if strip is not None:
            strip.set_xscale("log")
            for q in second:
                x, xerr = _err(q["super_period_days"])
                h = strip.errorbar([x], [0.5], xerr=xerr, fmt="^", color=PALETTE["reddish_purple"], ms=5,
                                   capsize=1.5, lw=0.8)
                handles.setdefault("second-order pair: super-period only", h)
                notes.append(strip.annotate(_pair_label(q, sysname), (x, 0.5), xytext=(5, 3),
                                            textcoords="offset points", fontsize=p.small_pt))
            strip.set_ylim(0, 1.6 if ax is not None else 1.4)
            strip.set_yticks([])
            strip.tick_params(axis="y", which="both", left=False, right=False)
            if ax is not None:
                strip.text(0.01, 0.9, "second-order pairs", transform=strip.transAxes, ha="left", va="top",
                           fontsize=p.small_pt - 1, color=PALETTE["reddish_purple"])
        bottom = strip if strip is not None else ax
        x0, x1 = min(xs), max(xs)
        span = max(x1 / x0, 1.0)
        pad = max(2.0, (12.0 / span) ** 0.5)          # at least about a decade shown: several ticks
        bottom.set_xlim(x0 / pad, x1 * pad)
        for a in (ax, strip):
            if a is None:
                continue
            a.xaxis.set_major_locator(LogLocator(base=10.0, subs=(1.0, 2.0, 5.0)))
            for axis in (a.xaxis, a.yaxis):
                axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
                axis.set_minor_formatter(NullFormatter())
        bottom.set_xlabel("super-period [d]")
        legend_ax = ax if ax is not None else strip
        legend_ax.legend(list(handles.values()), list(handles.keys()), loc="upper left" if ax is not None
                         else "upper right", frameon=False, fontsize=p.small_pt, handletextpad=0.3,
                         borderaxespad=0.3)
        for t in notes:                            # labels are placed after the layout, inside the axes
            t.set_in_layout(False)
        fig.set_layout_engine("constrained", h_pad=0.02, w_pad=0.02, hspace=0.02)
        _place_labels(fig, [a for a in (ax, strip) if a is not None], notes)
    return fig


def _place_labels(fig, axes, notes):
    """Give each pair label the first offset around its marker that collides with no tick label, axis
    label, legend or label already placed and stays inside the axes; a label with no clear place is
    hidden (the markers stay; the report's table names every pair)."""
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    kept = []
    for a in axes:
        kept += [t.get_window_extent(r) for t in a.get_xticklabels() + a.get_yticklabels()
                 if t.get_visible() and t.get_text()]
        kept += [a.xaxis.label.get_window_extent(r), a.yaxis.label.get_window_extent(r)]
        if a.get_legend() is not None:
            kept.append(a.get_legend().get_window_extent(r))
        for art in a.lines:                        # markers and error bars: labels never cover data
            if art.get_visible():
                kept.append(art.get_window_extent(r))
        for art in a.collections:
            for seg in art.get_segments():
                if len(seg):
                    pts = a.transData.transform(np.asarray(seg, dtype=float))
                    kept.append(Bbox.from_extents(*pts.min(axis=0), *pts.max(axis=0)).expanded(1.0, 1.0))
    kept = [b for b in kept if np.isfinite([b.x0, b.y0, b.x1, b.y1]).all()]
    boxes = [a.get_window_extent(r) for a in axes]
    for t in notes:
        placed = False
        home = next((b for a, b in zip(axes, boxes) if t.axes is a), boxes[0])
        for dx, dy, ha in _OFFSETS:
            t.set_position((dx, dy))
            t.set_ha(ha)
            bb = t.get_window_extent(r).expanded(1.08, 1.1)
            inside = bb.x0 >= home.x0 and bb.x1 <= home.x1 and bb.y0 >= home.y0 and bb.y1 <= home.y1
            if inside and not any(bb.overlaps(k) for k in kept):
                kept.append(bb)
                placed = True
                break
        t.set_visible(placed)
