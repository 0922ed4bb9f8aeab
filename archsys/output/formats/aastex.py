"""AAS journals' deluxetable tables (AASTeX 6.31), rendered by :func:`archsys.output.formats.latex.render_aastex`."""
from __future__ import annotations

from .latex import render_aastex
from .registry import ReportFormat, register_format

__all__ = ["FORMAT"]

FORMAT = register_format(ReportFormat("aastex", ".aas.tex", lambda doc, ctx: render_aastex(doc), order=50,
                                      description="AASTeX deluxetable tables for an AAS journal"))
