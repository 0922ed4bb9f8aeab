"""The verdicts as a LaTeX paragraph with citations (``NAME.verdicts.tex``), for ``\\input`` into a paper."""
from __future__ import annotations

from .latex import render_verdicts_tex
from .registry import ReportFormat, register_format

__all__ = ["FORMAT"]

FORMAT = register_format(ReportFormat("verdicts", ".verdicts.tex", lambda doc, ctx: render_verdicts_tex(doc),
                                      order=55, description="the verdicts as a LaTeX paragraph with citations"))
