"""Outputs: the JSON report document, the one table model, the report formats and the figures.

json_document.py builds the JSON document; table_model.py is the table model every format reads;
numbers.py the one number and percentage formatter; wording.py the English of the verdicts; formats/
holds one renderer per format and dispatches to them (render, write_outputs); figures/ one module per
figure kind; dataframes.py gives pandas/astropy tables for notebooks.
"""

__all__ = []
