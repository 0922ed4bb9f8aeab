"""The score registry: every architecture score is one module that registers itself here.

A score declares

* what it computes on every posterior draw (:meth:`Score.per_draw`, arrays shaped
  ``(n_draws,)`` or ``(n_draws, n_pairs)``, shared with later scores through
  :attr:`ScoreContext.arrays`);
* how those draws are summarised into JSON-ready values (:meth:`Score.summarise`:
  one mapping per adjacent pair and/or one mapping of system-level keys);
* the metadata of every column it writes (:class:`Column`: key, human label,
  LaTeX label, unit, number format), which every output format reads; and
* optionally structured verdicts (:meth:`Score.verdicts`): codes, subjects and
  probabilities, never English (the wording lives in :mod:`archsys.output.wording`).

:func:`archsys.scores.compute_scores` runs the registered scores in ``order``.
Adding a score means one new module in ``archsys/scores/`` that calls
:func:`register` at import time (every module of the package is imported by
:mod:`archsys.scores`), plus its tests; nothing else changes.
"""
from __future__ import annotations

import contextlib
import importlib
import pathlib
import pkgutil
from dataclasses import dataclass, field

from .column_model import FORMATS, Column

__all__ = ["Column", "Score", "ScoreContext", "ScoreResult", "register", "unregister", "registered",
           "registered_scores", "column", "score_columns", "load_builtin", "FORMATS"]

@dataclass
class ScoreContext:
    """What a score sees: the posterior, the options and everything computed before it."""

    post: object
    options: object = None
    arrays: dict = field(default_factory=dict)      # per-draw arrays of earlier scores
    pairs: list = field(default_factory=list)       # per-pair JSON entries built so far
    planets: list = field(default_factory=list)     # per-planet JSON keys added by scores so far
    system: dict = field(default_factory=dict)      # system-level JSON keys built so far
    #: draws of each posterior stacked in ``post`` (scores.compute.compute_scores_many), in order;
    #: None for one posterior.  Per-draw code that needs a whole-posterior value (a median) reads it.
    segments: tuple | None = None

    @property
    def names(self):
        return list(self.post.system.planet_names)

    @property
    def n_pairs(self):
        return max(len(self.names) - 1, 0)

    def note(self, planet, what):
        """The posterior's note on how ``what`` (mass, ecc, inc) of ``planet`` was obtained.

        Eccentricity and inclination notes are :class:`~archsys.inference.basis.Basis` strings:
        test where the value comes from with :func:`~archsys.inference.basis.origin_of`.
        """
        return (self.post.notes or {}).get(planet, {}).get(what, "") or ""


@dataclass
class ScoreResult:
    """Summaries of one score: ``pairs`` (one mapping per adjacent pair) and ``system`` keys."""

    pairs: list | None = None
    system: dict = field(default_factory=dict)
    planets: list | None = None     # one mapping per planet (keys added to the document's planet entries)


class Score:
    """Base class of a registered score (subclass it and call :func:`register`).

    Attributes
    ----------
    name : str
        Unique name of the score.
    order : float
        Scores run and their keys appear in increasing ``order``; a score that
        reads another score's arrays must have a larger order.
    verdict_order : float, optional
        Position of the score's verdicts in the report (default ``order``).
    columns : tuple of Column
        Metadata of every key the score writes.
    """

    name = ""
    order = 100.0
    verdict_order = None          # position of its verdicts in the report (default: ``order``)
    columns: tuple = ()

    def applies(self, ctx: ScoreContext) -> bool:
        """Whether the score is defined for this posterior (default: systems with a pair)."""
        return ctx.n_pairs >= 1

    def per_draw(self, ctx: ScoreContext) -> dict:
        """Arrays of the score on every draw, keyed by name (added to ``ctx.arrays``).

        Every array has the draws on its first axis and each draw's values depend on that draw only,
        so that :func:`~archsys.scores.compute.compute_scores_many` may run it once on the draws of
        many posteriors stacked together (the same bytes as one posterior at a time).
        """
        return {}

    def batch_key(self, ctx: ScoreContext):
        """What :meth:`per_draw` decides from the posterior as a whole (default: nothing).

        Posteriors are stacked for :meth:`per_draw` only when their keys are equal (and their
        draws have the same shapes); a score whose per-draw code branches on a whole-posterior
        condition returns that condition here.
        """
        return None

    def summarise(self, ctx: ScoreContext, arrays: dict) -> ScoreResult:
        """JSON-ready summaries of the per-draw arrays."""
        return ScoreResult()

    def verdicts(self, ctx: ScoreContext) -> list:
        """Structured verdicts (see :func:`verdict`), read after every score has run."""
        return []


_REGISTRY: dict = {}


def register(score):
    """Add ``score`` (an instance, or a :class:`Score` subclass) to the registry; returns it."""
    if isinstance(score, type):
        score = score()
    if not score.name:
        raise ValueError("a score needs a name")
    _REGISTRY[score.name] = score
    return score


def unregister(name):
    _REGISTRY.pop(getattr(name, "name", name), None)


@contextlib.contextmanager
def registered(score):
    """Register ``score`` for the duration of a ``with`` block (tests, notebooks)."""
    s = register(score)
    try:
        yield s
    finally:
        unregister(s.name)


#: Modules of the scores package that are infrastructure, not scores.
NOT_SCORES = {"registry", "column_model", "planet_columns", "common", "compute", "dynamics_assess"}
_loaded = False


def load_builtin():
    """Import every score module of the scores package once (each registers itself when imported)."""
    global _loaded
    if _loaded:
        return
    here = pathlib.Path(__file__).resolve().parent
    for mod in sorted(m.name for m in pkgutil.iter_modules([str(here)])):
        if mod not in NOT_SCORES:
            importlib.import_module(f"{__package__}.{mod}")
    _loaded = True


def registered_scores():
    """The registered scores in run order."""
    load_builtin()
    return sorted(_REGISTRY.values(), key=lambda s: (s.order, s.name))


def score_columns(table=None):
    """Columns of every registered score (of one ``table`` if given), in score order."""
    out = []
    for s in registered_scores():
        out += [c for c in s.columns if table is None or c.table == table]
    return out


def column(key, table=None):
    """The :class:`Column` of a document key (planet/star keys and every score), or None.

    This is the one place figures and renderers get a key's label, LaTeX label and unit.
    """
    from .planet_columns import BASE_COLUMNS
    for c in list(BASE_COLUMNS) + score_columns():
        if c.key == key and (table is None or c.table == table):
            return c
    return None


def verdict(code, probability=None, subjects=(), criterion="", citation="", caveats=(), **details):
    """A structured verdict: JSON-ready, no English (worded in :mod:`archsys.output.wording`)."""
    out = {"code": code, "subjects": list(subjects), "probability": probability,
           "criterion": criterion, "citation": citation}
    if caveats:
        out["caveats"] = list(caveats)
    if details:
        out["details"] = details
    return out
