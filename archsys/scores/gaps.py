"""Gap complexity (Gilbert & Fabrycky 2020) and spacing uniformity, for three or more planets."""
from __future__ import annotations

from ..inference.summary import summarize
from ..physics import gap_complexity
from .registry import Column, Score, ScoreResult, register

__all__ = ["GapScore"]


class GapScore(Score):
    name = "gaps"
    order = 70
    columns = (
        Column("gap_complexity", "gap complexity C (Gilbert & Fabrycky 2020)",
               r"Gap complexity $\mathcal{C}$ (Gilbert \& Fabrycky 2020)", table="system"),
        Column("spacing_uniformity", "spacing uniformity", "Spacing uniformity", table="system"),
    )

    def applies(self, ctx):
        return len(ctx.names) >= 3

    def per_draw(self, ctx):
        P = ctx.post["period"]
        return {"gap_complexity": gap_complexity.gap_complexity(P), "spacing_uniformity": gap_complexity.spacing_uniformity(P)}

    def summarise(self, ctx, arr):
        return ScoreResult(system={"gap_complexity": summarize(arr["gap_complexity"]),
                                   "spacing_uniformity": summarize(arr["spacing_uniformity"])})


register(GapScore)
