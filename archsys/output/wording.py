"""The English of the reports: verdict sentences, caveats and the priors that ran.

Scores produce structured verdicts (code, subjects, probability, criterion,
citation, caveat codes; see :func:`archsys.scores.registry.verdict`); this
module is the one place that turns them into sentences.  Percentages go through
:func:`archsys.output.numbers.fmt_percent`, the formatter every table uses, so a
verdict and a table cell never disagree.
"""
from __future__ import annotations

from .numbers import fmt_percent, short_name

__all__ = ["verdict_sentences", "verdict_sentence", "prior_lines", "unconstrained_planets", "ORDER_WORD",
           "DISCLAIMER_AMD", "dynamics_sentence", "DYNAMICS_CLASS_WORDS", "DOMAIN_WORDS"]

ORDER_WORD = {1: "first", 2: "second", 3: "third"}
DISCLAIMER_AMD = ("A sufficient condition: failing it means collisions are not excluded by secular dynamics, "
                  "not that they happen.")

#: The verdict classes of the dynamical assessment (archsys.scores.dynamics.CLASSES), in words.
DYNAMICS_CLASS_WORDS = {
    "stable_analytic": "stable by analytic criterion",
    "regular_nbody": "regular over the N-body horizon",
    "chaotic_survived": "chaotic but survived the N-body horizon",
    "unstable_nbody": "unstable: close encounters within the N-body horizon",
    "mixed_nbody": "inconclusive: integrated draws split between outcomes",
    "not_proven_stable": "not proven stable",
}
#: Why a system is outside the domain of the analytic criteria (archsys.scores.dynamics.REASONS).
DOMAIN_WORDS = {
    "near_resonance": "pairs near resonance",
    "compact_three_or_more": "three or more planets closer than 12 mutual Hill radii or period ratio 1.5",
    "failed_sufficient_criterion": "a sufficient criterion fails in some draws",
    "near_hill_boundary": "a pair near the Hill-stability boundary",
    "unknown_masses": "planet masses unknown",
}
_NOT_RUN = {"turned_off": "no N-body integration ran (--nbody 0)",
            "rebound_missing": "no N-body integration ran (rebound is not installed: pip install 'archsys[nbody]')",
            "inside_domain": "no N-body integration was needed"}


def _horizon(h):
    if not h:
        return ""
    med = lambda x: (x or {}).get("median", 0) if isinstance(x, dict) else (x or 0)  # noqa: E731
    return (f"{h.get('inner_orbits', 0):.3g} orbits of the innermost planet = {med(h.get('outer_orbits')):.3g} of "
            f"the outermost = {med(h.get('years')):.3g} yr")


def dynamics_sentence(doc, v):
    """The dynamical assessment (one verdict of code ``dynamical_assessment``) in words."""
    b = doc.get("dynamics") or {}
    d = v.get("details") or {}
    cls = d.get("class") or b.get("class")
    head = "Dynamics: " + DYNAMICS_CLASS_WORDS.get(cls, str(cls))
    nb = b.get("nbody") or {}
    reasons = [DOMAIN_WORDS.get(r, r) for r in (b.get("outside_domain") or [])]
    ap = fmt_percent(b.get("analytic_pass_probability"))
    n = nb.get("draws")
    if cls == "stable_analytic":
        s = (f"{head} — the sufficient conditions (Gladman 1993 Hill stability of every adjacent pair; AMD "
             f"stability, Laskar & Petit 2017) hold in {ap} of draws, inside their domain.")
    elif cls == "not_proven_stable":
        why = _NOT_RUN.get(b.get("nbody_not_run") or d.get("nbody_not_run"), "no N-body integration ran")
        s = (f"{head} — outside the domain of the analytic criteria ({_join(reasons) or 'see the criteria'}) and "
             f"{why}; the sufficient criteria hold in {ap} of draws, which proves nothing here, and failing "
             "them is not instability.")
    elif cls in ("regular_nbody", "chaotic_survived", "unstable_nbody", "mixed_nbody"):
        parts = (f"of {n} integrated draws, {fmt_percent(nb.get('regular_probability'))} regular (MEGNO < 2.5, no "
                 f"event), {fmt_percent(nb.get('chaotic_survived_probability'))} chaotic but surviving, "
                 f"{fmt_percent(nb.get('event_probability'))} with a close encounter (< 1 mutual Hill radius), "
                 f"orbit crossing or escape")
        s = f"{head} — {parts}; horizon {_horizon(nb.get('horizon'))}."
        if cls == "chaotic_survived":
            s += " Chaos is not instability, but survival beyond the horizon is not established."
        if reasons:
            s += f" Integrated because: {_join(reasons)}."
        s += f" The analytic criteria hold in {ap} of draws."
    else:
        s = head + "."
    t = (b.get("instability_time") or {})
    for key, est in t.items():
        lt = (est.get("log10_inner_orbits") or {}).get("median")
        if lt is None:
            continue
        what = ("estimated instability time" if key == "compact_three_body"
                else "minimum time before Lagrange instability")
        s += f" Published {what}: ~10^{lt:.1f} inner orbits ({est.get('citation')}; {est.get('domain')})."
    return s


def _order(k):
    try:
        return ORDER_WORD.get(int(k), f"order-{int(k)}")
    except (TypeError, ValueError):
        return "unknown-order"


def _likely(p, yes="likely", no="unlikely"):
    if p is None:
        return "unknown"
    return yes if p >= 0.95 else no if p <= 0.05 else "uncertain"


def _names(doc, names):
    sysname = doc.get("system", "")
    return [short_name(n, sysname) for n in names]


def _pair(doc, subjects):
    return "–".join(_names(doc, subjects))


def _join(xs):
    return ", ".join(xs)


def unconstrained_planets(doc, what="ecc"):
    """Short names of planets whose ``what`` ("ecc") comes from the prior or an assumption, not data.

    Returns ``{"prior": [...], "assumed": [...], "loose": [...]}``: eccentricities
    from the prior alone (``ecc_origin`` "prior": no eccentricity data), those
    assumed circular (``ecc_origin`` "assumed"), and measured ones whose 68 %
    interval is nearly as wide as the prior's (``not_constrained_by_data``).
    """
    out = {"prior": [], "assumed": [], "loose": []}
    key = {"ecc": "ecc_origin", "inc": "inclination_origin"}[what]
    for p in doc.get("planets", []):
        source = p.get(key)
        name = short_name(p.get("name", "?"), doc.get("system", ""))
        if source == "prior":
            out["prior"].append(name)
        elif source == "assumed":
            out["assumed"].append(name)
        elif what in (p.get("not_constrained_by_data") or []):
            out["loose"].append(name)
    return out


def _caveat_sentences(doc, v):
    caveats = v.get("caveats") or []
    out = []
    ecc = unconstrained_planets(doc)
    if "assumed_circular" in caveats and ecc["assumed"]:
        noun = "AMD" if v["code"] == "amd_stable_system" else "this verdict"
        out.append(f"This rests on the assumption that {_join(ecc['assumed'])} "
                   f"{'is' if len(ecc['assumed']) == 1 else 'are'} on circular orbits (no eccentricity data): "
                   f"{noun} is computed from assumed, not measured, eccentricities.")
    if "prior_only_eccentricity" in caveats and ecc["prior"]:
        out.append(f"Not constrained by the data: the eccentricities of {_join(ecc['prior'])} are the prior's "
                   "(no eccentricity data), and they drive this verdict.")
    if "weak_eccentricity" in caveats and ecc["loose"]:
        out.append(f"Barely constrained by the data: the eccentricities of {_join(ecc['loose'])} have 68 % "
                   "intervals nearly as wide as the prior's, and they drive this verdict.")
    if "minimum_masses" in caveats:
        mins = [short_name(p.get("name", "?"), doc.get("system", "")) for p in doc.get("planets", [])
                if str(p.get("mass_basis", "")).startswith("minimum")]
        if mins:
            out.append(f"{_join(mins)} {'has' if len(mins) == 1 else 'have'} only m sin i, used as the mass, "
                       "so the Hill spacings involving "
                       f"{'it' if len(mins) == 1 else 'them'} are upper limits.")
    if "uniform_phases" in caveats:
        nb = (doc.get("dynamics") or {}).get("nbody") or {}
        who = _join(_names(doc, nb.get("phases_uniform") or []))
        near = "near_resonance" in ((doc.get("dynamics") or {}).get("outside_domain") or [])
        out.append(f"Phases drawn uniformly for {who} (no transit time, periastron time or mean longitude given)"
                   + (": near resonance, survival depends on the phases, so give them where known." if near
                      else "."))
    if "stable_by_construction" in caveats:
        cond = ((doc.get("sampler") or {}).get("stability_conditioning") or {})
        if cond:
            out.append(f"Stable by construction (--require-stable --stable-by nbody): the posterior keeps the "
                       f"{cond.get('survived')} of {cond.get('integrated')} integrated draws that survived "
                       f"{cond.get('horizon_inner_orbits', 0):.3g} inner orbits, so stability here is imposed, not found.")
        else:
            out.append("Stable by construction (--require-stable): the Hill + AMD criterion is a prior, so the "
                       "criteria hold by construction, not as a finding.")
    if "nbody_budget" in caveats:
        nb = (doc.get("dynamics") or {}).get("nbody") or {}
        out.append(f"The work budget (--nbody-budget) cut the integration to {nb.get('integrated')} of "
                   f"{nb.get('requested')} draws.")
    if "prior_only_orientation" in caveats:
        out.append("The orientations are prior only: the data do not constrain this.")
    return out


def verdict_sentence(doc, v, said=None):
    """One verdict (a structured verdict mapping) as an English sentence, caveats appended.

    ``said``: a set of caveat sentences already given (each is given once per report).
    """
    code, p, subj = v.get("code", ""), v.get("probability"), v.get("subjects") or []
    pct = fmt_percent(p)
    cite = v.get("citation") or ""
    if code == "dynamical_assessment":
        s = dynamics_sentence(doc, v)
    elif code == "hill_stable_all_pairs" and p is None:
        s = f"Hill criterion ({cite}) for every adjacent pair: cannot be assessed (a planet mass is unknown)."
    elif code == "hill_stable_all_pairs":
        s = f"Hill criterion ({cite}) met by every adjacent pair in {pct} of draws"
        s += (" (a pairwise test: not sufficient for three or more planets)." if len(doc.get("planets", [])) >= 3
              else " (sufficient against close encounters of the two planets; failing it is not instability).")
    elif code == "amd_stable_system":
        cv = v.get("caveats") or []
        incl = ("coplanar orbits: no orientation posterior" if "coplanar_amd" in cv else
                "tilts from the reference plane" if "reference_plane_amd" in cv else
                "inclinations from the invariable plane")
        s = f"AMD criterion met in {pct} of draws ({cite}; {incl}). {DISCLAIMER_AMD}"
    elif code == "near_resonance":
        d = v.get("details") or {}
        s = f"{_pair(doc, subj)} near the {d.get('mmr', '?')} ({_order(d.get('order'))}-order) resonance in {pct} of draws"
        if d.get("nearest_mmr") and d.get("nearest_mmr") != d.get("mmr"):
            s += f"; the nearest tabulated resonance is {d['nearest_mmr']} ({_order(d.get('nearest_order'))} order)"
        if d.get("libration_fraction") is not None:
            s += (f"; its resonant angles librate in {fmt_percent(d['libration_fraction'])} of integrated draws "
                  "(in resonance), circulate in the rest")
        s += "."
    elif code == "resonant_chain":
        s = "Resonant chain: " + " – ".join(_names(doc, subj)) + " (consecutive pairs each near a resonance)."
    elif code == "three_body_relation":
        d = v.get("details") or {}
        res = d.get("residual")
        res = res.get("median") if isinstance(res, dict) else res
        s = (f"Three-body relation {d.get('relation')} for {_join(_names(doc, subj))} (residual "
             f"{100 * float(res or 0):.2f} % of the middle mean motion)")
        s += (f"; its angle librates in {pct} of integrated draws." if p is not None else
              "; libration not tested (no integration).")
    elif code == "resonance_overlap":
        s = (f"{_pair(doc, subj)} inside the first-order resonance-overlap (chaotic) zone in {pct} of draws "
             f"({cite}).")
    elif code == "flat_within_5_deg":
        s = f"All orbits within 5° of a common plane in {pct} of draws."
    elif code == "close_spacing_heuristic":
        s = (f"Closest pair below 10 mutual Hill radii in {pct} of draws: for three or more planets this is "
             f"often unstable on Gyr time-scales (heuristic; {cite}).")
    elif code == "system_packed":
        s = (f"System packed (no gap can hold a test planet by the Hill-spacing, Gladman and AMD criteria) in "
             f"{pct} of draws ({cite}); an estimate from analytic criteria, not a guarantee.")
    elif code == "companion_transit":
        iso = (v.get("details") or {}).get("isotropic")
        s = (f"{_join(_names(doc, subj))} transits in {pct} of draws given the architecture ("
             + (f"isotropic: {fmt_percent(iso)}; " if iso is not None else "") + f"{cite}).")
    else:                       # a score without wording yet: its code and criterion, never dropped
        who = _join(_names(doc, subj))
        s = f"{v.get('criterion') or code}" + (f" ({who})" if who else "") + \
            (f": {pct} of draws" if p is not None else "") + (f" ({cite})" if cite else "") + "."
    said = set() if said is None else said
    extra = [c for c in _caveat_sentences(doc, v) if c not in said]
    said.update(extra)
    return " ".join([s] + extra)


def verdict_sentences(doc, structured):
    """Sentences of every structured verdict, in order (each caveat given once)."""
    said = set()
    return [verdict_sentence(doc, v, said) for v in structured or []]


def prior_lines(doc):
    """Which priors ran, as sentences (every format states them)."""
    prov = doc.get("provenance") or {}
    priors = prov.get("priors") or {}
    method = str((doc.get("sampler") or {}).get("method", ""))
    out = []
    for q, pr in priors.items():
        what = {"eccentricity": "eccentricity", "mutual_inclination_sigma": "mutual-inclination dispersion σ",
                "stability": "stability"}.get(q, q.replace("_", " "))
        if isinstance(pr, dict):
            text = str(pr.get("name", "?")) + (f" ({pr['citation']})" if pr.get("citation") else "")
            if pr.get("from_memory"):
                text += " [numbers from memory]"
            if pr.get("default"):
                text += " — the default"
        else:
            text = str(pr)
        out.append(f"Prior on {what}: {text}.")
    if not priors:
        if "direct" not in method.lower():
            out.append("Priors: not recorded by the sampler.")
        else:
            out.append("Priors: none beyond the input summaries (direct draws of each summary within its "
                       "physical range); planets without eccentricity data are taken as circular.")
    ecc = unconstrained_planets(doc)
    if ecc["prior"]:
        out.append(f"Not constrained by the data (prior only): eccentricity of {_join(ecc['prior'])}.")
    if ecc["loose"]:
        out.append(f"Barely constrained by the data (68 % interval nearly as wide as the prior's): "
                   f"eccentricity of {_join(ecc['loose'])}.")
    if ecc["assumed"]:
        out.append(f"Assumed, not measured: circular orbits for {_join(ecc['assumed'])}.")
    return out


# --------------------------------------------------------------------------- what a number rests on
# (posterior usability, imposed constraints, prior-driven verdicts, data-or-prior marks)

_STATUS_REASONS = {
    "khat": "the Pareto k̂ of the final importance weights is {khat} > 0.7, so the effective sample size is "
            "unreliable and intervals may be biased (Vehtari et al. 2024)",
    "chain_not_converged": "an MCMC chain stopped before its target length in autocorrelation times",
    "ess_below_half": "the effective sample size {ess} is below half of the {n} draws",
    "low_ess": "the effective sample size {ess} is below the {need} a usable posterior needs",
}


def _fmt_count(x):
    try:
        x = float(x)
    except (TypeError, ValueError):
        return "?"
    return f"{x:.0f}" if x >= 10 else f"{x:.2g}"


def status_line(doc):
    """The line a report opens with when its posterior is not fully usable, or None.

    Unusable: it says so and that no intervals or verdicts are shown.  Rough: what failed.
    """
    st = doc.get("posterior_usability") or {}
    status = st.get("status")
    if status not in ("unusable", "rough"):
        return None
    prov = doc.get("provenance") or {}
    imp = (doc.get("sampler") or {}).get("importance") or {}
    vals = {"ess": _fmt_count(st.get("effective_sample_size")), "need": _fmt_count(st.get("required_effective_sample_size")),
            "n": prov.get("draws", "?"), "khat": st.get("pareto_khat")}
    why = [_STATUS_REASONS[r].format(**vals) for r in st.get("reasons", []) if r in _STATUS_REASONS]
    if status == "unusable":
        src = f" from {imp['proposals']} proposals" if imp.get("proposals") else ""
        return (f"UNUSABLE POSTERIOR: effective sample size {vals['ess']}{src}, below the {vals['need']} "
                f"needed (README, 'Usable posteriors'); no intervals or verdicts are shown.")
    return "Rough posterior: " + "; ".join(why) + "; treat intervals as rough."


def unusable_verdict_line(doc):
    """The single verdict line of an unusable posterior."""
    st = doc.get("posterior_usability") or {}
    return (f"No verdicts: the posterior rests on an effective sample size of "
            f"{_fmt_count(st.get('effective_sample_size'))} draws, too few for any probability.")


#: Constraint codes -> the words that name them where a result rests on them.
CONSTRAINT_WORDS = {"require_stable": "stable by construction: --require-stable"}


def verdict_tags(doc, v):
    """Short bracketed tags that open a verdict sentence: imposed constraints and prior-driven inputs."""
    tags = [CONSTRAINT_WORDS.get(c, c) for c in v.get("constraints") or []]
    if "prior_only_eccentricity" in (v.get("caveats") or []):
        ecc = unconstrained_planets(doc)["prior"]
        if ecc:
            prov = doc.get("provenance") or {}
            pr = (prov.get("priors") or {}).get("eccentricity_without_data") or {}
            name = pr.get("name") if isinstance(pr, dict) else None
            tags.append(f"rests on the {'default ' if not (prov.get('options') or {}).get('ecc_prior') else ''}"
                        f"eccentricity prior{' ' + name if name else ''} for {_join(ecc)}")
    return tags


def tagged(sentence, tags):
    return (f"[{'; '.join(tags)}] " if tags else "") + sentence


#: Data-or-prior classes (``archsys.inference.dataprior``) -> table mark and its note.
DATA_PRIOR_MARKS = {"prior": ("†", "† set by the prior: the 68 % interval is at least 80 % as wide as the "
                                    "prior's (posterior-to-prior width ratio; README, 'Data or prior?')."),
                    "mixed": ("¶", "¶ partly set by the prior: the 68 % interval is 50–80 % as wide as the "
                                    "prior's.")}
CONSTRAINT_MARK = ("‖", "‖ imposed, not measured: the posterior keeps only stable draws (--require-stable).")
WITHHELD_NOTE = "Values withheld: the posterior is unusable (see the first line); the JSON keeps its summaries."
