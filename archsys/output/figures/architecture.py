"""Architecture diagram: one row per system, planets at their semi-major axes.

Glyphs: a planet marker (area grows with the logarithm of the mass; filled:
true mass, open: m sin i, grey: no mass); a light bar from periapsis to
apoapsis ``a(1 - e)`` to ``a(1 + e)``; an under-bracket spanning ``a ± R_H``
with ``R_H = a (m / 3 M_star)^(1/3)`` (the Hill radius); under each adjacent
pair a segment whose colour *and* dash give its Hill-stability verdict
(Gladman 1993).  The legend shows each glyph exactly as drawn, in one compact
block whose height is measured and kept below the data's.
"""
from __future__ import annotations

import math

import matplotlib
import matplotlib.ticker
import numpy as np
from matplotlib.legend_handler import HandlerBase
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from ...errors import InputError
from ...physics.constants import MEARTH_MSUN
from ...physics.kepler import a_au
from ..style import PALETTE, VERDICT_STYLES, get_preset, rc_params, verdict_style
from .common import documents_of, letter, log_axis_ticks, median, new_figure

__all__ = ["architecture_figure", "ARCHITECTURE_CAPTION"]

GREY_EDGE = "#777777"
HILL_GREY = "#333333"
SHADE = "#c9c9c9"
ARCHITECTURE_CAPTION = (
    "planets at their semi-major axes; bars a(1±e); under-brackets a ± R_H (Hill radius); marker area grows "
    "with the logarithm of the mass (open: minimum mass m sin i, also where a true mass would rest on an "
    "inclination with no data of the planet's own; light: mass from the mass-radius relation, an "
    "estimate); segments under adjacent pairs: "
    "Hill-stability verdict (Gladman 1993).")


def _marker_pt(mass_mearth, p):
    """Marker diameter (points): logarithmic in mass, so 1 to 10^4 M_earth stay readable."""
    scale = p.font_pt / 8.0
    return scale * (2.2 + 2.6 * math.log10(1.0 + max(mass_mearth, 0.0)))


def _planet_mass(pl):
    """(mass in Earth masses, basis) of a planet entry, from its structured ``estimated`` flags, so the
    same planet looks the same in every mode: a true mass that rests on an inclination with no data
    of the planet's own is shown as its m sin i (open marker), a mass from the mass-radius relation
    as an estimate (light marker)."""
    est = (pl.get("estimated") or {}).get("mass_mearth")
    m = median(pl.get("mass_mearth"))
    if m is not None and est == "mass_radius_relation":
        return m, "estimate"
    if m is not None and est != "prior_inclination":
        return m, "true"
    m_sini = median(pl.get("msini_mearth"))
    if m_sini is not None:
        return m_sini, "minimum"
    if m is not None:
        return m, "estimate"
    return None, "unknown"


class _Bracket:
    """Legend key for the Hill-radius under-bracket."""


class _BracketHandler(HandlerBase):
    def create_artists(self, legend, orig, x0, y0, width, height, fontsize, trans):
        w = 0.6 * width
        xa, xb = x0 + 0.2 * width, x0 + 0.2 * width + w
        yb, yt = y0 + 0.2 * height, y0 + 0.75 * height
        ln = Line2D([xa, xa, xb, xb], [yt, yb, yb, yt], color=HILL_GREY, lw=orig.lw,
                    solid_joinstyle="miter", transform=trans)
        return [ln]


def _shades_for(shade, docs):
    """Per-system lists of (P_lo, P_hi) in days from a list (aligned with the systems) or a dict by name."""
    if shade is None:
        return [[] for _ in docs]
    if isinstance(shade, dict):
        return [list(shade.get(d.get("system"), []) or []) for d in docs]
    shade = list(shade)
    if len(shade) != len(docs):
        raise InputError(f"architecture figure: {len(shade)} lists of shaded period intervals for "
                         f"{len(docs)} systems")
    return [list(s or []) for s in shade]


def architecture_figure(results, preset=None, fig=None, shade_periods=None, shade_label="marked period range",
                        row_height=None):
    """Architecture of one or more systems, stacked top to bottom in the order given.

    Parameters
    ----------
    results : list
        Analysis objects, report documents or (draws, document) pairs.
    preset, fig
        Figure preset and an optional empty figure to draw into.
    shade_periods : list or dict, optional
        Period intervals (days) to shade in each system's row: a list aligned
        with ``results`` or a dict ``{system name: [(P_lo, P_hi), ...]}``.
        They are placed on the axis with Kepler's third law and the median
        stellar mass (planet mass neglected).
    shade_label : str
        Legend text of the shaded intervals.
    row_height : float, optional
        Row height in inches (default: roomy for a few systems, compact for many).
    """
    docs = documents_of(results)
    if not docs:
        raise InputError("architecture figure: no systems given")
    shades = _shades_for(shade_periods, docs)
    p = get_preset(preset)
    n = len(docs)
    s = p.font_pt / 8.0
    if row_height is None:
        row_height = (0.5 if n <= 3 else 0.42 if n <= 12 else 0.32) * s
    height = n * row_height + 0.5 * s
    with matplotlib.rc_context(rc_params(p)):
        resize = fig is None
        fig = new_figure(p, height, fig)
        if not resize:
            height = fig.get_size_inches()[1]
        ax = fig.add_subplot(111)
        xs, used, masses = [], set(), []
        brackets, segments, row_marker, labels = [], [], {}, []
        for i, doc in enumerate(docs):
            y = n - 1 - i
            mstar = median((doc.get("star") or {}).get("mass_msun")) or 1.0
            for lo_p, hi_p in shades[i]:
                a0, a1 = sorted(float(v) for v in a_au(np.array([lo_p, hi_p], dtype=float), mstar))
                ax.fill_between([a0, a1], [y - 0.46] * 2, [y + 0.46] * 2, color=SHADE, lw=0, zorder=0.5)
                xs += [a0, a1]
                used.add("shade")
            pos = []
            for pl in doc.get("planets", []):
                a = median(pl.get("a_au"))
                if a is None or a <= 0:
                    pos.append(None)
                    continue
                e = median(pl.get("ecc")) or 0.0
                m, basis = _planet_mass(pl)
                pos.append(a)
                xs += [a * (1 - e), a * (1 + e)]
                d = _marker_pt(m if m is not None else 1.0, p)
                row_marker[y] = max(row_marker.get(y, 0.0), d)
                if m is not None:
                    rh = a * (m * MEARTH_MSUN / (3.0 * mstar)) ** (1.0 / 3.0)
                    brackets.append((a - rh, a + rh, y, d))     # drawn once the axes size is known
                    xs += [a - rh, a + rh]
                    used.add("hill")
                if e > 0:
                    ax.plot([a * (1 - e), a * (1 + e)], [y, y], color=PALETTE["sky_blue"],
                            lw=2.0 * p.line_width, solid_capstyle="butt", zorder=2, alpha=0.9)
                    used.add("orbit")
                face = {"true": PALETTE["blue"], "minimum": "white", "unknown": "white",
                        "estimate": PALETTE["sky_blue"]}[basis]
                edge = GREY_EDGE if basis == "unknown" else PALETTE["blue"]
                ax.plot([a], [y], marker="o", ms=d, mfc=face, mec=edge, mew=0.9 * p.line_width, ls="none", zorder=4)
                used.add(basis)
                if m is not None:
                    masses.append(m)
                if n <= 12:
                    name = letter(pl["name"], doc.get("system"))
                    if len(name) > 3 and len(name.split()[-1]) <= 3:     # 'Proxima Cen b' in another system
                        name = name.split()[-1]
                    labels.append(ax.annotate(name, (a, y), xytext=(0, 0.5 * d + 1.0), textcoords="offset points",
                                              ha="center", va="bottom", fontsize=p.small_pt - 1, zorder=5))
            for q_i, q in enumerate(doc.get("pairs", []) or []):
                if q_i + 1 >= len(pos) or pos[q_i] is None or pos[q_i + 1] is None:
                    continue
                key = verdict_style(q.get("hill_stable_probability"))
                st = VERDICT_STYLES[key]
                x1, x2 = pos[q_i], pos[q_i + 1]
                gap = (x2 / x1) ** 0.08            # a visible gap between neighbouring pairs
                segments.append((x1 * gap, x2 / gap, y, st))
                used.add(key)
        xs = np.array([x for x in xs if x > 0])
        if xs.size == 0:
            raise InputError("architecture figure: no planet has a semi-major axis")
        lo, hi = xs.min(), xs.max()
        span = max(np.log10(hi / lo), 0.3)
        x0, x1 = lo / 10 ** (0.07 * span), hi * 10 ** (0.07 * span)
        ax.set_xscale("log")
        ax.set_xlim(x0, x1)
        ax.set_ylim(-0.5, n - 0.5 + (0.12 if n <= 12 else 0.0))
        ax.set_yticks(range(n))
        ax.set_yticklabels([row_label(d.get("system", "?")) for d in docs][::-1])
        ax.tick_params(axis="y", which="both", length=0, right=False)
        ax.yaxis.set_minor_locator(matplotlib.ticker.NullLocator())
        log_axis_ticks(ax.xaxis, x0, x1, max_labels=7 if p.width_in > 5 else 5)
        ax.set_xlabel(r"semi-major axis $a$ [au]")
        for yy in np.arange(0.5, n - 0.5):
            ax.axhline(yy, color="#cccccc", lw=0.5, zorder=0)
        _legend_and_margins(fig, ax, p, used, height, masses, resize, shade_label)
        # glyphs under the markers, placed in points below each marker's edge
        upp = (ax.get_ylim()[1] - ax.get_ylim()[0]) / (ax.get_position().height * fig.get_size_inches()[1] * 72.0)
        s_pt = p.font_pt / 8.0
        for x0_, x1_, y, d in brackets:
            top = y - (0.5 * d + 1.0 * s_pt) * upp
            ax.plot([x0_, x0_, x1_, x1_], [top, top - 2.6 * s_pt * upp, top - 2.6 * s_pt * upp, top],
                    color=HILL_GREY, lw=0.75 * p.line_width, solid_joinstyle="miter", zorder=3)
        _drop_colliding(fig, labels)
        for x0_, x1_, y, st in segments:
            ys = max(y - (0.5 * row_marker.get(y, 0.0) + 6.0 * s_pt) * upp, y - 0.44)
            ax.plot([x0_, x1_], [ys, ys], color=st["color"], ls=st["linestyle"], lw=1.4 * p.line_width,
                    solid_capstyle="butt", zorder=3)
    return fig


#: Longest system name drawn in full as a row label; longer names keep their start and end.
MAX_ROW_LABEL = 24


def row_label(name, limit=MAX_ROW_LABEL):
    """A row label of at most ``limit`` characters ('Aaaaaaaaaa…zzzzzzzzz'), control characters escaped."""
    from ..file_names import printable
    s = printable(str(name))
    if len(s) <= limit:
        return s
    head = (limit - 1) // 2 + (limit - 1) % 2
    return s[:head] + "\u2026" + s[len(s) - (limit - 1 - head):]


def _drop_colliding(fig, labels):
    """Hide planet labels that would run into a label already kept (close pairs); the left one wins."""
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    kept = []
    for t in sorted(labels, key=lambda t: (t.xy[1], t.xy[0])):
        bb = t.get_window_extent(r).expanded(1.15, 1.0)
        if any(bb.overlaps(k) for k in kept):
            t.set_visible(False)
        else:
            kept.append(bb)


def _legend_handles(p, used, masses, shade_label):
    h = []
    decades = (1, 10, 100, 1000, 10000)
    ms = sorted(masses) or [1.0]
    sizes = [m for m in decades if ms[0] / 4 <= m <= ms[-1] * 4] or [1]
    if len(sizes) == 1:
        sizes = [sizes[0] // 10, sizes[0]] if sizes[0] >= 10 else [1, 10]
    filled = "true" in used or "minimum" not in used
    for m in sizes:
        h.append(Line2D([], [], marker="o", ls="none", ms=_marker_pt(m, p), mew=0.9 * p.line_width,
                        mfc=PALETTE["blue"] if filled else "white", mec=PALETTE["blue"], label=f"{m:g} $M_\\oplus$"))
    if "minimum" in used and "true" in used:
        h.append(Line2D([], [], marker="o", ls="none", mfc="white", mec=PALETTE["blue"], ms=_marker_pt(3, p),
                        label=r"open: $m\sin i$"))
    if "estimate" in used:
        h.append(Line2D([], [], marker="o", ls="none", mfc=PALETTE["sky_blue"], mec=PALETTE["blue"],
                        ms=_marker_pt(3, p), label="light: mass from radius"))
    if "unknown" in used:
        h.append(Line2D([], [], marker="o", ls="none", mfc="white", mec=GREY_EDGE, ms=_marker_pt(1, p),
                        label="no mass"))
    if "orbit" in used:
        h.append(Line2D([], [], color=PALETTE["sky_blue"], lw=2.0 * p.line_width, label=r"$a(1\pm e)$"))
    if "hill" in used:
        b = _Bracket()
        b.lw = 0.75 * p.line_width
        b.label = r"$a\pm R_\mathrm{H}$"
        h.append(b)
    for key in ("stable", "uncertain", "unstable", "unknown"):
        if key in used:
            st = VERDICT_STYLES[key]
            h.append(Line2D([], [], color=st["color"], ls=st["linestyle"], lw=1.4 * p.line_width,
                            label=st["label"]))
    if "shade" in used:
        h.append(Patch(color=SHADE, lw=0, label=shade_label))
    return h


def _legend_and_margins(fig, ax, p, used, height, masses, resize, shade_label):
    """One legend block under the axis, as few rows as the width allows; margins from measured text."""
    handles = _legend_handles(p, used, masses, shade_label)
    labels = [getattr(h, "label", None) or h.get_label() for h in handles]
    s = p.font_pt / 8.0
    W = p.width_in
    renderer = fig.canvas.get_renderer()
    common = dict(frameon=False, fontsize=p.small_pt - 1, handletextpad=0.4, borderaxespad=0.0,
                  columnspacing=1.0, handlelength=1.6, handler_map={_Bracket: _BracketHandler()})
    leg = None
    for ncol in range(len(handles), 0, -1):
        if leg is not None:
            leg.remove()
        leg = fig.legend(handles, labels, loc="lower center", ncol=ncol, bbox_to_anchor=(0.5, 0.0), **common)
        if leg.get_window_extent(renderer).width <= (W - 0.1) * fig.dpi:
            break
    leg_in = leg.get_window_extent(renderer).height / fig.dpi + 0.05
    axis_in = 0.36 * s                            # tick labels and the axis label
    fig.canvas.draw()
    ytl = [t.get_window_extent(renderer).width for t in ax.get_yticklabels() if t.get_text()]
    left_in = min((max(ytl) / fig.dpi if ytl else 0.2) + 0.12, 0.45 * W)   # a long name never eats the axes
    if resize:
        height = height + leg_in
        fig.set_size_inches(W, height)
    fig.subplots_adjust(left=left_in / W, right=1 - 0.1 / W, bottom=(axis_in + leg_in) / height,
                        top=1 - 0.05 / height)
    leg.set_bbox_to_anchor((0.5, 0.02 / height), transform=fig.transFigure)
