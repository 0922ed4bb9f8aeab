"""Outputs: the JSON report document, text/Markdown/HTML/LaTeX renderings and figures."""
