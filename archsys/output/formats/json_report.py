"""The report document as JSON text (the stable contract of ``archsys report --json``)."""
from __future__ import annotations

import json

from .registry import ReportFormat, register_format

__all__ = ["render_json", "FORMAT"]


def render_json(doc) -> str:
    """The document, indented, keys in the document's order, with a final newline."""
    return json.dumps(doc, indent=2, sort_keys=False) + "\n"


FORMAT = register_format(ReportFormat("json", ".json", lambda doc, ctx: render_json(doc), order=10,
                                      description="the JSON document"))
