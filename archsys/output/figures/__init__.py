"""Paper figures, one module per kind, all drawn on matplotlib Figure objects.

* :mod:`.corner` -- corner plots sized for the page (renderer-measured layout)
* :mod:`.params` -- corner parameters from posterior draws; the author's choice of them
* :mod:`.architecture` -- one row per system, stacked for many systems
* :mod:`.period_ratio` -- adjacent period ratios against mean-motion resonances
* :mod:`.survey` -- population figures of a survey
* :mod:`.sets` -- the figure set of one analysis, files, redrawing from chains
* :mod:`.common` -- Figure/canvas creation, file bytes, tick helpers, text-overlap measurement

Every plotting function returns a :class:`matplotlib.figure.Figure`, accepts
``preset=`` (one-column, two-column, slide; :mod:`archsys.output.style`) and
``fig=`` (an empty figure to draw into), and never touches pyplot or the
global backend.
"""
from ..style import ORDER_STYLES, VERDICT_STYLES
from .architecture import architecture_figure
from .common import FigureItem, text_overlaps
from .corner import CONTOUR_LEVELS, CONTOUR_NOTE, corner_figure, split_parameters
from .params import (CornerParam, _mutual_inclination, choose_parameters, planet_parameters,  # noqa: F401
                     system_parameters, usable_parameters)
from .period_ratio import period_ratio_figure, resonances_between
from .sets import figure_files, make_figures, plot_saved

__all__ = ["CornerParam", "FigureItem", "CONTOUR_LEVELS", "CONTOUR_NOTE", "planet_parameters",
           "system_parameters", "usable_parameters", "choose_parameters", "corner_figure", "split_parameters",
           "architecture_figure", "period_ratio_figure", "resonances_between", "make_figures", "figure_files",
           "plot_saved", "text_overlaps", "ORDER_STYLES", "VERDICT_STYLES"]
