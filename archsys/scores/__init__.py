"""Architecture scores computed on every posterior draw.

Each score is evaluated draw by draw, so the report gives a median and an
interval and, for verdicts, the probability over the draws.  Stability
verdicts are statistical estimates, not guarantees.
"""
from .summary import compute_scores

__all__ = ["compute_scores"]
