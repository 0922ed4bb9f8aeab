"""Architecture scores computed on every posterior draw.

Each score is one module of this package that registers a
:class:`~archsys.scores.registry.Score` (see :mod:`archsys.scores.registry`).
Every module here is imported by :func:`load_builtin`, so a new score is one
new file.  Scores are evaluated draw by draw, so the report gives a median and
an interval and, for verdicts, the probability over the draws.  Stability
verdicts are statistical estimates, not guarantees.
"""
import importlib
import pkgutil

from .registry import Column, Score, ScoreResult, column, register, registered, registered_scores, verdict

__all__ = ["compute_scores", "per_draw_arrays", "Column", "Score", "ScoreResult", "column", "register",
           "registered", "registered_scores", "verdict", "load_builtin"]

#: Modules of the package that are infrastructure, not scores.
_NOT_SCORES = {"registry", "columns", "common", "summary"}
_loaded = False


def load_builtin():
    """Import every score module of this package once (each registers itself)."""
    global _loaded
    if _loaded:
        return
    for mod in sorted(m.name for m in pkgutil.iter_modules(__path__)):
        if mod not in _NOT_SCORES:
            importlib.import_module(f"{__name__}.{mod}")
    _loaded = True


from .compute import compute_scores, per_draw_arrays  # noqa: E402
