"""One notion of a usable posterior, shared by the engine, the document and every report format.

A posterior is judged from its sampler record (``Posterior.sampler``) alone:

* **unusable** — fewer than :func:`required_ess` effective draws: at least
  :data:`USABLE_ESS` (100), or every requested draw when fewer were requested.
  Its intervals and probabilities rest on a handful of distinct draws; the
  reports say so in their first line, show no intervals and no verdicts, and
  ``archsys report --strict`` exits with status 3.  The threshold follows
  Vehtari et al. 2021 [Vehtari2021], who ask for an effective sample size
  above 100 per chain before quantiles are trusted.
* **rough** — usable, but a diagnostic fails: the Pareto k-hat of the final
  importance weights is above :data:`KHAT_MAX` (0.7; Vehtari et al. 2024
  [Vehtari2024]: the effective sample size itself is then unreliable and
  estimates may be biased), an orientation chain stopped before its target
  length, or the effective sample size is below half the requested draws.
  The reports say which in their first line and show the intervals.
* **ok** — none of the above; ``sampler.converged`` is true only here.

Status and reasons are structured (:class:`Status`, reason codes); English is
written by :mod:`archsys.output.wording`.
"""
from __future__ import annotations

import math
from enum import Enum

__all__ = ["Status", "USABLE_ESS", "KHAT_MAX", "required_ess", "assess", "posterior_status"]

#: Smallest effective sample size of a usable posterior (Vehtari et al. 2021: > 100 per chain).
USABLE_ESS = 100
#: Pareto k-hat above which importance weights are not trusted (Vehtari et al. 2024).
KHAT_MAX = 0.7
#: Below this share of the requested draws the effective sample size makes a posterior "rough".
ROUGH_SHARE = 0.5


class Status(str, Enum):
    OK = "ok"
    ROUGH = "rough"
    UNUSABLE = "unusable"


def required_ess(n_draws) -> float:
    """Effective draws needed for a usable posterior: USABLE_ESS, or all requested draws if fewer."""
    return float(min(USABLE_ESS, int(n_draws)))


def assess(ess, n_draws, khat=None, chain_converged=True) -> dict:
    """Structured verdict on a posterior: ``{"status", "usable", "reasons", "effective_sample_size",
    "required_effective_sample_size"}`` (reason codes: ``low_ess``, ``khat``, ``chain_not_converged``,
    ``ess_below_half``)."""
    ess = float(ess) if ess is not None and math.isfinite(float(ess)) else 0.0
    need = required_ess(n_draws)
    reasons = []
    if ess < need:
        reasons.append("low_ess")
    if khat is not None and not (float(khat) <= KHAT_MAX):
        reasons.append("khat")
    if not chain_converged:
        reasons.append("chain_not_converged")
    if ess < ROUGH_SHARE * int(n_draws) and "low_ess" not in reasons:
        reasons.append("ess_below_half")
    status = Status.UNUSABLE if "low_ess" in reasons else Status.ROUGH if reasons else Status.OK
    out = {"status": status.value, "usable": status is not Status.UNUSABLE, "reasons": reasons,
           "effective_sample_size": round(ess, 1), "required_effective_sample_size": need}
    if khat is not None:
        out["pareto_khat"] = round(float(khat), 3) if math.isfinite(float(khat)) else None
    return out


def posterior_status(sampler, n_draws) -> dict:
    """The assessment of a sampler record (a document's ``sampler`` block or ``Posterior.sampler``).

    Uses the record's own ``usability`` block when the engine wrote one; otherwise
    (direct draws, the v0.1.0 baseline, documents of older versions) it is derived
    from ``min_n_eff`` and ``converged``.
    """
    smp = sampler or {}
    if isinstance(smp.get("usability"), dict) and "status" in smp["usability"]:
        return smp["usability"]
    ess = smp.get("min_n_eff")
    if ess is None:
        ess = n_draws                     # independent direct draws: every draw counts
    return assess(ess, n_draws, None, smp.get("converged", True) is not False)
