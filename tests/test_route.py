"""The one decision between direct draws and the joint engine, and the reasons the report gives for it.

Behaviour checks of archsys's own rule (no outside source): the path and its "why" come from one function,
so they cannot disagree (they did once: a single planet with a measured node ran the joint engine while the
report said "orbits cross").
"""
from archsys.inference.draws import DIRECT_WHY
from archsys.inference.route import PathReason, choose_path
from archsys.model.reader import build_system
from archsys.pipeline import AnalysisOptions, analyze


def _system(*planets):
    return build_system({"name": "R", "star": {"mass": 1.0, "radius": 1.0},
                         "planet": [dict(name=f"R {c}", **p) for c, p in zip("bcdef", planets)]}, source="<test>")


def test_single_planet_with_a_node_runs_joint_and_says_so():
    s = _system({"period": 50.0, "msini": {"value": 10.0, "err": 1.0},
                 "ascending_node": {"value": 30.0, "err": 5.0}, "inclination": {"value": 60.0, "err": 5.0}})
    choice = choose_path(s, AnalysisOptions())
    assert choice.joint and choice.reasons == (PathReason.NODES,)
    res = analyze(s, AnalysisOptions(n_draws=200, seed=1))
    assert res.posterior.method == "joint"
    assert res.document["sampler"]["why"] == choice.why
    assert "node" in choice.why and "cross" not in choice.why


def test_independent_rv_planet_is_drawn_directly_with_its_reason():
    s = _system({"period": 50.0, "k": {"value": 30.0, "err": 2.0}, "ecc": {"value": 0.2, "err": 0.05}})
    choice = choose_path(s, AnalysisOptions())
    assert not choice.joint and choice.why == DIRECT_WHY
    assert analyze(s, AnalysisOptions(n_draws=100)).document["sampler"]["why"] == DIRECT_WHY


def test_every_binding_reason_is_listed_in_order():
    transiting = {"period": 10.0, "transiting": True, "b": {"value": 0.3, "err": 0.1},
                  "ror": {"value": 0.02, "err": 0.001}}
    s = _system(transiting, {**transiting, "period": 17.0}, {"period": 60.0, "transiting": False,
                                                             "msini": {"value": 8.0, "err": 1.0}})
    opts = AnalysisOptions(mode="mcmc", require_stable=True, ecc_prior="ecc-kipping2013-rv")
    assert choose_path(s, opts).reasons == (PathReason.REQUESTED, PathReason.STABILITY_PRIOR,
                                            PathReason.ECC_PRIOR, PathReason.SHARED_DISPERSION,
                                            PathReason.NON_TRANSIT)


def test_crossing_orbits_alone_make_the_joint_path():
    # e = 0.5 +- 0.05 at a period ratio of 1.3 crosses in most direct draws (a(1+e) > a'(1-e'))
    ecc = {"value": 0.5, "err": 0.05}
    s = _system({"period": 10.0, "msini": {"value": 5.0, "err": 1.0}, "ecc": ecc},
                {"period": 13.0, "msini": {"value": 5.0, "err": 1.0}, "ecc": ecc})
    assert choose_path(s, AnalysisOptions()).reasons == (PathReason.CROSSING,)
