"""Where each eccentricity and inclination comes from, as a typed value (Origin) beside its wording.

Behaviour checks of archsys's own contract (README, "The JSON document": ecc_origin, inclination_origin);
no outside source.
"""
import pickle

from archsys.inference.basis import Basis, Origin, origin_of
from archsys.model.reader import build_system
from archsys.pipeline import AnalysisOptions, analyze


def _doc(ecc_fields, mode):
    planets = [{"name": f"S {c}", "period": p, "msini": {"value": 10.0, "err": 1.0}, **f}
               for c, p, f in zip("bc", (10.0, 30.0), ecc_fields)]
    s = build_system({"name": "S", "star": {"mass": 1.0}, "planet": planets}, source="<test>")
    return analyze(s, AnalysisOptions(n_draws=200, mode=mode, seed=2)).document


def test_direct_draws_say_assumed_and_data():
    doc = _doc([{}, {"ecc": {"value": 0.1, "err": 0.02}}], "direct")
    b, c = doc["planets"]
    assert (b["ecc_origin"], b["ecc_basis"]) == ("assumed", "assumed circular")
    assert c["ecc_origin"] == "data"


def test_joint_engine_says_prior_fixed_and_data():
    doc = _doc([{}, {"ecc": {"value": 0.1}}], "mcmc")
    b, c = doc["planets"]
    assert b["ecc_origin"] == "prior" and b["ecc_basis"].startswith("prior only")
    assert b["not_constrained_by_data"] == ["ecc"]
    assert c["ecc_origin"] == "fixed"
    assert {p["inclination_origin"] for p in doc["planets"]} == {"prior"}   # no orientation data at all


def test_basis_is_its_text_and_keeps_its_source_through_pickle():
    basis = Basis("prior only (isotropic orientation)", Origin.PRIOR)
    assert basis == "prior only (isotropic orientation)" and origin_of(basis) is Origin.PRIOR
    back = pickle.loads(pickle.dumps(basis))
    assert back == basis and back.origin is Origin.PRIOR
    assert origin_of("measured") is Origin.DATA
