"""Write the survey figures (PNG and PDF) of one survey run.

The figures themselves are drawn by :mod:`archsys.output.figures.survey` on
Figure objects at the same presets as the system figures; files carry no
creation date, so the same survey gives the same bytes.
"""
from __future__ import annotations

import pathlib

from .common import figure_bytes
from .survey import (KIPPING2013, plot_eccentricity_population, plot_gap_complexity,
                                     plot_hill_separations, plot_multiplicity, plot_period_ratios)
from ..files import atomic_write
from ..style import get_preset

__all__ = ["survey_figures", "render_survey_figures", "write_survey_figures", "FIGURES", "BEFORE_FITS", "plot_period_ratios", "plot_hill_separations", "plot_multiplicity",
           "plot_gap_complexity", "plot_eccentricity_population", "KIPPING2013"]


def _transit_figure(block, preset):
    from .multiplicity import plot_transit_multiplicity
    return plot_transit_multiplicity(block, preset=preset)


#: The survey figures, in file order, and what each is drawn from.
FIGURES = ("period_ratios", "hill_separation", "multiplicity", "gap_complexity", "eccentricity_population",
           "transit_multiplicity")
#: Figures drawn from the survey tables and statistics alone (not from the population fits), so they can
#: be rendered while the fits run.
BEFORE_FITS = FIGURES[:4]


def render_survey_figures(pop, systems, pairs, planets, names=FIGURES, preset=None):
    """{name: {"png": bytes, "pdf": bytes}} of the survey figures ``names`` (nothing is written)."""
    p = get_preset(preset)
    makers = {
        "period_ratios": lambda: plot_period_ratios(pairs, preset=p),
        "hill_separation": lambda: plot_hill_separations(pairs, preset=p),
        "multiplicity": lambda: plot_multiplicity(pop.get("multiplicity", {}), preset=p),
        "gap_complexity": lambda: plot_gap_complexity(systems, preset=p),
        "eccentricity_population":
            lambda: plot_eccentricity_population(planets, pop.get("eccentricity_population"), preset=p),
        "transit_multiplicity": lambda: _transit_figure(pop.get("transit_multiplicity"), p)}
    return {name: {ext: figure_bytes(fig, ext, p) for ext in ("png", "pdf")}
            for name, fig in ((n, makers[n]()) for n in names)}


def write_survey_figures(blobs, out_dir):
    """Write rendered figures (:func:`render_survey_figures`) to ``out_dir``; returns the file stems."""
    out_dir = pathlib.Path(out_dir)
    stems = []
    for name in FIGURES:
        if name in blobs:
            for ext, data in blobs[name].items():
                atomic_write((out_dir / name).with_suffix(f".{ext}"), data, mode="wb")
            stems.append(str(out_dir / name))
    return stems


def survey_figures(pop, systems, pairs, planets, out_dir, preset=None):
    """Write every survey figure to ``out_dir`` (PNG and PDF); returns the file stems."""
    return write_survey_figures(render_survey_figures(pop, systems, pairs, planets, preset=preset), out_dir)
