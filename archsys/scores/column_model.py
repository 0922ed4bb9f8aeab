"""The column model: metadata of one document key (label, LaTeX label, unit, number format).

Scores declare their columns with it (:mod:`archsys.scores.registry`), and so do the planet and star
keys (:mod:`archsys.scores.planet_columns`); every output format and figure reads them through
:func:`archsys.scores.registry.column`.
"""
from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Column", "FORMATS"]

#: Number formats a column may declare (read by :func:`archsys.output.numbers.format_value`).
FORMATS = ("summary", "percent", "integer", "number", "text", "names")


@dataclass(frozen=True)
class Column:
    """Metadata of one document key, read by every output format and by the figures.

    ``key`` is the JSON key; a key inside a system-level block is written
    ``"block.key"`` (e.g. ``"amd.system_stable_probability"``).  ``label`` is
    the human label (plain Unicode), ``latex`` the LaTeX label, ``unit`` the
    plain unit, ``unit_latex`` its LaTeX form and ``unit_astropy`` an astropy
    unit string (tables with units in the Python API).  ``fmt`` is one of
    :data:`FORMATS`; ``scale`` multiplies values for display (a fraction shown in
    per cent has scale 100 and unit "%").  ``table`` is "planet", "pair", "star"
    or "system".  ``show=False`` keeps a column in the JSON but out of the
    human-readable tables (e.g. a value that another row already shows).
    """

    key: str
    label: str
    latex: str
    unit: str = ""
    unit_latex: str = ""
    fmt: str = "summary"
    scale: float = 1.0
    table: str = "pair"
    unit_astropy: str = ""
    show: bool = True
    description: str = ""

    def __post_init__(self):
        if self.fmt not in FORMATS:
            raise ValueError(f"column {self.key!r}: fmt must be one of {FORMATS}; got {self.fmt!r}")
        if self.table not in ("planet", "pair", "star", "system"):
            raise ValueError(f"column {self.key!r}: table must be planet, pair, star or system")
