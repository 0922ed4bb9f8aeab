"""AMD stability (Laskar & Petit 2017, with the MMR-overlap correction of Petit, Laskar & Boue 2017).

Per draw: the AMD coefficient beta of every adjacent pair (beta < 1: AMD
stable; beta = inf where the critical AMD is zero, counted as unstable) and
of the innermost planet against collision with the star.  Inclinations are
measured from the invariable plane of each draw (its total angular momentum,
as Laskar & Petit 2017 define the AMD), or zero (coplanar) when the posterior
has no orientations (:func:`archsys.inference.stability.amd_inclinations`).  Summaries keep infinite draws (see
:func:`archsys.scores.common.summarize_with_infinite`).
"""
from __future__ import annotations

import numpy as np

from ..inference.summary import probability
from ..physics import amd
from ..inference.stability import InclinationBasis, amd_inclinations
from .common import effective_mass, summarize_with_infinite
from .hill import stability_caveats
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["AmdScore", "amd_arrays", "CRITERION"]

CRITERION = "Laskar & Petit 2017 with the MMR-overlap correction of Petit, Laskar & Boue 2017"


def _defined(post):
    """Draws where AMD is defined: every mass known and positive, semi-major axes increasing."""
    m = effective_mass(post)
    return np.all(np.isfinite(m) & (m > 0), axis=1) & np.all(np.diff(post["a"], axis=1) > 0, axis=1)


def amd_arrays(post):
    """AMD coefficients per draw: (beta (n, n_pairs), beta_star (n,)), or None."""
    m = effective_mass(post)
    a, e = post["a"], post["ecc"]
    inc, _ = amd_inclinations(post, m)
    ok = _defined(post)
    if not ok.any():
        return None
    n, npair = a.shape[0], a.shape[1] - 1
    beta = np.full((n, npair), np.nan)
    beta_star = np.full(n, np.nan)
    b, bs = amd.amd_beta(m[ok], a[ok], e[ok], inc[ok], post["m_star"][ok])
    beta[ok], beta_star[ok] = b, bs
    return beta, beta_star


_INCL_TEXT = {InclinationBasis.INVARIABLE: "from the invariable plane of each draw (total angular momentum)",
              InclinationBasis.REFERENCE: "tilts from the reference plane (posterior)",
              InclinationBasis.COPLANAR: "coplanar (no orientation posterior)"}


class AmdScore(Score):
    name = "amd"
    order = 40
    verdict_order = 2
    columns = (
        Column("amd_beta", "β (AMD)", r"$\beta_\mathrm{AMD}$", description="AMD coefficient of the pair"),
        Column("amd_stable_probability", "P(AMD stable)", r"$P_\mathrm{AMD}$", fmt="percent",
               description="fraction of draws AMD stable"),
        Column("amd.system_stable_probability", "AMD-stable system", "AMD-stable system", fmt="percent",
               table="system"),
        Column("amd.inclinations", "AMD inclinations", "AMD inclinations", fmt="text", table="system"),
        Column("amd.criterion", "AMD criterion", "AMD criterion", fmt="text", table="system"),
    )

    def applies(self, ctx):
        return ctx.n_pairs >= 1 and bool(_defined(ctx.post).any())

    def per_draw(self, ctx):
        beta, beta_star = amd_arrays(ctx.post)
        return {"amd_beta": beta, "amd_beta_star": beta_star}

    def summarise(self, ctx, arr):
        beta, beta_star = arr["amd_beta"], arr["amd_beta_star"]
        pairs = []
        for p in range(ctx.n_pairs):
            b = beta[:, p]
            ok = ~np.isnan(b)          # beta = inf (zero critical AMD) counts as unstable
            pairs.append({"amd_beta": summarize_with_infinite(b),
                          "amd_stable_probability": probability(b[ok] < 1.0) if ok.any() else None})
        ok = ~np.isnan(beta_star)
        system = {"amd": {
            "system_stable_probability": probability(np.all(beta[ok] < 1, axis=1) & (beta_star[ok] < 1))
            if ok.any() else None,
            "inclinations": _INCL_TEXT[amd_inclinations(ctx.post)[1]],
            "criterion": CRITERION,
        }}
        return ScoreResult(pairs=pairs, system=system)

    def verdicts(self, ctx):
        b = ctx.system.get("amd") or {}
        if b.get("system_stable_probability") is None:
            return []
        caveats = stability_caveats(ctx)
        basis = amd_inclinations(ctx.post)[1]
        if basis is InclinationBasis.COPLANAR:
            caveats.append("coplanar_amd")
        elif basis is InclinationBasis.REFERENCE:
            caveats.append("reference_plane_amd")
        return [verdict("amd_stable_system", b["system_stable_probability"], ctx.names,
                        criterion="AMD stability of every adjacent pair and of the innermost planet",
                        citation="Laskar & Petit 2017; Petit, Laskar & Boue 2017", caveats=caveats)]


register(AmdScore)
