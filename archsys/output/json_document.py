"""The report document: the JSON contract of ``archsys report --json``.

Keys are stable; later versions only add keys.  Every uncertain number is an
object ``{"median", "lo", "hi"}`` (the 15.87 / 50 / 84.13 percentiles of the
draws); ``null`` means the quantity cannot be derived from the inputs.
Nothing in the document depends on the clock, so the same input and seed give
byte-identical JSON.
"""
from __future__ import annotations

import functools
import platform

import math

import numpy as np

from ..version import __version__
from ..inference.basis import Origin, origin_of
from ..inference.dataprior import posterior_measures
from ..inference.summary import summarize, summarize_angle
from ..inference.usability import posterior_status
from ..physics.constants import MEARTH_MSUN
from ..scores.common import barely_constrained, flat_ecc_prior
from .wording import tagged, unusable_verdict_line, verdict_sentences, verdict_tags

__all__ = ["build_document", "DISCLAIMER", "SCHEMA_VERSION"]

SCHEMA_VERSION = 1
DISCLAIMER = ("Stability and resonance verdicts are statistical estimates over the posterior "
              "draws, not guarantees of long-term dynamical behaviour.")


@functools.lru_cache(maxsize=1)
def _emcee_version():
    """emcee's version without importing it (a fast-mode survey worker never samples; emcee pulls in
    scipy.stats, a third of a second of the worker's start-up)."""
    import sys
    if "emcee" in sys.modules:
        return sys.modules["emcee"].__version__
    from importlib.metadata import PackageNotFoundError, version
    try:
        return version("emcee")
    except PackageNotFoundError:  # pragma: no cover - not installed as a distribution
        import emcee
        return emcee.__version__


def _versions():
    import astropy
    import scipy
    return {"archsys": __version__, "python": platform.python_version(), "numpy": np.__version__,
            "scipy": scipy.__version__, "astropy": astropy.__version__, "emcee": _emcee_version()}


def _planet_entry(post, j, pl):
    d = post.draws
    note = post.notes.get(pl.name, {})
    entry = {"name": pl.name, "period_days": summarize(d["period"][:, j]),
             "a_au": summarize(d["a"][:, j])}
    mass, msini = d["mass"][:, j], d["msini"][:, j]
    basis = note.get("mass")
    if np.isfinite(mass).any():
        entry["mass_mearth"] = summarize(mass, 1.0 / MEARTH_MSUN)
    if np.isfinite(msini).any():
        entry["msini_mearth"] = summarize(msini, 1.0 / MEARTH_MSUN)
    entry["mass_basis"] = basis or "unknown (no K, mass or radius)"
    ecc_basis = note.get("ecc", "")
    if origin_of(ecc_basis) is not Origin.ASSUMED or post.method != "direct":
        entry["ecc"] = summarize(d["ecc"][:, j])
    entry["ecc_basis"] = str(ecc_basis)
    entry["ecc_origin"] = origin_of(ecc_basis).value
    if post.method != "direct" or "omega" in pl.quantities or ecc_basis.startswith("from"):
        entry["omega_deg"] = summarize_angle(np.degrees(d["omega"][:, j]))
    if np.isfinite(d["inc"][:, j]).any():
        entry["inclination_deg"] = summarize(np.degrees(d["inc"][:, j]))
        entry["inclination_basis"] = str(note.get("inc", ""))
        entry["inclination_origin"] = origin_of(note.get("inc", "")).value
    radius = post.get("radius")
    if radius is not None and np.isfinite(np.asarray(radius, dtype=float)[:, j]).any():
        entry["radius_rearth"] = summarize(np.asarray(radius, dtype=float)[:, j])
    if pl.transiting is not None:
        entry["transiting"] = pl.transiting
    node = d.get("node")      # a sky node given in the input (elsewhere it is a model convention, not data)
    if node is not None and "ascending_node" in pl.quantities and np.isfinite(node[:, j]).all():
        entry["node_deg"] = summarize_angle(np.degrees(node[:, j]))
    loose = _not_constrained(note.get("ecc", ""), entry, post, j)
    if loose:
        entry["not_constrained_by_data"] = loose
    limit = _ecc_limit(pl, entry, post, j, loose)
    if limit:
        entry["ecc_limit"] = limit
    estimated = _estimated(pl, entry, loose)
    if estimated:
        entry["estimated"] = estimated
    return entry


#: Confidence level of an eccentricity shown as an upper limit (common practice: 95 %).
LIMIT_CL = 0.95


def _ecc_limit(pl, entry, post, j, loose):
    """``{"upper", "probability"}``: the posterior's 95th percentile of e, where the input gave only an upper
    limit on e or the data do not constrain it (then a median would suggest a measurement)."""
    if "ecc" not in entry:
        return None
    q = pl.quantities.get("ecc")
    if not ((q is not None and q.kind == "upper") or "ecc" in loose):
        return None
    e = np.asarray(post["ecc"][:, j], dtype=float)
    e = e[np.isfinite(e)]
    if e.size == 0:
        return None
    return {"upper": float(np.quantile(e, LIMIT_CL)), "probability": LIMIT_CL}


#: Codes of ``estimated``: why a planet's value is an estimate rather than a measurement.
ESTIMATE_CODES = ("mass_radius_relation", "prior_inclination", "prior_dominated")


def _estimated(pl, entry, loose):
    """``{document key: code}`` of the planet's values that rest on a relation or a prior, not on its
    data (decided from the input quantities, never from wording): masses from the mass-radius
    relation, sky inclinations (and true masses through them) with no orientation data of the
    planet's own, and values the data leave prior-dominated."""
    q = pl.quantities
    out = {}
    mass_data = any(k in q for k in ("mass", "msini", "k"))
    if not mass_data and "mass_mearth" in entry:
        out["mass_mearth"] = "mass_radius_relation"
    own_orientation = bool(pl.transiting) or any(k in q for k in ("b", "inclination"))
    if not own_orientation and "inclination_deg" in entry:
        out["inclination_deg"] = "prior_inclination"
        if "mass_mearth" in entry and "mass" not in q and "mass_mearth" not in out:
            out["mass_mearth"] = "prior_inclination"
    for key in loose:
        out.setdefault(key, "prior_dominated")
    omega_data = any(k in q for k in ("omega", "secosw", "sesinw", "ecosw", "esinw"))
    w = entry.get("omega_deg")
    if w and (not omega_data or "ecc" in out or (w["hi"] - w["lo"]) >= OMEGA_LOOSE_DEG):
        out["omega_deg"] = "prior_dominated"
    return out


#: An omega whose central 68.3 % interval is at least 80 % as wide as the uniform prior's
#: (0.683 x 360 deg) is not constrained by the data (the same 80 % rule as the eccentricities).
OMEGA_LOOSE_DEG = 0.8 * 0.6827 * 360.0


def _not_constrained(ecc_note, entry, post, j):
    """Document keys of a planet whose values come from the prior rather than the data."""
    source = origin_of(ecc_note)
    if source is Origin.PRIOR or ("ecc" in entry and source is Origin.DATA
                                  and barely_constrained(post["ecc"][:, j], flat_ecc_prior(post))):
        return ["ecc"]
    return []


def _priors_that_ran(post, opts):
    """The posterior's prior record, or (when the sampler recorded none) the priors its options select."""
    if post.prior or post.method == "direct":
        return post.prior
    from ..inference.prior_choice import resolve_priors
    out = {}
    names = {"eccentricity": getattr(opts, "ecc_prior", None),
             "mutual_inclination_sigma": getattr(opts, "incl_prior", None)}
    try:
        choice = resolve_priors(opts)
    except Exception:                      # a prior that cannot be read here is still named
        choice = None
    for q, name in names.items():
        if choice is None:
            out[q] = {"name": str(name)}
            continue
        pr = choice.applied(q)
        out[q] = {"name": pr.name, "citation": pr.citation, "from_memory": bool(pr.from_memory),
                  "default": not name}
    if getattr(opts, "require_stable", False):
        out["stability"] = ("survival of each draw over the N-body horizon (--stable-by nbody; importance weights "
                            "0/1 over the integrated draws)" if getattr(opts, "stable_by", "analytic") == "nbody" else
                            "Hill (Gladman 1993) and AMD (Laskar & Petit 2017) stability of every adjacent pair")
    return out


def build_document(res) -> dict:
    """JSON-ready document of one analysis (see module docstring for the contract)."""
    post, sysm, sc = res.posterior, res.system, res.scores
    d = post.draws
    usability = posterior_status(post.sampler, post.n_draws)
    dp_planets, dp_system = posterior_measures(post)
    star = {"mass_msun": summarize(d["m_star"])}
    if sysm.star.radius is not None:
        star["radius_rsun"] = summarize(d["r_star"])
    if sysm.star.density is not None:
        star["density_gcc"] = summarize(d["rho_star"])
    doc = {
        "posterior_usability": usability,
        "schema_version": SCHEMA_VERSION,
        "system": sysm.name,
        "star": star,
        "planets": [{**_planet_entry(post, j, pl), **extra}
                    for j, (pl, extra) in enumerate(zip(sysm.planets, sc.get("planets") or [{}] * sysm.n_planets))],
        "pairs": sc["pairs"],
    }
    for entry in doc["planets"]:
        if entry["name"] in dp_planets:
            entry["data_or_prior"] = dp_planets[entry["name"]]
    doc.update({k: v for k, v in sc["system"].items()})
    if dp_system:
        doc["data_or_prior"] = dp_system
    structured = _finite(sc.get("verdicts", []))
    constraints = _constraints(res.options)
    for v in structured:
        if constraints:
            v["constraints"] = list(constraints)
    doc["provenance"] = {"priors": _priors_that_ran(post, res.options),
                         "options": res.options.as_dict()}        # read by the wording (replaced below)
    if usability["usable"]:
        doc["verdicts"] = [tagged(s, verdict_tags(doc, v))
                           for s, v in zip(verdict_sentences(doc, structured), structured)]
    else:
        doc["verdicts"] = [unusable_verdict_line(doc)]
    del doc["provenance"]                     # (its final place is at the end)
    doc["structured_verdicts"] = structured
    dyn = [t for v, t in zip(structured, doc["verdicts"]) if v.get("code") == "dynamical_assessment"]
    if dyn and isinstance(doc.get("dynamics"), dict):
        doc["dynamics"]["verdict"] = dyn[0]     # the headline of every format
    doc["sampler"] = dict(post.sampler)
    doc["disclaimer"] = DISCLAIMER
    doc["provenance"] = {
        "input_file": sysm.source,
        "input_sha256": sysm.sha256,
        "seed": res.options.seed,
        "draws": post.n_draws,
        "options": res.options.as_dict(),
        "priors": _priors_that_ran(post, res.options),
        "package_version": __version__,
        "versions": _versions(),
    }
    return _finite(doc)


def _constraints(opts):
    """Codes of the constraints imposed on the posterior (named wherever a result rests on them)."""
    return ("require_stable",) if getattr(opts, "require_stable", False) else ()


def _finite(obj):
    """Replace non-finite floats by None: a report never contains NaN or infinity."""
    t = type(obj)
    if t is dict:
        return {k: _finite(v) for k, v in obj.items()}
    if t is float:
        return obj if math.isfinite(obj) else None
    if t is str or t is int or t is bool or obj is None:
        return obj
    if t is list or t is tuple:
        return [_finite(v) for v in obj]
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    if isinstance(obj, np.generic):
        return _finite(obj.item())
    return obj
