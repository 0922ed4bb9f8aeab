"""Architecture scores computed on every posterior draw.

Each score is one module of this package that registers a
:class:`~archsys.scores.registry.Score` (see :mod:`archsys.scores.registry`).
Every module here is imported by :func:`load_builtin`, so a new score is one
new file.  Scores are evaluated draw by draw, so the report gives a median and
an interval and, for verdicts, the probability over the draws.  Stability
verdicts are statistical estimates, not guarantees.
"""
from .registry import (Column, Score, ScoreResult, column, load_builtin, register, registered, registered_scores,
                       verdict)
from .compute import compute_scores, per_draw_arrays

__all__ = ["compute_scores", "per_draw_arrays", "Column", "Score", "ScoreResult", "column", "register",
           "registered", "registered_scores", "verdict", "load_builtin"]
