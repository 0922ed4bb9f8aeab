"""One system, end to end: draws (direct or MCMC) -> scores -> report document.

This is the single entry point that ``archsys report`` and ``archsys survey``
share, so a system gives the same numbers whichever way it is analysed.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from .inference.draws import DEFAULT_DRAWS, direct_draws
from .inference.posterior import Posterior
from .output.document import build_document

__all__ = ["AnalysisOptions", "Analysis", "analyze"]


@dataclass(frozen=True)
class AnalysisOptions:
    """Settings of one analysis (they are recorded in the provenance block)."""

    n_draws: int = DEFAULT_DRAWS
    seed: int = 0
    mode: str = "auto"          # "auto": MCMC when a joint constraint binds; "direct"; "mcmc";
    #                             "fast": direct draws only (no MCMC), fewer draws
    ecc_prior: str | None = None
    incl_prior: str | None = None
    require_stable: bool = False
    quiet: bool = True
    max_steps: int | None = None
    nbody: int = 0              # number of draws to integrate (0 = no N-body check)
    nbody_orbits: float = 1000.0  # N-body horizon in orbits of the outermost planet
    jobs: int = 1

    def as_dict(self):
        return {k: getattr(self, k) for k in self.__dataclass_fields__ if k not in ("quiet", "jobs")}


@dataclass
class Analysis:
    system: object
    posterior: Posterior
    scores: dict
    options: AnalysisOptions
    document: dict = field(default_factory=dict)


#: Which joint engine runs: "joint" (exact draws + orientation block + importance weights), or
#: "v0.1.0" (one emcee run over every parameter) -- the latter only as the baseline of the benchmark.
JOINT_ENGINE = "joint"


def _posterior(system, opts: AnalysisOptions) -> Posterior:
    from .inference import sampler
    # "fast" trades depth for speed in large surveys: direct draws only, never the joint engine
    if opts.mode not in ("direct", "fast"):
        if opts.mode == "mcmc" or sampler.needs_mcmc(system, opts):
            if JOINT_ENGINE == "v0.1.0":
                return sampler.sample_full_model(system, opts)
            return sampler.sample_system(system, opts)
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
