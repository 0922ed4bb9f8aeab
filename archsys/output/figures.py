"""Paper figures: corner plots, architecture diagram, period-ratio diagram.

Every plotting function returns a :class:`matplotlib.figure.Figure`, accepts
``fig=`` (an empty figure to draw into) and ``preset=`` (see
:mod:`archsys.output.style`), and never calls ``show()``.  Figures are drawn
with the Agg canvas (no display needed) and saved as PDF and PNG.

Corner plots use the ``corner`` library.  Their 2-D contours enclose 39.3 %
and 86.5 % of the draws: the 1-sigma and 2-sigma levels of a 2-D Gaussian,
``1 - exp(-x**2 / 2)`` for x = 1, 2 (not the 68 / 95 % of a 1-D interval).

References
----------
.. [1] Foreman-Mackey, D. 2016, JOSS 1, 24 ("corner.py: Scatterplot matrices in Python")
.. [2] Gladman, B. 1993, Icarus 106, 247 (Hill stability)
"""
from __future__ import annotations

import io
import math
import pathlib
from dataclasses import dataclass, field

import matplotlib
import matplotlib.ticker
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from ..errors import InputError
from ..physics.constants import MEARTH_MSUN
from .numbers import round_uncertain
from .style import (CYCLE, ORDER_STYLES, PALETTE, VERDICT_STYLES, get_preset, rc_params,
                    verdict_style)

__all__ = ["CornerParam", "FigureItem", "CONTOUR_LEVELS", "CONTOUR_NOTE", "planet_parameters",
           "system_parameters", "usable_parameters", "corner_figure", "architecture_figure",
           "period_ratio_figure", "resonances_between", "make_figures", "figure_files", "plot_saved"]

#: 2-D contour levels: 1 and 2 sigma of a 2-D Gaussian (39.3 %, 86.5 % of the draws).
CONTOUR_LEVELS = (1.0 - math.exp(-0.5), 1.0 - math.exp(-2.0))
CONTOUR_NOTE = ("Contours hold 39.3 % and 86.5 % of the draws (1σ, 2σ of a 2-D Gaussian); "
                "dashed lines: median and 68.3 % interval")
QUANTILES = (0.158655, 0.5, 0.841345)


@dataclass
class CornerParam:
    """One corner-plot parameter: mathtext symbol and unit, values in display units."""

    name: str               # e.g. "m_b"
    symbol: str             # mathtext without $, e.g. r"m_\mathrm{b}"
    unit: str               # mathtext without $, e.g. r"M_\oplus" ("" if none)
    values: np.ndarray
    log: bool = False       # draw on a log axis

    @property
    def label(self):
        sym = f"\\log_{{10}}\\,{self.symbol}" if self.log else self.symbol
        return f"${sym}$" if not self.unit else f"${sym}\\,[{self.unit}]$"

    def axis_label(self, two_lines=False):
        """The label, optionally with the unit on a second line (narrow corner panels)."""
        if not (two_lines and self.unit):
            return self.label
        sym = f"\\log_{{10}}\\,{self.symbol}" if self.log else self.symbol
        return f"${sym}$\n$[{self.unit}]$"

    def plotted(self):
        """Values on the plot axis: log10 of the values for a log parameter."""
        v = np.asarray(self.values, dtype=float)
        if not self.log:
            return v
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(v > 0, np.log10(np.where(v > 0, v, 1.0)), np.nan)


@dataclass
class FigureItem:
    """A drawn figure with its file stem and caption; PNG/PDF bytes are rendered once."""

    name: str
    figure: Figure
    caption: str
    preset: object = None
    _cache: dict = field(default_factory=dict, repr=False)

    def data(self, fmt):
        if fmt not in self._cache:
            self._cache[fmt] = _figure_bytes(self.figure, fmt, self.preset)
        return self._cache[fmt]


# --- helpers ---------------------------------------------------------------
def _new_figure(preset, height_in, fig=None):
    p = get_preset(preset)
    if fig is None:
        fig = Figure(figsize=(p.width_in, height_in))
    if fig.canvas is None or not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    return fig


def _figure_bytes(fig, fmt, preset=None):
    p = get_preset(preset)
    buf = io.BytesIO()
    meta = {"pdf": {"Creator": "archsys", "Producer": None, "CreationDate": None},
            "png": {"Software": None}}.get(fmt, {})
    with matplotlib.rc_context(rc_params(p)):
        fig.savefig(buf, format=fmt, dpi=p.dpi, metadata=meta)
    return buf.getvalue()


def _letter(name, system):
    name = str(name)
    if system and name.startswith(str(system)) and name != system:
        name = name[len(str(system)):].strip() or name
    return name


def _mathrm(s):
    s = "".join(ch for ch in s if ch.isalnum() or ch in " -") or "x"
    return "\\mathrm{" + s.replace(" ", "\\ ") + "}"


def _median(s):
    return None if not isinstance(s, dict) or s.get("median") is None else float(s["median"])


def _document(item):
    """(draws or None, document) of an Analysis, a document or a (draws, document) pair."""
    if isinstance(item, dict):
        return None, item
    if isinstance(item, tuple) and len(item) == 2:
        return item[0], item[1]
    doc = getattr(item, "document", None)
    if not isinstance(doc, dict):
        raise TypeError("expected an Analysis, a report document or a (draws, document) pair")
    post = getattr(item, "posterior", None)
    return getattr(post, "draws", None), doc


# --- corner parameters -----------------------------------------------------
def _col(draws, key, j=None):
    a = draws.get(key) if draws is not None else None
    if a is None:
        return None
    a = np.asarray(a, dtype=float)
    if j is None:
        return a if a.ndim == 1 else None
    return a[:, j] if a.ndim == 2 and j < a.shape[1] else None


#: A positive parameter whose 84th/16th percentile ratio exceeds this is shown as log10.
LOG_SPREAD = 5.0


def _spread(x):
    x = x[np.isfinite(x) & (x > 0)]
    if x.size < 10:
        return 1.0
    lo, hi = np.quantile(x, (0.16, 0.84))
    return hi / lo if lo > 0 else np.inf


def _compact_angle(deg):
    """Angles in [0, 360) or [-180, 180), whichever gives the narrower 68 % interval."""
    a = np.asarray(deg, dtype=float) % 360.0
    b = (a + 180.0) % 360.0 - 180.0
    fa, fb = a[np.isfinite(a)], b[np.isfinite(b)]
    if fa.size < 10:
        return a
    wa = np.diff(np.quantile(fa, (0.158655, 0.841345)))[0]
    wb = np.diff(np.quantile(fb, (0.158655, 0.841345)))[0]
    return b if wb < wa else a


def planet_parameters(draws, document, j):
    """Corner parameters of planet ``j``: e, ω, i (sky), ψ (tilt), mass (or m sin i).

    Only quantities the document reports for this planet are included (e.g. no
    ω for an orbit assumed circular, where ω is meaningless).
    """
    pl = document["planets"][j]
    x = _mathrm(_letter(pl["name"], document.get("system")))
    out = []
    e = _col(draws, "ecc", j)
    if "ecc" in pl and e is not None:
        out.append(CornerParam(f"e_{j}", f"e_{{{x}}}", "", e))
    w = _col(draws, "omega", j)
    if "omega_deg" in pl and w is not None:
        out.append(CornerParam(f"omega_{j}", f"\\omega_{{{x}}}", "^\\circ", _compact_angle(np.degrees(w))))
    inc = _col(draws, "inc", j)
    if "inclination_deg" in pl and inc is not None:
        v = np.degrees(inc)
        out.append(CornerParam(f"inc_{j}", f"i_{{{x}}}", "^\\circ", v, log=_spread(v) > LOG_SPREAD))
    psi = _col(draws, "psi", j)
    if psi is not None and np.isfinite(psi).any():
        v = np.degrees(psi)
        out.append(CornerParam(f"psi_{j}", f"\\psi_{{{x}}}", "^\\circ", v, log=_spread(v) > LOG_SPREAD))
    m, ms = _col(draws, "mass", j), _col(draws, "msini", j)
    if "mass_mearth" in pl and m is not None:
        v = m / MEARTH_MSUN
        out.append(CornerParam(f"mass_{j}", f"m_{{{x}}}", "M_\\oplus", v, log=_spread(v) > LOG_SPREAD))
    elif "msini_mearth" in pl and ms is not None:
        v = ms / MEARTH_MSUN
        out.append(CornerParam(f"msini_{j}", f"m_{{{x}}}\\sin i", "M_\\oplus", v, log=_spread(v) > LOG_SPREAD))
    return out


def _mutual_inclination(i1, i2, n1, n2):
    """Angle between two orbit normals from inclinations and nodes on the same plane (rad)."""
    c = np.cos(i1) * np.cos(i2) + np.sin(i1) * np.sin(i2) * np.cos(n1 - n2)
    return np.arccos(np.clip(c, -1.0, 1.0))


def system_parameters(draws, document):
    """System corner parameters: σ (mutual-inclination dispersion), adjacent mutual
    inclinations Φ (where sky inclinations and nodes are both known) and masses."""
    out = []
    sig = _col(draws, "sigma_mutual")
    if sig is not None and np.isfinite(sig).any():
        out.append(CornerParam("sigma_mutual", "\\sigma_\\mathrm{mut}", "^\\circ", np.degrees(sig),
                               log=_spread(np.degrees(sig)) > LOG_SPREAD))
    planets = document.get("planets", [])
    sysname = document.get("system")
    for j in range(len(planets) - 1):
        i1, i2 = _col(draws, "inc", j), _col(draws, "inc", j + 1)
        n1, n2 = _col(draws, "node", j), _col(draws, "node", j + 1)
        if any(a is None for a in (i1, i2, n1, n2)):
            continue
        ok = np.isfinite(i1) & np.isfinite(i2) & np.isfinite(n1) & np.isfinite(n2)
        if not ok.any():
            continue
        phi = np.full(i1.shape, np.nan)
        phi[ok] = np.degrees(_mutual_inclination(i1[ok], i2[ok], n1[ok], n2[ok]))
        x1 = _letter(planets[j]["name"], sysname)
        x2 = _letter(planets[j + 1]["name"], sysname)
        out.append(CornerParam(f"imut_{j}", f"\\Phi_{{{_mathrm(x1 + x2)}}}", "^\\circ", phi,
                               log=_spread(phi) > LOG_SPREAD))
    for j, pl in enumerate(planets):
        for p in planet_parameters(draws, document, j):
            if p.name.startswith(("mass_", "msini_")):
                out.append(p)
    return out


def usable_parameters(params):
    """(kept, skipped): drop parameters with no finite draws or no dynamic range.

    ``corner`` cannot draw a parameter whose draws are all equal; such
    parameters are skipped and listed as ``(label, reason)``.
    """
    kept, skipped = [], []
    for p in params:
        v = np.asarray(p.values, dtype=float)
        fin = v[np.isfinite(v)]
        if fin.size == 0:
            skipped.append((p.label, "no finite draws"))
        elif fin.size < 0.5 * v.size:
            skipped.append((p.label, "undefined in most draws"))
        elif np.ptp(fin) <= 1e-12 * max(1.0, abs(fin[0])):
            skipped.append((p.label, f"constant ({fin[0]:.4g})"))
        else:
            if p.log and not (fin > 0).all():
                p = CornerParam(p.name, p.symbol, p.unit, p.values, log=False)
            kept.append(p)
    return kept, skipped


def _value_line(p, x):
    lo, med, hi = np.quantile(x, QUANTILES)
    v, m, s = round_uncertain(med, med - lo, hi - med)
    unit = "\\,\\mathrm{deg}" if p.unit == "^\\circ" else (f"\\,{p.unit}" if p.unit else "")
    err = f"\\pm{s}" if m == s else f"^{{+{s}}}_{{-{m}}}"
    return f"${p.symbol} = {v}{err}{unit}$"


def _to_axis(v, log):
    if v is None:
        return None
    return math.log10(v) if log and v > 0 else (None if log else v)


def _prior_curve(prior, lo, hi, log=False):
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


def corner_figure(params, truths=None, priors=None, preset=None, fig=None, title=None):
    """Corner plot of ``params`` (list of :class:`CornerParam`).

    Parameters
    ----------
    params : list of CornerParam
        Constant or undefined parameters are skipped (listed in the figure).
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
    data = np.column_stack([q.plotted() for q in kept])
    ok = np.all(np.isfinite(data), axis=1)
    data = data[ok]
    linear = np.column_stack([np.asarray(q.values, dtype=float) for q in kept])[ok]
    if data.shape[0] < 10:
        raise InputError(f"corner plot: only {data.shape[0]} draws have every parameter defined")
    rng_ = []
    for k, q in enumerate(kept):
        lo, hi = np.quantile(data[:, k], (0.001, 0.999))
        if hi <= lo:
            lo, hi = data[:, k].min(), data[:, k].max()
        pad = 0.02 * (hi - lo)
        rng_.append((lo - pad, hi + pad))
    bins = int(np.clip(np.sqrt(data.shape[0]) / 2.2, 10, 30))
    panel_in = p.width_in / K
    two = panel_in < 1.0 and any(q.unit for q in kept)      # unit on its own line in narrow panels
    label_pt = p.font_pt if panel_in >= 0.8 else max(p.small_pt - 0.5, p.font_pt - 1.5)
    with matplotlib.rc_context(rc_params(p)):
        rc_minor = {"xtick.minor.visible": False, "ytick.minor.visible": False}
        with matplotlib.rc_context(rc_minor):
            fig = _new_figure(p, p.width_in, fig)
            tv = None
            if truths:
                tv = [_to_axis(truths.get(q.name), q.log) for q in kept]
            corner.corner(
                data, fig=fig, labels=[q.axis_label(two) for q in kept], range=rng_, bins=bins,
                levels=CONTOUR_LEVELS, quantiles=list(QUANTILES), color=PALETTE["blue"],
                truths=tv, truth_color=PALETTE["vermillion"], max_n_ticks=3, plot_datapoints=True,
                data_kwargs={"ms": 1.0, "alpha": 0.25, "color": "#555555"},
                pcolor_kwargs={"rasterized": True},
                contour_kwargs={"linewidths": 0.8 * p.line_width},
                hist_kwargs={"density": True, "linewidth": 0.9 * p.line_width},
                label_kwargs={"fontsize": label_pt, "linespacing": 1.1}, labelpad=0.0, use_math_text=True)
        axes = np.array(fig.axes).reshape(K, K)
        _layout_corner(fig, axes, p, K, two)
        if priors:
            for k, q in enumerate(kept):
                if q.name in priors and priors[q.name] is not None:
                    ax = axes[k, k]
                    lo, hi = ax.get_xlim()
                    xs, ys = _prior_curve(priors[q.name], lo, hi, q.log)
                    ok = np.isfinite(ys)
                    ax.plot(xs[ok], ys[ok], color=PALETTE["orange"], ls=(0, (3, 1.5)), lw=0.9 * p.line_width)
                    top = ax.get_ylim()[1]
                    peak = np.nanmax(ys[ok]) if ok.any() else 0.0
                    ax.set_ylim(0, max(top, min(1.05 * peak, 3 * top)))
        _corner_legend(fig, axes, kept, linear, skipped, p, title, bool(truths), bool(priors))
    return fig


class _InnerTicks(matplotlib.ticker.MaxNLocator):
    """MaxNLocator without ticks in the outer 7 % of the axis, so labels of
    neighbouring corner panels never touch."""

    def __call__(self):
        lo, hi = sorted(self.axis.get_view_interval())
        m = 0.07 * (hi - lo)
        return [t for t in super().__call__() if lo + m <= t <= hi - m]


def _layout_corner(fig, axes, p, K, two_lines=False):
    """Margins, tick density and label positions sized for the preset (corner's own assume 2 in panels)."""
    w = fig.get_size_inches()[0]
    extra = 0.09 if two_lines else 0.0
    left = ((0.62 + extra) if K > 1 else 0.30) * p.font_pt / 8.0
    bottom = (0.55 + extra) * p.font_pt / 8.0
    top = 0.08 if K > 1 else 0.40 * p.font_pt / 8.0          # K = 1: room for the title line
    fig.subplots_adjust(left=left / w, bottom=bottom / w, right=1 - 0.08 / w, top=1 - top / w,
                        wspace=0.06, hspace=0.06)
    n_ticks = 3 if K > 2 else 4
    for k in range(K):
        for r in range(k, K):               # column k shares parameter k on x
            axes[r, k].xaxis.set_major_locator(_InnerTicks(n_ticks))
        for c in range(k):                  # row k shows parameter k on y
            axes[k, c].yaxis.set_major_locator(_InnerTicks(n_ticks))
    for ax in fig.axes:
        ax.tick_params(labelsize=p.small_pt - (1 if K > 3 else 0), length=2.0, width=p.axes_width,
                       pad=1.5, direction="in", top=True, right=True)
    panel_in = (w - left - 0.08) / K
    off = -0.33 * p.font_pt / 8.0 / panel_in
    for k in range(K):
        axes[K - 1, k].xaxis.set_label_coords(0.5, off)
        for lab in axes[K - 1, k].get_xticklabels():
            lab.set_rotation(45)
            lab.set_horizontalalignment("right")
            lab.set_rotation_mode("anchor")
        if k > 0:
            axes[k, 0].yaxis.set_label_coords(off, 0.5)
            for lab in axes[k, 0].get_yticklabels():
                lab.set_rotation(0)
                lab.set_verticalalignment("center")


def _corner_legend(fig, axes, kept, data, skipped, p, title, truths, priors):
    """Summary values, then the meaning of the lines and contours, in the empty upper triangle."""
    K = len(kept)
    values = ([title] if title else []) + [_value_line(q, data[:, k]) for k, q in enumerate(kept)]
    note = ["contours: 39.3 %, 86.5 % of draws", "(1σ, 2σ of a 2-D Gaussian)",
            "dashed: median, 68.3 % interval"]
    if truths:
        note.append("solid vermillion: true value")
    if priors:
        note.append("dashed orange: prior")
    for lab, why in skipped:
        note.append(f"skipped {lab}: {why}")
    if K == 1:
        ax = axes if not isinstance(axes, np.ndarray) else axes.flat[0]
        ax.set_title(values[-1], fontsize=p.small_pt, loc="left")
        ax.set_title("\n".join(note[2:]), fontsize=p.small_pt - 1, loc="right", color="#333333")
        return
    box = axes[0, K - 1].get_position()
    x0, y0 = box.x1, box.y1
    size = p.small_pt if K > 2 else p.small_pt - 0.5
    t = fig.text(x0, y0, "\n".join(values), ha="right", va="top", fontsize=size, linespacing=1.45)
    fig.canvas.draw()
    ext = t.get_window_extent().transformed(fig.transFigure.inverted())
    fig.text(x0, ext.y0 - 0.012, "\n".join(note), ha="right", va="top", fontsize=size - 1,
             color="#333333", linespacing=1.3)


# --- architecture diagram ---------------------------------------------------
def _marker_pt(mass_mearth, p):
    """Marker diameter (points): logarithmic in mass, so 1 to 10^4 M_earth stay readable."""
    scale = p.font_pt / 8.0
    return scale * (2.5 + 3.2 * math.log10(1.0 + max(mass_mearth, 0.0)))


def _planet_mass(pl):
    m = _median(pl.get("mass_mearth"))
    if m is not None:
        return m, "true"
    m = _median(pl.get("msini_mearth"))
    if m is not None:
        return m, "minimum"
    return None, "unknown"


def architecture_figure(results, preset=None, fig=None):
    """Architecture of one or more systems, stacked top to bottom for comparison.

    Each planet sits at its semi-major axis ``a`` (log axis); a horizontal bar
    spans periapsis to apoapsis ``a (1 - e)`` to ``a (1 + e)``; a grey box marks
    ``a ± R_H`` with ``R_H = a (m / 3 M_star)^(1/3)``; the marker size grows with
    the mass (filled: true mass, open: minimum mass).  The segment under each
    adjacent pair shows its Hill-stability verdict (Gladman 1993) by colour
    *and* line style.

    ``results``: list of Analysis objects, report documents or (draws, document) pairs.
    """
    docs = [_document(r)[1] for r in (results if isinstance(results, (list, tuple)) and not
                                      (isinstance(results, tuple) and len(results) == 2 and isinstance(results[1], dict))
                                      else [results])]
    if not docs:
        raise InputError("architecture figure: no systems given")
    p = get_preset(preset)
    n = len(docs)
    row_in = 0.55 * p.font_pt / 8.0
    height = n * row_in + 0.55 * p.font_pt / 8.0
    with matplotlib.rc_context(rc_params(p)):
        resize = fig is None
        fig = _new_figure(p, height, fig)
        if not resize:
            height = fig.get_size_inches()[1]
        ax = fig.add_subplot(111)
        xs = []
        used = set()
        masses = []
        for i, doc in enumerate(docs):
            y = n - 1 - i
            mstar = _median((doc.get("star") or {}).get("mass_msun")) or 1.0
            planets = doc.get("planets", [])
            pos = []
            for pl in planets:
                a = _median(pl.get("a_au"))
                if a is None:
                    pos.append(None)
                    continue
                e = _median(pl.get("ecc")) or 0.0
                m, basis = _planet_mass(pl)
                pos.append(a)
                xs += [a * (1 - e), a * (1 + e)]
                if m is not None:
                    rh = a * (m * MEARTH_MSUN / (3.0 * mstar)) ** (1.0 / 3.0)
                    yh = y - 0.17
                    ax.plot([a - rh, a - rh, a + rh, a + rh], [yh + 0.05, yh, yh, yh + 0.05], color=HILL_GREY,
                            lw=0.8 * p.line_width, solid_joinstyle="miter", zorder=3)
                    xs += [a - rh, a + rh]
                    used.add("hill")
                if e > 0:
                    ax.plot([a * (1 - e), a * (1 + e)], [y, y], color=PALETTE["sky_blue"],
                            lw=2.2 * p.line_width, solid_capstyle="butt", zorder=2)
                    used.add("orbit")
                d = _marker_pt(m if m is not None else 1.0, p)
                face = {"true": PALETTE["blue"], "minimum": "white", "unknown": "white"}[basis]
                edge = GREY_EDGE if basis == "unknown" else PALETTE["blue"]
                ax.plot([a], [y], marker="o", ms=d, mfc=face, mec=edge, mew=0.9 * p.line_width,
                        ls="none", zorder=4)
                used.add(basis)
                if m is not None:
                    masses.append(m)
                ax.annotate(_letter(pl["name"], doc.get("system")), (a, y), xytext=(0, 0.5 * d + 1.5),
                            textcoords="offset points", ha="center", va="bottom", fontsize=p.small_pt - 1,
                            zorder=5)
            for q_i, q in enumerate(doc.get("pairs", []) or []):
                if q_i + 1 >= len(pos) or pos[q_i] is None or pos[q_i + 1] is None:
                    continue
                key = verdict_style(q.get("hill_stable_probability"))
                st = VERDICT_STYLES[key]
                x1, x2 = pos[q_i], pos[q_i + 1]
                gap = (x2 / x1) ** 0.08            # leave a visible gap between neighbouring pairs
                ax.plot([x1 * gap, x2 / gap], [y - 0.34, y - 0.34], color=st["color"], ls=st["linestyle"],
                        lw=1.5 * p.line_width, solid_capstyle="butt", zorder=3)
                used.add(key)
        xs = np.array([x for x in xs if x > 0])
        lo, hi = xs.min(), xs.max()
        span = max(np.log10(hi / lo), 0.3)
        ax.set_xscale("log")
        ax.set_xlim(lo / 10 ** (0.08 * span), hi * 10 ** (0.08 * span))
        ax.set_ylim(-0.55, n - 0.5)
        ax.set_yticks(range(n))
        ax.set_yticklabels([d.get("system", "?") for d in docs][::-1])
        ax.tick_params(axis="y", which="both", length=0, right=False)
        ax.minorticks_on()
        ax.yaxis.set_minor_locator(matplotlib.ticker.NullLocator())
        ax.xaxis.set_major_formatter(matplotlib.ticker.FuncFormatter(_plain_tick))
        if hi / lo < 30:
            ax.xaxis.set_minor_formatter(matplotlib.ticker.FuncFormatter(_minor_tick))
        ax.set_xlabel(r"semi-major axis $a$ [au]")
        for yy in np.arange(0.5, n - 0.5):
            ax.axhline(yy, color="#bbbbbb", lw=0.5, zorder=0)
        _architecture_legend(fig, ax, p, used, height, masses, resize)
    return fig


GREY_EDGE = "#777777"
HILL_GREY = "#4d4d4d"


def _plain_tick(v, _pos=None):
    """0.04, 0.1, 1, 10: plain decimals instead of 4x10^-2 on log axes."""
    if v <= 0:
        return ""
    dec = max(0, -int(math.floor(math.log10(v) + 1e-9)))
    return f"{v:.{dec}f}"


def _minor_tick(v, _pos=None):
    """Label minor ticks 2x and 5x a power of ten (narrow log ranges)."""
    mant = v / 10 ** math.floor(math.log10(v) + 1e-9)
    return _plain_tick(v) if round(mant) in (2, 5) and abs(mant - round(mant)) < 1e-6 else ""


def _architecture_legend(fig, ax, p, used, height, used_masses=(), resize=True):
    h = []
    if "true" in used:
        h.append(Line2D([], [], marker="o", ls="none", mfc=PALETTE["blue"], mec=PALETTE["blue"], ms=5,
                        label="true mass"))
    if "minimum" in used:
        h.append(Line2D([], [], marker="o", ls="none", mfc="white", mec=PALETTE["blue"], ms=5,
                        label=r"$m\,\sin i$ only"))
    if "unknown" in used:
        h.append(Line2D([], [], marker="o", ls="none", mfc="white", mec=GREY_EDGE, ms=5, label="mass unknown"))
    if "orbit" in used:
        h.append(Line2D([], [], color=PALETTE["sky_blue"], lw=2.2 * p.line_width, label=r"$a(1\pm e)$"))
    if "hill" in used:
        h.append(Line2D([], [], color=HILL_GREY, lw=0.8 * p.line_width, label=r"$a\pm R_\mathrm{H}$"))
    for key in ("stable", "uncertain", "unstable", "unknown"):
        if key in used:
            st = VERDICT_STYLES[key]
            h.append(Line2D([], [], color=st["color"], ls=st["linestyle"], lw=1.5 * p.line_width,
                            label=st["label"]))
    masses = sorted(used_masses) or [1.0]
    decades = (1, 10, 100, 1000, 10000)
    sizes = [m for m in decades if masses[0] / 4 <= m <= masses[-1] * 4]
    while len(sizes) < 3 and (not sizes or sizes[0] > 1):     # at least three references to compare with
        sizes.insert(0, sizes[0] // 10 if sizes else 1)
    hs = [Line2D([], [], marker="o", ls="none", mfc="#bbbbbb", mec="#bbbbbb", ms=_marker_pt(m, p),
                 label=f"{m:g} $M_\\oplus$") for m in sizes]
    ncol = 3 if p.width_in < 5 else 6
    row_pt = 1.45 * p.small_pt
    size_pt = max(row_pt, 1.15 * _marker_pt(sizes[-1], p))
    leg_in = (math.ceil(len(h) / ncol) * row_pt + size_pt) / 72.0 + 0.08
    bottom_in = 0.42 * p.font_pt / 8.0 + leg_in
    left_in = 0.78 * p.font_pt / 8.0
    if resize:
        height = height + leg_in
        fig.set_size_inches(p.width_in, height)
    fig.subplots_adjust(left=left_in / p.width_in, right=1 - 0.1 / p.width_in,
                        bottom=bottom_in / height, top=1 - 0.08 / height)
    xc = 0.5 + 0.5 * left_in / p.width_in - 0.05 / p.width_in
    common = dict(frameon=False, fontsize=p.small_pt - 1, handletextpad=0.4, borderaxespad=0.0,
                  columnspacing=1.2)
    leg = fig.legend(handles=h, loc="lower center", ncol=ncol, handlelength=1.8,
                     bbox_to_anchor=(xc, (size_pt + 4) / 72.0 / height), **common)
    fig.add_artist(leg)
    fig.legend(handles=hs, loc="lower center", ncol=len(hs), handlelength=max(1.0, 0.8 * size_pt / p.small_pt),
               bbox_to_anchor=(xc, 0.02 / height), title=None, **common)


# --- period ratios ----------------------------------------------------------
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
    docs = [_document(r)[1] for r in items]
    rows = []
    for si, doc in enumerate(docs):
        for q in doc.get("pairs", []) or []:
            s = q.get("period_ratio")
            if _median(s) is None:
                continue
            name = f"{_letter(q['inner'], doc.get('system'))}–{_letter(q['outer'], doc.get('system'))}"
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
        fig = _new_figure(p, height, fig)
        height = fig.get_size_inches()[1]
        top_in = 0.42 * p.font_pt / 8.0
        bottom_in = 0.40 * p.font_pt / 8.0
        multi = len(docs) > 1
        left_in = (1.15 if multi else 0.55) * p.font_pt / 8.0
        fig.subplots_adjust(left=left_in / p.width_in, right=1 - 0.1 / p.width_in,
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


# --- the figure set of one analysis ------------------------------------------
def _document_priors(document):
    """Prior overlays {parameter name: Prior} from the priors recorded in the document (MCMC runs)."""
    rec = (document.get("provenance") or {}).get("priors") or {}
    if not rec:
        return None
    from ..inference.priors import load_prior
    out = {}
    try:
        ecc = rec.get("eccentricity", {}).get("name")
        if ecc:
            pr = load_prior(ecc)
            for j, pl in enumerate(document.get("planets", [])):
                if "fixed" not in str(pl.get("ecc_basis", "")):
                    out[f"e_{j}"] = pr
        sig = rec.get("mutual_inclination_sigma", {}).get("name")
        if sig:
            out["sigma_mutual"] = load_prior(sig)      # degrees, as plotted
    except Exception:  # a user prior file that moved since the run: draw no overlay
        return None
    return out or None


def make_figures(draws, document, preset=None, truths=None, priors=None):
    """All figures of one analysis as a list of :class:`FigureItem`.

    ``draws`` may be None (document only): then only the architecture and
    period-ratio figures are drawn.
    """
    p = get_preset(preset)
    name = document.get("system", "system")
    if priors is None:
        priors = _document_priors(document)
    items = [FigureItem("architecture", architecture_figure([document], preset=p),
                        f"Architecture of {name}: planets at their semi-major axes; bars a(1±e); brackets "
                        "a ± R_H (Hill radius); marker size grows with mass (open: minimum mass); segments: Hill-stability "
                        "verdict of each adjacent pair (Gladman 1993).", p)]
    if document.get("pairs"):
        items.append(FigureItem("period_ratios", period_ratio_figure([document], preset=p),
                                f"Adjacent period ratios of {name} (median and 68.3 % interval) with first-, "
                                "second- and third-order mean-motion resonances.", p))
    if draws is None:
        return items
    sets = [("system", system_parameters(draws, document), f"{name}: system parameters")]
    from .files import unique_stems
    letters, _ = unique_stems([_letter(pl["name"], name) for pl in document.get("planets", [])],
                              fallback="planet", reserved=("system",))   # "b/1" vs "b_1"; never "system"
    for j, pl in enumerate(document.get("planets", [])):
        sets.append((f"corner_{letters[j]}", planet_parameters(draws, document, j), pl["name"]))
    for key, params, label in sets:
        kept, skipped = usable_parameters(params)
        if len(kept) < 2:
            continue
        fig = corner_figure(kept, truths=truths, priors=priors, preset=p)
        fname = "corner_system" if key == "system" else key
        cap = (f"Posterior of {label}: " + ", ".join(_plain(q) for q in kept) + ". " + CONTOUR_NOTE + ".")
        if any(q.name.startswith("imut_") for q in kept):
            cap += " Φ: mutual inclination of adjacent orbits, from sky inclinations and nodes."
        if any(q.log for q in kept):
            cap += " Parameters spanning a wide range are shown as log10."
        if skipped:
            cap += " Skipped: " + ", ".join(f"{_plain_label(a)} ({b})" for a, b in skipped) + "."
        items.append(FigureItem(fname, fig, cap, p))
    return items


def _plain_label(label):
    label = label.replace("M_\\oplus", "M⊕").replace("\\log_{10}\\,", "log10 ").replace("\\Phi", "Φ")
    label = label.replace("\\oplus", "⊕").replace("^\\circ", "°").replace("\\sigma", "σ").replace(
        "\\omega", "ω").replace("\\psi", "ψ").replace("\\sin", "sin")
    return (label.replace("$", "").replace("\\mathrm", "").replace("\\,", " ").replace("\\", "")
            .replace("{", "").replace("}", ""))


def _plain(q):
    return _plain_label(q.label)


def figure_files(figures, stem):
    """{file name: bytes} of every figure as PDF and PNG, rendered in memory."""
    out = {}
    for f in figures:
        for fmt in ("pdf", "png"):
            out[f"{stem}_{f.name}.{fmt}"] = f.data(fmt)
    return out


def plot_saved(result_path, fig_dir, preset=None):
    """Redraw the figures of a saved chains file (``.npz``) into ``fig_dir``; no resampling.

    Returns the list of written paths.
    """
    from .chains import load_posterior
    from .files import atomic_write, safe_name

    draws, meta = load_posterior(result_path)
    doc = meta.get("document") or {}
    if not doc.get("planets"):
        raise InputError("chains file has no report document to label the figures", source=str(result_path))
    figs = make_figures(draws, doc, preset=preset)
    blobs = figure_files(figs, safe_name(doc.get("system", "system")))
    out = pathlib.Path(fig_dir)
    if out.exists() and not out.is_dir():
        raise InputError(f"figure folder {str(out)!r} exists and is not a folder")
    return [atomic_write(out / name, data, mode="wb") for name, data in blobs.items()]
