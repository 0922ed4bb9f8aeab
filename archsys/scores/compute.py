"""Run every registered score on one posterior and collect JSON-ready summaries."""
from __future__ import annotations

from .registry import ScoreContext, registered_scores
from .resonance import WIDE_RATIO

__all__ = ["compute_scores", "per_draw_arrays", "WIDE_RATIO"]


def _merge(ctx, score, res):
    if res.pairs is not None:
        if len(res.pairs) != ctx.n_pairs:
            raise ValueError(f"score {score.name!r} returned {len(res.pairs)} pair entries for {ctx.n_pairs} pairs")
        for entry, new in zip(ctx.pairs, res.pairs):
            entry.update(new)
    if res.planets is not None:
        if len(res.planets) != len(ctx.names):
            raise ValueError(f"score {score.name!r} returned {len(res.planets)} planet entries for "
                             f"{len(ctx.names)} planets")
        for entry, new in zip(ctx.planets, res.planets):
            entry.update(new)
    ctx.system.update(res.system)


def _run(post, options=None, summarise=True):
    names = post.system.planet_names
    ctx = ScoreContext(post, options)
    ctx.pairs = [{"inner": names[j], "outer": names[j + 1]} for j in range(len(names) - 1)]
    ctx.planets = [{} for _ in names]
    ran = []
    for score in registered_scores():
        if not score.applies(ctx):
            continue
        arrays = score.per_draw(ctx) or {}
        ctx.arrays.update(arrays)
        if summarise:
            _merge(ctx, score, score.summarise(ctx, arrays))
        ran.append(score)
    return ctx, ran


def per_draw_arrays(post, options=None) -> dict:
    """Every registered score's per-draw arrays (no summaries; for benchmarks and notebooks)."""
    return _run(post, options, summarise=False)[0].arrays


def compute_scores(post, options=None) -> dict:
    """Scores of one posterior.

    Returns ``{"pairs": [...], "system": {...}, "planets": [...], "verdicts": [...], "arrays": {...}}``:
    the per-pair entries, system-level keys and per-planet keys (added to the
    document's planet entries) of the report document, the
    structured verdicts (worded by :mod:`archsys.output.wording`) and the
    per-draw arrays of every score.
    """
    ctx, ran = _run(post, options)
    verdicts = []
    for score in sorted(ran, key=lambda s: (s.order if s.verdict_order is None else s.verdict_order, s.name)):
        verdicts += score.verdicts(ctx)
    return {"pairs": ctx.pairs, "system": ctx.system, "planets": ctx.planets, "verdicts": verdicts,
            "arrays": ctx.arrays}
