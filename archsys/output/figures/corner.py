"""Corner plots sized for the page: panels, ticks and labels measured with the renderer.

The 2-D panels are drawn by the ``corner`` library (Foreman-Mackey 2016,
JOSS 1, 24); their contours enclose 39.3 % and 86.5 % of the draws, the 1σ
and 2σ levels of a 2-D Gaussian, ``1 - exp(-x**2 / 2)`` for x = 1, 2.  The
1-D marginals are archsys's own: a Gaussian kernel density estimate reflected
at physical bounds (e = 0, ψ = 0, the ends of a full circle), so a flat or
one-sided posterior gives a smooth curve instead of a ragged histogram.

Layout is measured, not assumed: after a draw, tick labels that run into
each other lose ticks (or turn 45°), axis labels move clear of the tick
labels, margins take what the labels need, and the block of summary values is
placed in the empty upper triangle only where it touches no panel.
"""
from __future__ import annotations

import math
import warnings

import matplotlib
import matplotlib.ticker
import numpy as np

from ...errors import InputError
from ..numbers import round_uncertain
from ..style import PALETTE, get_preset, rc_params
from .common import new_figure
from .marginal import PanelTicks as _PanelTicks
from .marginal import axis_range as _axis_range
from .marginal import density as _density
from .marginal import prior_curve as _prior_curve
from .params import usable_parameters

__all__ = ["corner_figure", "split_parameters", "CONTOUR_LEVELS", "CONTOUR_NOTE", "QUANTILES",
           "RANGE_NOTE"]

#: 2-D contour levels: 1 and 2 sigma of a 2-D Gaussian (39.3 %, 86.5 % of the draws).
CONTOUR_LEVELS = (1.0 - math.exp(-0.5), 1.0 - math.exp(-2.0))
CONTOUR_NOTE = ("Contours hold 39.3 % and 86.5 % of the draws (1σ, 2σ of a 2-D Gaussian); "
                "dashed lines: median and 68.3 % interval")
RANGE_NOTE = "Axes span the central 99 % of the draws (to the physical bound where it is close)"
QUANTILES = (0.158655, 0.5, 0.841345)
_ANGLE_STEPS = [1, 1.5, 3, 4.5, 6, 9, 10]       # x10^n: 15, 30, 45, 60, 90 degrees, ...
_DEC_STEPS = [1, 2, 2.5, 5, 10]


def split_parameters(params, max_params):
    """Split ``params`` into groups of at most ``max_params`` for separate figures.

    Parameters of one group (orbit, orientation, mass) stay together where
    they fit; neighbouring groups are merged while the total fits; a group too
    large on its own is cut into near-equal parts.
    """
    if len(params) <= max_params:
        return [list(params)]
    groups = []
    for q in params:
        if groups and groups[-1][0].group == q.group:
            groups[-1].append(q)
        else:
            groups.append([q])
    parts = []
    for g in groups:
        n = math.ceil(len(g) / max_params)
        size = math.ceil(len(g) / n)
        parts += [g[i:i + size] for i in range(0, len(g), size)]
    merged = [parts[0]]
    for part in parts[1:]:
        if len(merged[-1]) + len(part) <= max_params:
            merged[-1] = merged[-1] + part
        else:
            merged.append(part)
    for i, part in enumerate(merged):             # no one-parameter figure: borrow from a neighbour
        j = i - 1 if i > 0 else i + 1
        if len(part) == 1 and len(merged) > 1 and len(merged[j]) >= 3:
            if j < i:
                merged[i] = [merged[j].pop()] + part
            else:
                merged[i] = part + [merged[j].pop(0)]
    return [m for m in merged if m]


def _value_line(q, x):
    if q.limit:                          # an upper limit, worded and rounded as in the tables
        from ..table_model import limit_cell
        _, _, v, cl = limit_cell(q.limit)
        return f"${q.symbol} < {v}$ ({cl})"
    lo, med, hi = np.quantile(x, QUANTILES)
    v, m, s = round_uncertain(med, med - lo, hi - med)
    unit = "{}^\\circ" if q.unit == "^\\circ" else (f"\\,{q.unit}" if q.unit else "")
    err = f"\\pm{s}" if m == s else f"^{{+{s}}}_{{-{m}}}"
    return f"${q.symbol} = {v}{err}{unit}$"


def _to_axis(v, log):
    if v is None:
        return None
    return math.log10(v) if log and v > 0 else (None if log else v)


def corner_figure(params, truths=None, priors=None, preset=None, fig=None, title=None):
    """Corner plot of ``params`` (list of :class:`CornerParam`).

    Parameters
    ----------
    params : list of CornerParam
        Constant or undefined parameters are skipped (listed in the figure).
        More parameters than the preset holds (``Preset.max_corner_params``)
        give a larger figure than the preset, with a warning saying so;
        :func:`split_parameters` splits them into figures that fit instead.
    truths : dict, optional
        ``name -> value`` (display units) drawn as lines.
    priors : dict, optional
        ``name -> prior`` drawn on the 1-D marginals: an object with
        ``logpdf(x)``, a callable pdf, or an array of prior draws, in the
        parameter's display units.
    preset, fig, title
        Figure preset, an empty figure to draw into, a title line.

    Returns
    -------
    matplotlib.figure.Figure with K x K axes (K = parameters kept).
    """
    import corner

    kept, skipped = usable_parameters(params)
    if not kept:
        raise InputError("corner plot: no parameter varies across the draws"
                         + (f" (skipped: {', '.join(f'{a} {b}' for a, b in skipped)})" if skipped else ""))
    p = get_preset(preset)
    K = len(kept)
    size = p.corner_in
    if K > p.max_corner_params() and fig is None:
        size = round(K * p.min_panel_in + 0.8 * p.font_pt / 8.0, 2)
        warnings.warn(f"corner plot of {K} parameters drawn {size:g} in square, larger than the {p.name} preset "
                      f"({p.corner_in:g} in holds {p.max_corner_params()}); choose fewer parameters or split them",
                      UserWarning, stacklevel=2)
    data = np.column_stack([q.plotted() for q in kept])
    ok = np.all(np.isfinite(data), axis=1)
    data = data[ok]
    linear = np.column_stack([np.asarray(q.values, dtype=float) for q in kept])[ok]
    if data.shape[0] < 10:
        raise InputError(f"corner plot: only {data.shape[0]} draws have every parameter defined")
    ranges, bounded = (list(x) for x in zip(*[_axis_range(q, data[:, k]) for k, q in enumerate(kept)]))
    drawn_priors = {q.name: priors[q.name] for q in kept if priors and priors.get(q.name) is not None}
    for k, q in enumerate(kept):          # nothing drawn outside the prior's support (e.g. sigma >= 0.1 deg)
        support = getattr(drawn_priors.get(q.name), "_bounds", None)
        if support is None or support[0] is None or not np.isfinite(support[0]):
            continue
        low = support[0] if not q.log else (math.log10(support[0]) if support[0] > 0 else None)
        if low is not None and ranges[k][0] < low < ranges[k][1]:
            ranges[k] = (low, ranges[k][1])
            bounded[k] = (True, bounded[k][1])
    bins = int(np.clip(np.sqrt(data.shape[0]) / 2.5, 10, 25))
    with matplotlib.rc_context(rc_params(p)):
        with matplotlib.rc_context({"xtick.minor.visible": False, "ytick.minor.visible": False}):
            fig = new_figure(p, size, fig, width_in=size)
            corner.corner(
                data, fig=fig, labels=[q.label for q in kept], range=list(ranges), bins=bins, smooth=0.8,
                levels=CONTOUR_LEVELS, quantiles=[], color=PALETTE["blue"], max_n_ticks=3,
                plot_datapoints=True, data_kwargs={"ms": 0.8, "alpha": 0.2, "color": "#666666"},
                pcolor_kwargs={"rasterized": True}, contour_kwargs={"linewidths": 0.8 * p.line_width},
                hist_kwargs={"linewidth": 0.9 * p.line_width}, labelpad=0.0, use_math_text=True)
        axes = np.array(fig.axes).reshape(K, K)
        for k, q in enumerate(kept):
            _diagonal(axes[k, k], q, data[:, k], ranges[k], bounded[k], p,
                      _to_axis(truths.get(q.name), q.log) if truths else None,
                      priors.get(q.name) if priors else None)
        if truths:
            for r in range(K):
                for c in range(r):
                    for k, line in ((c, axes[r, c].axvline), (r, axes[r, c].axhline)):
                        t = _to_axis(truths.get(kept[k].name), kept[k].log)
                        if t is not None:
                            line(t, color=PALETTE["vermillion"], lw=0.9 * p.line_width)
        heavy = [a for ax in fig.axes for a in list(ax.lines) + list(ax.collections) + list(ax.images)
                 if a.get_visible()]
        for a in heavy:                       # layout depends on text only: measure without the data
            a.set_visible(False)
        _fit_layout(fig, axes, kept, ranges, p)
        for a in heavy:
            a.set_visible(True)
        _values_block(fig, axes, kept, linear, skipped, p, title, bool(truths), bool(drawn_priors))
    return fig


def _diagonal(ax, q, x, rng, bounded, p, truth, prior):
    """1-D marginal: reflected KDE, median and 68.3 % interval, optional truth and prior."""
    for art in list(ax.lines) + list(ax.patches):
        art.remove()
    grid, y = _density(x, rng[0], rng[1], bounded, q.circular)
    ax.plot(grid, y, color=PALETTE["blue"], lw=1.0 * p.line_width)
    ax.fill_between(grid, y, color=PALETTE["blue"], alpha=0.12, lw=0)
    for v in np.quantile(x, QUANTILES):
        ax.axvline(v, color=PALETTE["blue"], ls=(0, (3, 2)), lw=0.7 * p.line_width)
    top = 1.12 * float(np.nanmax(y)) if np.isfinite(y).any() and np.nanmax(y) > 0 else 1.0
    if truth is not None:
        ax.axvline(truth, color=PALETTE["vermillion"], lw=0.9 * p.line_width)
    if prior is not None:
        xs, ys = _prior_curve(prior, rng[0], rng[1], q.log)
        okp = np.isfinite(ys)
        ax.plot(xs[okp], ys[okp], color=PALETTE["orange"], ls=(0, (3, 1.5)), lw=0.9 * p.line_width)
        peak = np.nanmax(ys[okp]) if okp.any() else 0.0
        top = max(top, min(1.05 * peak, 3 * top))
    ax.set_xlim(*rng)
    ax.set_ylim(0, top)


def _fit_layout(fig, axes, kept, ranges, p):
    """Ticks, label sizes and margins measured with the renderer until nothing collides."""
    K = len(kept)
    W = fig.get_size_inches()[0]
    panel = (W - 0.8 * p.font_pt / 8.0) / K
    tick_pt = p.small_pt if panel >= 0.9 else p.small_pt - 1
    label_pt = p.font_pt if panel >= 0.9 else p.small_pt
    nbins = [3 if panel >= 0.75 else 2] * K
    rot = [0] * K
    two = [False] * K
    for ax in fig.axes:
        ax.tick_params(which="both", labelsize=tick_pt, length=2.0, width=p.axes_width, pad=1.5,
                       direction="in", top=True, right=True)
        ax.minorticks_off()
    pad_px = 2.0 * fig.dpi / 72.0
    left, bottom = 0.75 * p.font_pt / 8.0, 0.7 * p.font_pt / 8.0
    for _ in range(6):
        fig.subplots_adjust(left=left / W, bottom=bottom / W, right=1 - 0.06 / W, top=1 - 0.06 / W,
                            wspace=0.07, hspace=0.07)
        for k, q in enumerate(kept):
            span = (ranges[k][1] - ranges[k][0]) if q.angle and not q.log else None
            for r in range(k, K):
                axes[r, k].xaxis.set_major_locator(_PanelTicks(nbins[k], q.angle, span))
            for c in range(k):
                axes[k, c].yaxis.set_major_locator(_PanelTicks(nbins[k], q.angle, span))
            axes[K - 1, k].set_xlabel(q.axis_label(two[k]), fontsize=label_pt, linespacing=1.0)
            for lab in axes[K - 1, k].get_xticklabels():
                lab.set_rotation(rot[k])
                lab.set_ha("right" if rot[k] else "center")
                lab.set_rotation_mode("anchor" if rot[k] else "default")
            if k > 0:
                axes[k, 0].set_ylabel(q.axis_label(two[k]), fontsize=label_pt, linespacing=1.0)
                for lab in axes[k, 0].get_yticklabels():
                    lab.set_rotation(0)
                    lab.set_va("center")
        fig.canvas.draw()
        renderer = fig.canvas.get_renderer()
        changed = False
        panel_px = axes[0, 0].get_window_extent(renderer).width
        for k in range(K):              # x tick labels of the bottom row: each column, then neighbours
            if _crowded(axes[K - 1, k].xaxis, renderer, pad_px, axes[K - 1, k], "x"):
                if nbins[k] > 2:
                    nbins[k] -= 1
                elif not rot[k]:
                    rot[k] = 45
                else:
                    nbins[k] = 1
                changed = True
            if k > 0 and _crowded(axes[k, 0].yaxis, renderer, pad_px, axes[k, 0], "y") and nbins[k] > 1:
                nbins[k] -= 1
                changed = True
            lab = axes[K - 1, k].xaxis.label
            if not two[k] and kept[k].unit and lab.get_window_extent(renderer).width > 0.98 * panel_px:
                two[k] = True
                changed = True
        # axis labels clear of the tick labels; margins sized by what the labels need
        need_b = need_l = 0.0
        for k in range(K):
            ax = axes[K - 1, k]
            ab = ax.get_window_extent(renderer)
            tb = _ticks_box(ax.xaxis, renderer)
            y0 = (tb.y0 if tb is not None else ab.y0) - pad_px
            ax.xaxis.set_label_coords(0.5, (y0 - ab.y0) / ab.height)
            ax.xaxis.label.set_va("top")
            need_b = max(need_b, ab.y0 - y0 + ax.xaxis.label.get_window_extent(renderer).height + pad_px)
            if k > 0:
                ax = axes[k, 0]
                ab = ax.get_window_extent(renderer)
                tb = _ticks_box(ax.yaxis, renderer)
                x0 = (tb.x0 if tb is not None else ab.x0) - pad_px
                ax.yaxis.set_label_coords((x0 - ab.x0) / ab.width, 0.5)
                ax.yaxis.label.set_ha("right")
                ax.yaxis.label.set_va("center")
                ax.yaxis.label.set_rotation_mode("default")
                need_l = max(need_l, ab.x0 - x0 + ax.yaxis.label.get_window_extent(renderer).width + pad_px)
        nb, nl = need_b / fig.dpi + 0.03, (need_l / fig.dpi + 0.03) if K > 1 else 0.15
        if abs(nb - bottom) > 0.02 or abs(nl - left) > 0.02:
            bottom, left, changed = nb, nl, True
        if not changed:
            break


def _ticks_box(axis, renderer):
    boxes = [t.get_window_extent(renderer) for t in axis.get_ticklabels() if t.get_visible() and t.get_text()]
    if not boxes:
        return None
    from matplotlib.transforms import Bbox
    return Bbox.union(boxes)


def _crowded(axis, renderer, pad_px, ax, which):
    """True when tick labels of this axis touch each other or reach past the panel into the next one."""
    lo, hi = sorted(axis.get_view_interval())
    labs = [t for t, loc in zip(axis.get_ticklabels(), axis.get_majorticklocs())
            if t.get_text() and lo <= loc <= hi]
    boxes = sorted((t.get_window_extent(renderer) for t in labs), key=lambda b: b.x0 if which == "x" else b.y0)
    ab = ax.get_window_extent(renderer)
    gap = 0.07 * ab.width / 2.0                     # half the space between panels
    for a, b in zip(boxes, boxes[1:]):
        if (b.x0 - a.x1 if which == "x" else b.y0 - a.y1) < pad_px:
            return True
    for b in boxes:
        if which == "x" and b.x1 - b.x0 < ab.width and (b.x0 < ab.x0 - gap or b.x1 > ab.x1 + gap):
            return True
        if which == "y" and (b.y0 < ab.y0 - gap or b.y1 > ab.y1 + gap):
            return True
    return False


def _values_block(fig, axes, kept, data, skipped, p, title, truths, priors):
    """Summary values (and the meaning of lines) in the empty upper triangle, touching no panel."""
    K = len(kept)
    values = ([title] if title else []) + [_value_line(q, data[:, k]) for k, q in enumerate(kept)]
    note = ["contours: 39.3 %, 86.5 % of draws", "dashed: median, 68.3 % interval"]
    if truths:
        note.append("solid vermillion: true value")
    if priors:
        note.append("dashed orange: prior")
    note += [f"skipped {lab}: {why}" for lab, why in skipped]
    if K == 1:
        ax = axes.flat[0]
        t = ax.set_title(values[-1], fontsize=p.small_pt, loc="left", pad=3)
        renderer = fig.canvas.get_renderer()
        H = fig.get_size_inches()[1]
        need = (t.get_window_extent(renderer).height + 8) / fig.dpi
        fig.subplots_adjust(top=1 - need / H)
        return
    box = axes[0, K - 1].get_position()
    renderer = fig.canvas.get_renderer()
    panels = [axes[r, c].get_tightbbox(renderer) for r in range(K) for c in range(r + 1)]
    for size, lines in ((p.small_pt, values + [""] + note), (p.small_pt - 1, values + [""] + note),
                        (p.small_pt, values), (p.small_pt - 1, values), (p.small_pt - 1.5, values)):
        t = fig.text(box.x1, box.y1, "\n".join(lines), ha="right", va="top", fontsize=size, linespacing=1.4)
        bb = t.get_window_extent(renderer)
        if not any(bb.overlaps(pb) for pb in panels) and bb.x0 >= 0 and bb.y0 >= 0:
            return
        t.remove()
    fig.archsys_values_not_drawn = values      # the caption carries them (make_figures)
