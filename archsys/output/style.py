"""Figure presets (journal widths, font sizes) and the colour-blind-safe palette.

archsys figures use one house style of their own: serif text with STIX
mathtext (close to the LaTeX look of a paper), thin axes, inward ticks on all
four sides, no grid, no frame on legends.  Widths follow the common practice of
the two-column astronomy journals (AAS, A&A, MNRAS): one column about 3.5 in,
the full page about 7.1 in.

References
----------
.. [1] Okabe, M. & Ito, K. 2008, "Color Universal Design (CUD): how to make
   figures and presentations that are friendly to colorblind people", J*FLY
   data depository for Drosophila researchers.  The eight hex values are the
   widely reproduced set, quoted from memory.
"""
from __future__ import annotations

from dataclasses import dataclass

from cycler import cycler

from ..errors import InputError

__all__ = ["Preset", "PRESETS", "DEFAULT_PRESET", "get_preset", "rc_params", "figure_size",
           "PALETTE", "CYCLE", "VERDICT_STYLES", "verdict_style", "ORDER_STYLES"]

#: Okabe & Ito (2008) colour-blind-safe palette (hex values from memory).
PALETTE = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
GREY = "#8C8C8C"

#: Colour cycle for series (yellow last: weak contrast on white).
CYCLE = [PALETTE[k] for k in ("blue", "vermillion", "bluish_green", "orange",
                              "reddish_purple", "sky_blue", "black", "yellow")]

#: Pair-stability verdict styles: colour *and* line style, so the cue survives
#: greyscale printing and every form of colour blindness.
VERDICT_STYLES = {
    "stable": {"color": PALETTE["bluish_green"], "linestyle": "-", "label": r"$P_\mathrm{Hill} \geq 0.95$"},
    "uncertain": {"color": PALETTE["orange"], "linestyle": (0, (4, 1.5)), "label": r"$0.05 < P_\mathrm{Hill} < 0.95$"},
    "unstable": {"color": PALETTE["vermillion"], "linestyle": (0, (1, 1)), "label": r"$P_\mathrm{Hill} \leq 0.05$"},
    "unknown": {"color": GREY, "linestyle": (0, (1, 3)), "label": "no Hill verdict"},
}

#: Resonance-order line styles for the period-ratio figure.
ORDER_STYLES = {
    1: {"color": PALETTE["blue"], "linestyle": "-", "linewidth": 0.9, "label": "first order"},
    2: {"color": PALETTE["reddish_purple"], "linestyle": (0, (4, 2)), "linewidth": 0.8, "label": "second order"},
    3: {"color": GREY, "linestyle": (0, (1, 1.5)), "linewidth": 0.8, "label": "third order"},
}


def verdict_style(p):
    """Style key for a Hill-stability probability (None: unknown)."""
    if p is None:
        return "unknown"
    if p >= 0.95:
        return "stable"
    if p <= 0.05:
        return "unstable"
    return "uncertain"


@dataclass(frozen=True)
class Preset:
    """Figure geometry and type sizes for one target (journal column, page, slide)."""

    name: str
    width_in: float        # figure width in inches
    font_pt: float         # base font size (axis labels)
    small_pt: float        # tick labels, legends, annotations
    dpi: int               # PNG resolution
    line_width: float      # data lines
    axes_width: float      # axes frame
    page_height_in: float = 9.0   # tallest figure that fits the page (or the 16:9 slide)

    @property
    def width(self):
        return self.width_in

    @property
    def min_panel_in(self):
        """Smallest corner-plot panel (inches) that holds two or three tick labels of this type size."""
        return 5.5 * self.small_pt / 72.0

    @property
    def corner_in(self):
        """Side of a square corner plot: the width, or the page (slide) height if smaller."""
        return min(self.width_in, self.page_height_in)

    def max_corner_params(self):
        """Most parameters one corner plot holds with panels at least ``min_panel_in`` wide."""
        margin = 0.7 * self.font_pt / 8.0
        return max(2, int((self.corner_in - margin) / self.min_panel_in))


# Widths: common practice for AAS/A&A/MNRAS two-column layouts (one column
# ~3.3-3.5 in, text width ~6.9-7.1 in).  Slide: 16:9 at 10 in wide.
PRESETS = {
    "one-column": Preset("one-column", 3.5, 8.0, 7.0, 300, 1.0, 0.6, 9.0),
    "two-column": Preset("two-column", 7.1, 9.0, 8.0, 300, 1.1, 0.7, 9.0),
    "slide": Preset("slide", 10.0, 16.0, 14.0, 150, 1.8, 1.0, 5.625),
}
DEFAULT_PRESET = "one-column"


def get_preset(preset=None) -> Preset:
    """A :class:`Preset` from its name (None: one-column) or the preset itself."""
    if isinstance(preset, Preset):
        return preset
    name = DEFAULT_PRESET if preset is None else str(preset).strip().lower()
    if name not in PRESETS:
        raise InputError(f"unknown figure preset {preset!r}; choose one of {', '.join(PRESETS)}",
                         field="preset")
    return PRESETS[name]


def figure_size(preset=None, aspect=0.75, height_in=None):
    """(width, height) in inches: the preset width and ``height = aspect * width`` unless given, never
    taller than the preset's page (slide) height."""
    p = get_preset(preset)
    h = float(height_in) if height_in is not None else aspect * p.width_in
    return (p.width_in, min(h, p.page_height_in))


def rc_params(preset=None) -> dict:
    """matplotlib rcParams of the archsys house style at the preset's sizes."""
    p = get_preset(preset)
    return {
        "font.family": "serif",
        "font.serif": ["STIXGeneral", "DejaVu Serif"],
        "mathtext.fontset": "stix",
        "font.size": p.font_pt,
        "axes.labelsize": p.font_pt,
        "axes.titlesize": p.font_pt,
        "xtick.labelsize": p.small_pt,
        "ytick.labelsize": p.small_pt,
        "legend.fontsize": p.small_pt,
        "axes.linewidth": p.axes_width,
        "lines.linewidth": p.line_width,
        "axes.prop_cycle": cycler(color=CYCLE),
        "axes.grid": False,
        "xtick.direction": "in",
        "ytick.direction": "in",
        "xtick.top": True,
        "ytick.right": True,
        "xtick.minor.visible": True,
        "ytick.minor.visible": True,
        "xtick.major.width": p.axes_width,
        "ytick.major.width": p.axes_width,
        "xtick.minor.width": 0.7 * p.axes_width,
        "ytick.minor.width": 0.7 * p.axes_width,
        "xtick.major.size": 3.0,
        "ytick.major.size": 3.0,
        "xtick.minor.size": 1.6,
        "ytick.minor.size": 1.6,
        "legend.frameon": False,
        "legend.handlelength": 2.2,
        "savefig.dpi": p.dpi,
        "pdf.fonttype": 42,          # embed TrueType: journals reject Type 3 fonts
        "figure.dpi": 100,
    }
