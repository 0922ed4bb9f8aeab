"""What every archsys figure shares: Figure objects on an Agg canvas, file bytes,
name helpers, tick formatters and the text-overlap measurement.

No pyplot and no global backend: every figure is a :class:`matplotlib.figure.Figure`
with its own :class:`~matplotlib.backends.backend_agg.FigureCanvasAgg`, drawn
inside ``matplotlib.rc_context(rc_params(preset))`` so the house style never
leaks into the caller's matplotlib settings.
"""
from __future__ import annotations

import io
import math
from dataclasses import dataclass, field

import matplotlib
import matplotlib.ticker
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from ..style import get_preset, rc_params

__all__ = ["FigureItem", "new_figure", "figure_bytes", "text_boxes", "text_overlaps", "leaves_canvas", "layout_problems",
           "overlaps_axes", "plain_tick", "minor_tick", "documents_of"]


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
            self._cache[fmt] = figure_bytes(self.figure, fmt, self.preset)
        return self._cache[fmt]


def new_figure(preset, height_in, fig=None, width_in=None):
    """A Figure of the preset's width (or ``width_in``) and ``height_in``, on an Agg canvas."""
    p = get_preset(preset)
    if fig is None:
        fig = Figure(figsize=(width_in or p.width_in, height_in))
    if fig.canvas is None or not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    return fig


def figure_bytes(fig, fmt, preset=None):
    """PDF or PNG bytes of ``fig`` at the preset's resolution, without creation dates."""
    p = get_preset(preset)
    buf = io.BytesIO()
    meta = {"pdf": {"Creator": "archsys", "Producer": None, "CreationDate": None},
            "png": {"Software": None}}.get(fmt, {})
    with matplotlib.rc_context(rc_params(p)):
        fig.savefig(buf, format=fmt, dpi=p.dpi, metadata=meta)
    return buf.getvalue()


# --- names -------------------------------------------------------------------
def letter(name, system):
    """'Velmora b' -> 'b' inside system 'Velmora'."""
    name = str(name)
    if system and name.startswith(str(system)) and name != system:
        name = name[len(str(system)):].strip() or name
    return name


def mathrm(s):
    s = "".join(ch for ch in s if ch.isalnum() or ch in " -") or "x"
    return "\\mathrm{" + s.replace(" ", "\\ ") + "}"


def median(s):
    return None if not isinstance(s, dict) or s.get("median") is None else float(s["median"])


def document_of(item):
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


def documents_of(results):
    """Report documents of one result or a list of them."""
    single = not isinstance(results, (list, tuple)) or (
        isinstance(results, tuple) and len(results) == 2 and isinstance(results[1], dict))
    return [document_of(r)[1] for r in ([results] if single else results)]


# --- ticks -------------------------------------------------------------------
def plain_tick(v, _pos=None):
    """0.04, 0.1, 1, 10: plain decimals instead of 4x10^-2 on log axes."""
    if v <= 0:
        return ""
    dec = max(0, -int(math.floor(math.log10(v) + 1e-9)))
    return f"{v:.{dec}f}"


def minor_tick(v, _pos=None):
    """Label minor ticks 2x and 5x a power of ten (narrow log ranges)."""
    mant = v / 10 ** math.floor(math.log10(v) + 1e-9)
    return plain_tick(v) if round(mant) in (2, 5) and abs(mant - round(mant)) < 1e-6 else ""


def log_axis_ticks(axis, lo, hi, max_labels=6):
    """Plain-decimal ticks on a log axis from ``lo`` to ``hi``; labelled minor ticks only where few majors.

    Candidates are 1, 2, 5 times powers of ten; only as many as ``max_labels``
    are labelled, so labels of a narrow axis never run together.
    """
    cands = []
    for e in range(int(math.floor(math.log10(lo))) - 1, int(math.ceil(math.log10(hi))) + 1):
        for m in (1, 2, 3, 5):
            v = m * 10.0 ** e
            if lo <= v <= hi:
                cands.append((m, v))
    if hi / lo < 10:
        cands = []
        for e in range(int(math.floor(math.log10(lo))) - 1, int(math.ceil(math.log10(hi))) + 1):
            cands += [(m, m * 10.0 ** e) for m in range(1, 10) if lo <= m * 10.0 ** e <= hi]
    for keep in ((1, 2, 3, 4, 5, 6, 7, 8, 9), (1, 2, 3, 4, 5, 6, 8), (1, 2, 3, 5), (1, 2, 5), (1, 3), (1,)):
        major = [v for m, v in cands if m in keep]
        if 2 <= len(major) <= max_labels or keep == (1,):
            break
    if len(major) > max_labels:                     # many decades: every other power of ten
        step = math.ceil(len(major) / max_labels)
        major = major[::step]
    axis.set_major_locator(matplotlib.ticker.FixedLocator(major))
    axis.set_major_formatter(matplotlib.ticker.FuncFormatter(plain_tick))
    axis.set_minor_locator(matplotlib.ticker.LogLocator(subs=np.arange(2, 10)))
    axis.set_minor_formatter(matplotlib.ticker.NullFormatter())


# --- layout measurement -------------------------------------------------------
def _visible_ticklabels(ax, axis):
    lo, hi = sorted(axis.get_view_interval())
    span = hi - lo
    out = []
    for which in ("major", "minor"):
        ticks = axis.get_major_ticks() if which == "major" else axis.get_minor_ticks()
        locs = axis.get_majorticklocs() if which == "major" else axis.get_minorticklocs()
        for tick, loc in zip(ticks, locs):
            if not (lo - 1e-9 * span <= loc <= hi + 1e-9 * span):
                continue
            for lab in (tick.label1, tick.label2):
                if lab.get_visible() and lab.get_text().strip():
                    out.append(lab)
    return out


def text_boxes(fig):
    """[(description, Bbox in pixels)] of every visible, non-empty text of ``fig`` after a draw.

    Tick labels (major and minor, inside the view), axis labels, titles, axes
    and figure texts, annotations and legend texts.
    """
    if not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    texts = []
    for ax in fig.axes:
        if not ax.get_visible():
            continue
        for axis in (ax.xaxis, ax.yaxis):
            texts += [("tick", t) for t in _visible_ticklabels(ax, axis)]
            if axis.label.get_visible() and axis.label.get_text().strip():
                texts.append(("axis label", axis.label))
        for t in (ax.title, ax._left_title, ax._right_title):
            if t.get_visible() and t.get_text().strip():
                texts.append(("title", t))
        texts += [("text", t) for t in ax.texts if t.get_visible() and t.get_text().strip()]
        leg = ax.get_legend()
        if leg is not None:
            texts += [("legend", t) for t in leg.get_texts() if t.get_text().strip()]
    for t in fig.texts:
        if t.get_visible() and t.get_text().strip():
            texts.append(("figure text", t))
    for leg in fig.legends:
        texts += [("legend", t) for t in leg.get_texts() if t.get_text().strip()]
        if leg.get_title().get_text().strip():
            texts.append(("legend", leg.get_title()))
    return [(f"{kind} {t.get_text()!r}", t.get_window_extent(renderer)) for kind, t in texts]


def text_overlaps(fig, tol_px=0.5):
    """Pairs of text descriptions whose bounding boxes overlap by more than ``tol_px`` both ways.

    Measured with the figure's own renderer (``fig.canvas.get_renderer()``,
    ``Text.get_window_extent``), i.e. as the text is drawn in the file.  Also
    lists texts that stick out of the figure.
    """
    boxes = text_boxes(fig)
    out = []
    W, H = fig.bbox.width, fig.bbox.height
    for i, (a, ba) in enumerate(boxes):
        if ba.x0 < -tol_px or ba.y0 < -tol_px or ba.x1 > W + tol_px or ba.y1 > H + tol_px:
            out.append((a, "outside the figure"))
        for b, bb in boxes[i + 1:]:
            w = min(ba.x1, bb.x1) - max(ba.x0, bb.x0)
            h = min(ba.y1, bb.y1) - max(ba.y0, bb.y0)
            if w > tol_px and h > tol_px:
                out.append((a, b))
    return out


def leaves_canvas(fig, tol_px=0.5):
    """Descriptions of texts and artists drawn (partly) outside the figure: every text (as in
    :func:`text_overlaps`), each axes with its tick labels, axis labels and title
    (``Axes.get_tightbbox``), and each legend — so a clipped axis label or a legend pushed off
    the canvas is found."""
    boxes = text_boxes(fig)
    renderer = fig.canvas.get_renderer()
    W, H = fig.bbox.width, fig.bbox.height

    def out(bb):
        return bb is not None and (bb.x0 < -tol_px or bb.y0 < -tol_px or bb.x1 > W + tol_px or bb.y1 > H + tol_px)

    found = [f"text {desc!s:.40}" for desc, bb in boxes if out(bb)]
    for k, ax in enumerate(fig.axes):
        if ax.get_visible() and out(ax.get_tightbbox(renderer)):
            found.append(f"axes {k} ({ax.get_xlabel()[:20]!r} / {ax.get_ylabel()[:20]!r})")
        leg = ax.get_legend()
        if leg is not None and leg.get_visible() and out(leg.get_window_extent(renderer)):
            found.append(f"legend of axes {k}")
    for leg in fig.legends:
        if leg.get_visible() and out(leg.get_window_extent(renderer)):
            found.append("figure legend")
    return found


def layout_problems(fig, max_height_in=None):
    """Everything the layout test refuses: overlapping texts, anything outside the canvas, and a
    figure taller than ``max_height_in`` (a preset's page or slide height)."""
    problems = [f"{a!s:.40} overlaps {b!s:.40}" for a, b in text_overlaps(fig) if b != "outside the figure"]
    problems += [f"{x} leaves the canvas" for x in leaves_canvas(fig)]
    if max_height_in is not None and fig.get_size_inches()[1] > max_height_in + 1e-9:
        problems.append(f"{fig.get_size_inches()[1]:.2f} in tall, more than {max_height_in:g} in")
    return problems


def overlaps_axes(fig, artists, tol_px=0.5):
    """Artists (figure texts, legends) whose drawn box overlaps the frame of any axes."""
    if not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    out = []
    for art in artists:
        bb = art.get_window_extent(renderer)
        for ax in fig.axes:
            ab = ax.get_window_extent(renderer)
            w = min(ab.x1, bb.x1) - max(ab.x0, bb.x0)
            h = min(ab.y1, bb.y1) - max(ab.y0, bb.y0)
            if w > tol_px and h > tol_px:
                out.append((art, ax))
    return out
