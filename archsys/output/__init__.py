"""Outputs: the JSON report document, the one table model, text/Markdown/HTML/LaTeX renderings and figures.

document.py builds the JSON document; tables.py is the table model every renderer reads; numbers.py the
one number and percentage formatter; wording.py the English of the verdicts; formats.py dispatches to the
renderers and writes every output; frames.py gives pandas/astropy tables for notebooks.
"""
