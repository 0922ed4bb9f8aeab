"""One system, end to end: draws (direct or MCMC) -> scores -> report document.

This is the single entry point that ``archsys report`` and ``archsys survey``
share, so a system gives the same numbers whichever way it is analysed.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from .inference.draws import direct_draws
from .inference.posterior import Posterior
from .options import AnalysisOptions, Mode
from .output.json_document import build_document

__all__ = ["AnalysisOptions", "Analysis", "analyze"]


@dataclass
class Analysis:
    system: object
    posterior: Posterior
    scores: dict
    options: AnalysisOptions
    document: dict = field(default_factory=dict)


def _posterior(system, opts: AnalysisOptions) -> Posterior:
    from .inference import route
    # "fast" trades depth for speed in large surveys: direct draws only, never the joint engine
    if opts.uses_mcmc:
        if opts.mode is Mode.MCMC or route.needs_mcmc(system, opts):
            return route.sample_system(system, opts)
    return direct_draws(system, n=opts.n_draws, seed=opts.seed)


def analyze(system, options: AnalysisOptions | None = None) -> Analysis:
    """Analyse one validated :class:`~archsys.model.system.System`."""
    opts = options or AnalysisOptions()
    post = _posterior(system, opts)
    from .scores import compute_scores
    scores = compute_scores(post, opts)       # every registered score (the N-body check when asked)
    res = Analysis(system, post, scores, opts)
    res.document = build_document(res)
    return res
