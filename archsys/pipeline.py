"""One system, end to end: draws (direct or MCMC) -> scores -> report document.

This is the single entry point that ``archsys report`` and ``archsys survey``
share, so a system gives the same numbers whichever way it is analysed.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .inference.draws import direct_draws
from .inference.posterior import Posterior
from .options import AnalysisOptions
from .output.json_document import build_document

__all__ = ["AnalysisOptions", "Analysis", "analyze", "analyze_many"]


@dataclass
class Analysis:
    system: object
    posterior: Posterior
    scores: dict
    options: AnalysisOptions
    document: dict = field(default_factory=dict)


def _posterior(system, opts: AnalysisOptions) -> Posterior:
    # "fast" trades depth for speed in large surveys: direct draws only, never the joint engine (nor its
    # imports: scipy.stats alone is a third of a fast-mode survey worker's start-up)
    if opts.uses_mcmc:
        from .inference.route import choose_path
        if choose_path(system, opts).joint:
            from .inference.joint import sample_joint
            return sample_joint(system, opts)
    return direct_draws(system, n=opts.n_draws, seed=opts.seed)


def _not_the_sky(post, plane) -> Posterior:
    """Inclinations measured from the ecliptic or the invariable plane (``reference_plane``).

    The orbit orientations are used as given for everything that does not depend on the observer --
    mutual inclinations, the invariable plane and AMD, the N-body integrations -- but m sin i (which
    needs the inclination to the sky) is unknown, and the notes say what the inclinations are measured
    from.  The reader refuses sky-plane data (K, m sin i, b, Rp/R*, transits) in such files.
    """
    post.draws["msini"] = np.full_like(np.asarray(post.draws["msini"], dtype=float), np.nan)
    for name in post.system.planet_names:
        post.notes.setdefault(name, {})["inc"] = (f"measured from the {plane} plane (reference_plane), not the "
                                                  "sky: m sin i and transit quantities do not apply")
    return post


def _condition_on_survival(post, opts: AnalysisOptions) -> Posterior:
    """``--require-stable --stable-by nbody``: keep the integrated draws that survive the horizon.

    Importance weights over the integrated draws: 1 for a draw with no close encounter, crossing or
    escape over the N-body horizon, 0 otherwise; the posterior becomes the surviving draws, and the
    sampler block records how many were integrated and survived (their number is the effective sample
    size).  Draws are integrated with the same engine as the dynamical assessment.
    """
    from .errors import InputError
    from .options import AUTO_NBODY_DRAWS
    from .physics import nbody
    from .scores.dynamics_assess import run_nbody
    if post.system.n_planets < 2:
        return post
    if not nbody.nbody_available():
        raise InputError("--stable-by nbody needs the optional extra: pip install 'archsys[nbody]'")
    n = opts.nbody if isinstance(opts.nbody, int) and opts.nbody > 0 else AUTO_NBODY_DRAWS
    res, info = run_nbody(post, n, opts, seed=opts.seed)
    if res is None:
        raise InputError(f"{post.system.name}: --stable-by nbody could not integrate enough draws "
                         f"(masses unknown or --nbody-budget too small: {info.get('work_cap_draws')} draws fit)")
    sub = post.subset(n)
    usable = np.flatnonzero(np.all(np.isfinite(sub["a"]), axis=1))[: len(res.survived)]
    keep = usable[np.asarray(res.survived, bool) & np.asarray(res.completed, bool)]
    block = {"constraint": "N-body survival over the horizon", "integrated": int(np.sum(res.completed)),
             "survived": int(keep.size), "effective_sample_size": int(keep.size),
             "horizon_inner_orbits": float(opts.nbody_orbits)}
    if keep.size == 0:
        raise InputError(f"{post.system.name}: no integrated draw survives {opts.nbody_orbits:g} inner orbits; "
                         "--stable-by nbody leaves no posterior (the system as measured is unstable, or the "
                         "summaries are too loose)")
    return sub.take(keep, stability_conditioning=block)


def _prepared(system, opts: AnalysisOptions) -> Posterior:
    post = _posterior(system, opts)
    if getattr(system, "reference_plane", "sky") != "sky":
        post = _not_the_sky(post, system.reference_plane)
    if opts.require_stable and opts.stable_by == "nbody":
        post = _condition_on_survival(post, opts)
    return post


def analyze(system, options: AnalysisOptions | None = None) -> Analysis:
    """Analyse one validated :class:`~archsys.model.system.System`."""
    opts = options or AnalysisOptions()
    post = _prepared(system, opts)
    from .scores import compute_scores
    scores = compute_scores(post, opts)       # every registered score (the N-body check when asked)
    res = Analysis(system, post, scores, opts)
    res.document = build_document(res)
    return res


def analyze_many(systems, options) -> list:
    """:func:`analyze` of every system, with the score kernels run once over all their draws.

    ``options``: one :class:`AnalysisOptions` per system (a survey gives each system its own seed).
    Each system is drawn with its own seed and summarised on its own, so each :class:`Analysis` is
    the same, byte for byte, as ``analyze(system, options)``; only the per-draw kernels of the scores
    run on the stacked draws (:func:`archsys.scores.compute_scores_many`).  An exception from one
    system's draws is returned in its place (the caller decides what a failure means).
    """
    from .scores.compute import compute_scores_many
    systems, options = list(systems), list(options)
    posts, live = [], []
    out = [None] * len(systems)
    for i, (system, opts) in enumerate(zip(systems, options)):
        try:
            posts.append(_prepared(system, opts))
            live.append(i)
        except Exception as exc:  # noqa: BLE001 - handed back to the caller for this system only
            out[i] = exc
    for i, post, scores in zip(live, posts, compute_scores_many(posts, [options[i] for i in live])):
        res = Analysis(systems[i], post, scores, options[i])
        res.document = build_document(res)
        out[i] = res
    return out
