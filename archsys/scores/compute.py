"""Run every registered score on one posterior (or many) and collect JSON-ready summaries.

:func:`compute_scores` scores one posterior.  :func:`compute_scores_many` scores many at once
(a survey batch): each score's per-draw kernels run once over the draws of all posteriors of the
same shape stacked together -- (systems x draws) rows -- and the summaries are then taken system by
system, so every system gets the same bytes as :func:`compute_scores` alone would give it.
"""
from __future__ import annotations

import numpy as np

from .registry import ScoreContext, registered_scores
from .resonance import WIDE_RATIO

__all__ = ["compute_scores", "compute_scores_many", "per_draw_arrays", "WIDE_RATIO"]


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


def _context(post, options):
    names = post.system.planet_names
    ctx = ScoreContext(post, options)
    ctx.pairs = [{"inner": names[j], "outer": names[j + 1]} for j in range(len(names) - 1)]
    ctx.planets = [{} for _ in names]
    return ctx


def _run(post, options=None, summarise=True):
    ctx = _context(post, options)
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


def _result(ctx, ran):
    verdicts = []
    for score in sorted(ran, key=lambda s: (s.order if s.verdict_order is None else s.verdict_order, s.name)):
        verdicts += score.verdicts(ctx)
    return {"pairs": ctx.pairs, "system": ctx.system, "planets": ctx.planets, "verdicts": verdicts,
            "arrays": ctx.arrays}


def compute_scores(post, options=None) -> dict:
    """Scores of one posterior.

    Returns ``{"pairs": [...], "system": {...}, "planets": [...], "verdicts": [...], "arrays": {...}}``:
    the per-pair entries, system-level keys and per-planet keys (added to the
    document's planet entries) of the report document, the
    structured verdicts (worded by :mod:`archsys.output.wording`) and the
    per-draw arrays of every score.
    """
    return _result(*_run(post, options))


def _shape(x):
    return None if x is None else np.shape(x)[1:]


def _stack_key(score, ctx, post_keys):
    """Posteriors with equal keys can share one stacked per-draw run of ``score``.

    ``post_keys`` caches the draws' part of the key per posterior (it does not change between scores).
    """
    post = ctx.post
    pk = post_keys.get(id(post))
    if pk is None:
        pk = post_keys[id(post)] = (post.n_draws, tuple(sorted((k, _shape(v)) for k, v in post.draws.items())))
    return (score.batch_key(ctx), pk, tuple((k, _shape(v)) for k, v in ctx.arrays.items()))


def _stacked(ctxs):
    """One context whose posterior and arrays are the draws of ``ctxs`` one after the other."""
    from ..inference.posterior import Posterior
    first = ctxs[0].post

    def cat(values):
        return None if values[0] is None else np.concatenate([np.asarray(v) for v in values], axis=0)

    draws = {k: cat([c.post.draws[k] for c in ctxs]) for k in first.draws}
    post = Posterior(first.system, draws, first.method, first.seed, first.notes, first.sampler, first.prior,
                     first.phases)
    ctx = ScoreContext(post, ctxs[0].options, segments=tuple(c.post.n_draws for c in ctxs))
    ctx.arrays = {k: cat([c.arrays[k] for c in ctxs]) for k in ctxs[0].arrays}
    return ctx


def _split(arrays, sizes):
    """Per-posterior views of stacked per-draw arrays, or None when an array is not per draw."""
    total = sum(sizes)
    edges = np.cumsum([0] + list(sizes))
    out = [{} for _ in sizes]
    for k, v in arrays.items():
        if v is None:
            for o in out:
                o[k] = None
            continue
        if not isinstance(v, np.ndarray) or v.ndim == 0 or v.shape[0] != total:
            return None
        for o, a, b in zip(out, edges[:-1], edges[1:]):
            o[k] = v[a:b]
    return out


def _per_draw_many(score, ctxs, live, stacks, post_keys):
    """``score.per_draw`` of the contexts ``live`` (indices into ``ctxs``), stacked where the posteriors allow.

    ``stacks`` keeps the stacked context of each group of posteriors from one score to the next
    (tuple of indices -> context), so the draws are stacked once, not once per score.
    """
    groups = {}
    for i in live:
        groups.setdefault(_stack_key(score, ctxs[i], post_keys), []).append(i)
    results = {}
    for idx in groups.values():
        members = [ctxs[i] for i in idx]
        parts = None
        if len(members) > 1:
            key = tuple(idx)
            stacked = stacks.get(key) or _stacked(members)
            try:
                arrays = score.per_draw(stacked) or {}
            except Exception:  # noqa: BLE001 - one posterior's problem: redone one at a time below, where it
                arrays = None  # is raised for that posterior alone
            if arrays is not None:
                parts = _split(arrays, [c.post.n_draws for c in members])
            if parts is not None:
                stacked.arrays.update(arrays)
                stacks[key] = stacked
            else:
                stacks.pop(key, None)
        if parts is None:                   # one posterior, or a score whose arrays are not per draw
            parts = [score.per_draw(c) or {} for c in members]
        for i, p in zip(idx, parts):
            results[i] = p
    return results


def compute_scores_many(posts, options=None) -> list:
    """:func:`compute_scores` of each posterior in ``posts``, the same bytes, the kernels run once per shape.

    Posteriors of the same number of draws and planets (and the same keys) are stacked for each
    score's :meth:`~archsys.scores.registry.Score.per_draw` (see
    :meth:`~archsys.scores.registry.Score.batch_key`); summaries and verdicts are per posterior.
    ``options`` is one :class:`~archsys.options.AnalysisOptions` for all, or one per posterior.
    """
    posts = list(posts)
    opts = options if isinstance(options, (list, tuple)) else [options] * len(posts)
    ctxs = [_context(p, o) for p, o in zip(posts, opts)]
    ran = [[] for _ in ctxs]
    stacks, post_keys = {}, {}
    for score in registered_scores():
        live = [i for i, c in enumerate(ctxs) if score.applies(c)]
        if not live:
            continue
        arrays_of = _per_draw_many(score, ctxs, live, stacks, post_keys)
        for i in live:
            ctx, arrays = ctxs[i], arrays_of[i]
            ctx.arrays.update(arrays)
            _merge(ctx, score, score.summarise(ctx, arrays))
            ran[i].append(score)
    return [_result(c, r) for c, r in zip(ctxs, ran)]
