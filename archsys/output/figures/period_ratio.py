"""Period-ratio diagram: adjacent-pair period ratios against mean-motion resonances.

Vertical lines mark the resonances ``(q + k):q`` of order ``k = 1, 2, 3``
(solid, dashed, dotted; Murray & Dermott 1999, ch. 8), labelled along the top
where the labels do not collide.
"""
from __future__ import annotations

import math

import matplotlib
import matplotlib.ticker
from matplotlib.lines import Line2D

from ...errors import InputError
from ..style import CYCLE, ORDER_STYLES, get_preset, rc_params
from .common import document_of, letter, median, new_figure

__all__ = ["period_ratio_figure", "resonances_between"]


def resonances_between(lo, hi, max_order=3, max_den=12):
    """[(p, q, k)]: resonances p:q = (q + k):q with gcd(p, q) = 1, order k <= max_order, in [lo, hi]."""
    out = []
    for k in range(1, max_order + 1):
        for q in range(1, max_den + 1):
            num = q + k
            if math.gcd(num, q) == 1 and lo <= num / q <= hi:
                out.append((num, q, k))
    return sorted(out, key=lambda r: r[0] / r[1])


def period_ratio_figure(results, preset=None, fig=None, max_order=3):
    """Adjacent period ratios (median and 68.3 % interval) against resonances.

    Vertical lines mark the mean-motion resonances ``(q + k):q`` of order
    ``k = 1, 2, 3`` in the plotted range (solid, dashed, dotted), labelled
    ``"3:2"`` etc. along the top.
    """
    items = results if isinstance(results, (list, tuple)) and not (
        isinstance(results, tuple) and len(results) == 2 and isinstance(results[1], dict)) else [results]
    docs = [document_of(r)[1] for r in items]
    rows = []
    for si, doc in enumerate(docs):
        for q in doc.get("pairs", []) or []:
            s = q.get("period_ratio")
            if median(s) is None:
                continue
            name = f"{letter(q['inner'], doc.get('system'))}–{letter(q['outer'], doc.get('system'))}"
            rows.append((si, name, s["median"], s.get("lo", s["median"]), s.get("hi", s["median"])))
    if not rows:
        raise InputError("period-ratio figure: no adjacent pairs with a period ratio")
    p = get_preset(preset)
    n = len(rows)
    height = (0.95 + max(n, 3) * 0.19) * p.font_pt / 8.0
    lo = min(r[3] for r in rows)
    hi = max(r[4] for r in rows)
    logx = hi / lo > 2.5
    if logx:
        x0, x1 = max(1.0, lo / 1.08), hi * 1.08
    else:
        pad = max(0.06 * (hi - lo), 0.03 * hi)
        x0, x1 = max(1.0, lo - pad), hi + pad
    with matplotlib.rc_context(rc_params(p)):
        resize = fig is None
        fig = new_figure(p, height, fig)
        height = fig.get_size_inches()[1]
        top_in = 0.42 * p.font_pt / 8.0
        bottom_in = 0.40 * p.font_pt / 8.0
        multi = len(docs) > 1
        left_in = (1.15 if multi else 0.55) * p.font_pt / 8.0
        fig.subplots_adjust(left=left_in / p.width_in, right=1 - 0.2 * p.font_pt / 8.0 / p.width_in,
                            bottom=bottom_in / height, top=1 - top_in / height)
        ax = fig.add_subplot(111)
        if logx:
            ax.set_xscale("log")
        ax.set_xlim(x0, x1)
        ax.set_ylim(-0.7, n - 0.3)
        res = _thin_resonances(fig, ax, resonances_between(x0, x1, max_order=max_order), p)
        used_orders = set()
        for num, den, k in res:
            st = ORDER_STYLES[k]
            ax.axvline(num / den, color=st["color"], ls=st["linestyle"], lw=st["linewidth"], zorder=1)
            used_orders.add(k)
        tiers = _label_resonances(fig, ax, res, p, [r[2] for r in rows])
        if tiers > 1:                        # room for the second tier of labels
            extra = 1.25 * (p.small_pt - 1) / 72.0
            if resize:
                height += extra
                fig.set_size_inches(p.width_in, height)
            top_in += extra
            fig.subplots_adjust(bottom=bottom_in / height, top=1 - top_in / height)
        for y, (si, name, med, rlo, rhi) in zip(range(n - 1, -1, -1), rows):
            c = CYCLE[si % len(CYCLE)]
            mk = "osD^v<>"[si % 7]
            ax.errorbar([med], [y], xerr=[[med - rlo], [rhi - med]], fmt=mk, ms=3.5 * p.font_pt / 8.0,
                        color=c, mec=c, mfc=c, elinewidth=p.line_width, capsize=1.5, zorder=3)
        labels = [(f"{docs[r[0]].get('system', '?')} {r[1]}" if multi else r[1]) for r in rows]
        ax.set_yticks(range(n - 1, -1, -1))
        ax.set_yticklabels(labels)
        ax.tick_params(axis="y", which="both", length=0, right=False, left=False)
        ax.yaxis.set_minor_locator(matplotlib.ticker.NullLocator())
        if logx:
            nice = [v for v in (1, 1.5, 2, 3, 5, 10, 20, 30, 50, 100, 200, 500, 1000) if x0 <= v <= x1]
            if len(nice) > 7:
                nice = [v for v in nice if v in (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000)]
            ax.xaxis.set_major_locator(matplotlib.ticker.FixedLocator(nice))
            ax.xaxis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
            ax.xaxis.set_minor_formatter(matplotlib.ticker.NullFormatter())
        ax.set_xlabel(r"period ratio $P_\mathrm{out}/P_\mathrm{in}$")
        h = [Line2D([], [], color=ORDER_STYLES[k]["color"], ls=ORDER_STYLES[k]["linestyle"],
                    lw=ORDER_STYLES[k]["linewidth"], label=ORDER_STYLES[k]["label"]) for k in sorted(used_orders)]
        if h:
            fig.legend(handles=h, loc="upper center", bbox_to_anchor=(0.5, 1.0 - 0.02 / height),
                       ncol=len(h), fontsize=p.small_pt - 1, frameon=False, borderaxespad=0.0,
                       handlelength=2.4, columnspacing=1.2)
        else:
            ax.text(0.98, 0.04, f"no resonance of order ≤ {max_order} in range", transform=ax.transAxes,
                    ha="right", va="bottom", fontsize=p.small_pt - 1, color="#555555")
    return fig


def _thin_resonances(fig, ax, res, p):
    """Drop second- and third-order lines closer than ~1 pt to a line already kept (wide log ranges)."""
    trans = ax.transData
    min_px = 1.2 * fig.dpi / 72.0
    kept, xs = [], []
    for r in sorted(res, key=lambda r: (r[2], r[1])):
        xpix = trans.transform((r[0] / r[1], 0))[0]
        if r[2] > 1 and any(abs(xpix - x) < min_px for x in xs):
            continue
        kept.append(r)
        xs.append(xpix)
    return sorted(kept, key=lambda r: r[0] / r[1])


def _label_resonances(fig, ax, res, p, medians=()):
    """Labels 'p:q' above the axes, skipping labels that would overlap.

    Priority: resonance order, then closeness to a measured period ratio, so the
    resonances next to the data are the ones named.
    """
    trans = ax.transData
    width_px = 0.55 * (p.small_pt - 1) * 3.2 * fig.dpi / 72.0       # about three characters wide

    def near(r):
        x = r[0] / r[1]
        return min((abs(math.log(x / m)) for m in medians if m > 0), default=0.0)

    placed = [[], []]                        # two tiers of labels
    for num, den, k in sorted(res, key=lambda r: (r[2], near(r))):
        xpix = trans.transform((num / den, 0))[0]
        for tier in (0, 1):
            if not any(abs(xpix - x) < 1.15 * width_px for x in placed[tier]):
                break
        else:
            continue
        placed[tier].append(xpix)
        dy = 2 + tier * 1.25 * (p.small_pt - 1)
        ax.annotate(f"{num}:{den}", (num / den, 1.0), xycoords=("data", "axes fraction"), xytext=(0, dy),
                    textcoords="offset points", ha="center", va="bottom", fontsize=p.small_pt - 1,
                    color=ORDER_STYLES[k]["color"] if k < 3 else "#555555")
    return 2 if placed[1] else 1


