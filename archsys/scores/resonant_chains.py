"""Resonant chains: runs of two or more consecutive pairs each near a resonance of order 1-3.

A pair counts when it is near resonance in more than half of the draws (see
:mod:`archsys.scores.resonance`); chains are listed by planet name.
"""
from __future__ import annotations

import numpy as np

from ..physics import mmr_chains
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["ResonantChainScore"]


class ResonantChainScore(Score):
    name = "resonant_chains"
    order = 80
    columns = (Column("resonant_chains", "resonant chains", "Resonant chains", fmt="names", table="system"),)

    def summarise(self, ctx, arr):
        nr = ctx.arrays["near_resonance"]
        known = np.isfinite(nr)
        n_known = known.sum(axis=0)                  # pairs with no known draw are not near resonance
        p_near = np.where(known, nr, 0.0).sum(axis=0) / np.maximum(n_known, 1)
        chains = mmr_chains.resonant_chains(p_near > 0.5, min_pairs=2)
        names = ctx.names
        return ScoreResult(system={"resonant_chains": [[names[a] for a in range(int(s), int(e) + 1)]
                                                       for s, e in chains]})

    def verdicts(self, ctx):
        return [verdict("resonant_chain", None, chain,
                        criterion="consecutive pairs each near a resonance of order 1-3 in most draws")
                for chain in ctx.system.get("resonant_chains") or []]


register(ResonantChainScore)
