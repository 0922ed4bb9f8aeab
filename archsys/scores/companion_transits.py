"""Would a planet not known to transit transit?  (prediction from the architecture)

For every planet that is not known to transit (an RV-only planet, or one whose
``transiting`` flag is unset, with no impact parameter), the probability that
it transits is the fraction of posterior draws whose impact parameter
satisfies |b| < 1 + Rp/R* (Winn 2010 eq. 7).  On the MCMC path each draw
carries the joint orientation posterior (reference plane, sigma and each
orbit's tilt) and the planet's eccentricity posterior, so the fraction is the
probability given the architecture.  The isotropic probability
(R*/a)(1 + e sin w)/(1 - e^2) (Winn 2010 eq. 9), averaged over the same draws,
is given beside it: what one would say knowing nothing of the other planets.

For a hypothetical planet at any period, the probability is integrated over
the tilt model given each draw's reference plane and sigma
(:func:`archsys.physics.transit_odds.conditional_transit_probability`) and
averaged over the draws: a curve of probability against period.

Planets with ``transiting = false`` are known not to transit and are skipped.
"""
from __future__ import annotations

import numpy as np

from ..inference.summary import summarize
from ..physics import transit, transit_odds
from ..physics.constants import REARTH_AU, RSUN_AU
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["companion_transit_block", "transit_probability_curve", "candidates", "N_CURVE", "CURVE_DRAWS"]

#: Periods on the hypothetical-planet curve.
N_CURVE = 41
#: Draws used for the curve (evenly thinned; the curve is smooth in each draw).
CURVE_DRAWS = 400

ASSUMPTIONS = ("probability over the posterior draws; orbit normals tilted from the reference plane by "
               "a Rayleigh(sigma) angle at a uniform azimuth (the tool's orientation model)")


def candidates(system):
    """Indices of planets not known to transit (no ``b``, ``transiting`` not true or false)."""
    return [j for j, p in enumerate(system.planets) if p.transiting is None and "b" not in p.quantities]


def _aor(post, a, period):
    """a/R* per draw from R* or else the stellar density; NaN where neither is known."""
    rs = np.asarray(post["r_star"], dtype=float)
    rho = np.asarray(post["rho_star"], dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        from_r = a / (rs * RSUN_AU)
        from_rho = transit.a_over_rstar_from_density(rho, period)
    return np.where(np.isfinite(from_r), from_r, from_rho)


def _ror(post, j):
    """Rp/R* per draw if the posterior has the planet radius [R_earth] and R*, else None."""
    rad = post.get("radius")
    if rad is None:
        return None
    r = np.asarray(rad, dtype=float)[:, j] * REARTH_AU / (np.asarray(post["r_star"], dtype=float) * RSUN_AU)
    return r if np.isfinite(r).any() else None


def companion_transit_block(post):
    """Per-planet keys (list over all planets; ``{}`` for planets known to transit or not to transit).

    Keys: ``transit_probability`` (None with the reason in ``transit_probability_basis``
    when it cannot be computed), ``transit_probability_mc_error`` (binomial, over the
    draws), ``transit_probability_isotropic`` (Winn 2010 eq. 9 averaged over the draws),
    ``transit_impact_parameter`` (posterior of |b|) and ``transit_probability_basis``.
    """
    system = post.system
    out = [{} for _ in system.planets]
    has_transits = system.has_transits
    for j in candidates(system):
        a, P = post["a"][:, j], post["period"][:, j]
        e, w = post["ecc"][:, j], post["omega"][:, j]
        aor = _aor(post, a, P)
        ror = _ror(post, j)
        k = np.zeros_like(aor) if ror is None else ror
        radius = ("planet radius from the posterior (grazing transits count)" if ror is not None
                  else "planet radius unknown: its centre must cross the stellar disc")
        ok_iso = np.isfinite(aor) & np.isfinite(e) & np.isfinite(w) & np.isfinite(k)
        entry = {"transit_probability": None,
                 "transit_probability_isotropic": (float(np.mean(transit_odds.isotropic_transit_probability(
                     aor[ok_iso], k[ok_iso], e[ok_iso], w[ok_iso]))) if ok_iso.any() else None)}
        inc = post["inc"][:, j]
        ok = ok_iso & np.isfinite(inc)
        if not has_transits:
            entry["transit_probability_basis"] = ("no planet of the system transits: no architecture to "
                                                  "condition on (the isotropic probability applies)")
        elif not np.isfinite(aor).any():
            entry["transit_probability_basis"] = "stellar radius and density unknown: a/R* undefined"
        elif not ok.any() or post.get("psi") is None:
            entry["transit_probability_basis"] = ("no orientation posterior for this planet (direct draws); "
                                                  "run with --mode mcmc")
        else:
            b = transit.impact_parameter(aor[ok], inc[ok], e[ok], w[ok])
            prob = float(np.mean(np.abs(b) < 1.0 + k[ok]))
            n = int(ok.sum())
            entry.update(transit_probability=prob,
                         transit_probability_mc_error=float(np.sqrt(max(prob * (1 - prob), 1.0 / n) / n)),
                         transit_impact_parameter=summarize(np.abs(b)),
                         transit_probability_basis=f"{ASSUMPTIONS}; eccentricity and argument of periastron "
                                                   f"from the posterior; {radius}")
        out[j] = entry
    return out


def transit_probability_curve(post, periods=None, n=N_CURVE, max_draws=CURVE_DRAWS):
    """Probability that a hypothetical planet on a circular orbit transits, against period.

    Returns None without a reference plane and sigma in the posterior (MCMC with
    at least two planets) or without a/R*.  Otherwise a dict with
    ``period_day``, ``probability`` (posterior mean), ``lo``/``hi`` (15.87/84.13
    percentiles of the per-draw probability) and ``isotropic`` (Winn 2010 eq. 9),
    each a list over the periods.
    """
    if post.get("ref_inc") is None or post.get("sigma_mutual") is None or not post.system.has_transits:
        return None
    sub = post.subset(max_draws)
    ref, sig = np.asarray(sub["ref_inc"], float), np.asarray(sub["sigma_mutual"], float)
    if periods is None:
        Pk = np.nanmedian(post["period"], axis=0)
        periods = np.geomspace(0.5 * Pk.min(), 2.0 * Pk.max(), n)
    periods = np.asarray(periods, dtype=float)
    aor = transit_odds.hypothetical_planet_aor(periods, np.asarray(sub["m_star"], float)[:, None],
                                               np.asarray(sub["r_star"], float)[:, None],
                                               np.asarray(sub["rho_star"], float)[:, None])   # (n_sub, n_periods)
    good = np.isfinite(aor).all(axis=1) & np.isfinite(ref) & np.isfinite(sig) & (sig > 0)
    if not good.any():
        return None
    prob = transit_odds.conditional_transit_probability(aor[good], ref[good, None], sig[good, None])
    lo, hi = np.quantile(prob, [0.158655, 0.841345], axis=0)
    return {"period_day": periods.tolist(),
            "probability": prob.mean(axis=0).tolist(),
            "lo": lo.tolist(), "hi": hi.tolist(),
            "isotropic": transit_odds.isotropic_transit_probability(aor[good]).mean(axis=0).tolist(),
            "draws": int(good.sum()),
            "basis": ASSUMPTIONS + "; circular orbit, centre of the planet crossing the disc"}


class CompanionTransitScore(Score):
    table_group = "predictions"      # tables: the pair/planet predictions table (output.table_model)
    name = "companion_transits"
    order = 87
    columns = (
        Column("transit_probability", "P(transits), given the architecture", r"$P_\mathrm{tr}$", fmt="percent",
               table="planet", description="planets not known to transit (Winn 2010 condition)"),
        Column("transit_probability_isotropic", "P(transits), isotropic", r"$P_\mathrm{tr,iso}$", fmt="percent",
               table="planet", description="(R*/a)(1 + e sin w)/(1 - e^2), Winn 2010 eq. 9"),
        Column("transit_probability_mc_error", "P(transits) Monte Carlo error", r"$\sigma(P_\mathrm{tr})$",
               fmt="percent", table="planet", show=False),
        Column("transit_impact_parameter", "|b| predicted", r"$|b|$", table="planet",
               description="posterior of the impact parameter of a planet not known to transit"),
        Column("transit_probability_basis", "transit-probability basis", "Transit-probability basis",
               fmt="text", table="planet", show=False),
        Column("transit_probability_curve.period_day", "hypothetical planet: period", "Period", fmt="text",
               table="system", show=False),
        Column("transit_probability_curve.probability", "hypothetical planet: P(transits)", "Probability",
               fmt="text", table="system", show=False),
        Column("transit_probability_curve.lo", "hypothetical planet: P(transits) low", "Low", fmt="text",
               table="system", show=False),
        Column("transit_probability_curve.hi", "hypothetical planet: P(transits) high", "High", fmt="text",
               table="system", show=False),
        Column("transit_probability_curve.isotropic", "hypothetical planet: isotropic P(transits)", "Isotropic",
               fmt="text", table="system", show=False),
        Column("transit_probability_curve.draws", "transit-curve draws", "Transit-curve draws", fmt="integer",
               table="system", show=False),
        Column("transit_probability_curve.basis", "transit-curve basis", "Transit-curve basis", fmt="text",
               table="system", show=False),
    )

    def applies(self, ctx):
        return bool(candidates(ctx.post.system)) or ctx.post.get("ref_inc") is not None

    def summarise(self, ctx, arrays):
        curve = transit_probability_curve(ctx.post)
        return ScoreResult(planets=companion_transit_block(ctx.post),
                           system={} if curve is None else {"transit_probability_curve": curve})

    def verdicts(self, ctx):
        out = []
        for name, q in zip(ctx.names, ctx.planets):
            if q.get("transit_probability") is not None:
                out.append(verdict("companion_transit", q["transit_probability"], [name],
                                   criterion="transits given the architecture (|b| < 1 + Rp/R*)",
                                   citation="Winn 2010", isotropic=q.get("transit_probability_isotropic")))
        return out


register(CompanionTransitScore)
