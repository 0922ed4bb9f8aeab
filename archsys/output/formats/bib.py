"""What to cite for a report (``NAME.bib``): the BibTeX entries of the methods and priors that ran."""
from __future__ import annotations

from ..references import render_bib
from .registry import ReportFormat, register_format

__all__ = ["FORMAT"]

FORMAT = register_format(ReportFormat("bib", ".bib", lambda doc, ctx: render_bib(doc), order=57,
                                      description="BibTeX entries of what the report rests on"))
