"""The dynamical assessment (issue 18): verdict classes checked against independent integrations.

Sources beside each check.  The referee integrations (tests/dyn_reference.py) are plain rebound
set-ups written for the tests, independent of archsys.physics.nbody.
"""
from pathlib import Path

import numpy as np
import pytest

from archsys.model.reader import build_system, read_system
from archsys.physics import instability_time
from archsys.physics import mmr_chains
from archsys.physics.constants import MEARTH_MSUN
from archsys.pipeline import AnalysisOptions, analyze
from archsys.scores.common import effective_mass

from dyn_reference import referee

DATA = Path(__file__).resolve().parent / "data" / "dynamics"
rebound = pytest.importorskip("rebound")


def _opts(**kw):
    base = dict(n_draws=400, seed=3, quiet=True, jobs=2)
    base.update(kw)
    return AnalysisOptions(**base)


def _referee_of(res, n, n_orbits):
    """The referee's (survived, regular) on the same posterior draws archsys integrated (its subset)."""
    sub = res.posterior.subset(n)
    d = sub.draws
    m = effective_mass(sub)
    return referee(d["m_star"], m, d["a"], np.clip(d["ecc"], 0, 0.999), np.nan_to_num(d["inc"], nan=np.pi / 2),
                   np.nan_to_num(d["omega"]), np.nan_to_num(d["node"]), d["mean_anomaly"], n_orbits)


def _equal_spacing(n_planets, delta, mass_mearth=1.0, p_inner=10.0, ecc=0.0):
    """n planets of one mass equally spaced by delta mutual Hill radii (Chambers et al. 1996 set-up)."""
    mu = mass_mearth * MEARTH_MSUN
    k = delta * np.cbrt(2 * mu / 3) / 2                 # a_{i+1} = a_i (1 + k) / (1 - k)
    P = p_inner * ((1 + k) / (1 - k)) ** (1.5 * np.arange(n_planets))
    return build_system({"name": "Even", "star": {"mass": 1.0}, "planet": [
        {"name": f"Even {chr(98 + i)}", "period": float(P[i]), "mass": mass_mearth, "ecc": ecc}
        for i in range(n_planets)]}, source="<test>")


def test_wide_pair_is_stable_by_analytic_criterion_without_integration():
    # Two super-Earths at P = 10 and 43 d (period ratio 4.3, > 30 mutual Hill radii), near-circular:
    # Gladman 1993 and AMD (Laskar & Petit 2017) hold; inside their domain no integration is needed.
    s = build_system({"name": "Wide", "star": {"mass": 1.0}, "planet": [
        {"name": "Wide b", "period": 10.0, "mass": {"value": 5.0, "err": 0.5}, "ecc": {"value": 0.02, "err": 0.01}},
        {"name": "Wide c", "period": 43.0, "mass": {"value": 8.0, "err": 0.8}, "ecc": {"value": 0.03, "err": 0.01}}]},
        source="<test>")
    doc = analyze(s, _opts(nbody="auto")).document
    dyn = doc["dynamics"]
    assert dyn["class"] == "stable_analytic" and dyn["outside_domain"] == []
    assert dyn["stable_probability"] >= 0.95 and "nbody" not in dyn
    assert doc["dynamics"]["verdict"].startswith("Dynamics: stable by analytic criterion")
    # Veras & Mustill 2013: log10 x ~ 5.2 [mu/(M_J/M_sun)]^-0.18 with mu of the heavier planet (8 M_E)
    lt = dyn["instability_time"]["pair_minimum"]["log10_inner_orbits"]["median"]
    assert lt == pytest.approx(5.2 * (8 * MEARTH_MSUN / 9.547919e-4) ** -0.18, rel=0.02)


def test_resonant_pair_with_phases_librates_and_survives():
    # GJ 876-like 2:1 pair (tests/data/dynamics; Rivera et al. 2010 values from memory) in its resonant
    # configuration: the analytic criteria fail (0 %) -- the old report called it unstable -- but the
    # resonance protects it.  archsys: regular, librating; the independent referee agrees.
    res = analyze(read_system(DATA / "gj876_like.toml"), _opts(nbody=16, nbody_orbits=3000))
    dyn = res.document["dynamics"]
    assert dyn["analytic_pass_probability"] < 0.05
    assert dyn["class"] == "regular_nbody", dyn
    assert res.document["pairs"][0]["libration_probability"] >= 0.9
    assert dyn["nbody"]["phases_uniform"] == []
    survived, regular = _referee_of(res, 6, 3000)
    assert survived.all() and regular.mean() >= 0.8
    assert "unstable" not in res.document["dynamics"]["verdict"]


def test_resonant_pair_with_random_phases_is_flagged_and_not_called_stable():
    # The same pair without phases: uniform phases put most draws out of resonance, where the pair
    # crosses within a few hundred orbits (independent referee).  The verdict must say phases were drawn.
    s = read_system(DATA / "gj876_like.toml")
    for p in s.planets:
        p.quantities.pop("mean_longitude", None)
    res = analyze(s, _opts(nbody=16, nbody_orbits=3000))
    dyn = res.document["dynamics"]
    assert dyn["class"] in ("unstable_nbody", "mixed_nbody"), dyn["class"]
    assert len(dyn["nbody"]["phases_uniform"]) == 2
    assert "Phases drawn uniformly" in " ".join(res.document["verdicts"])
    survived, _ = _referee_of(res, 8, 3000)
    assert abs(survived.mean() - dyn["nbody"]["survival_probability"]) <= 0.4     # 8 vs 16 draws: binomial noise
    assert survived.mean() < 0.8


def test_compact_four_planets_at_five_hill_radii_are_unstable_not_hill_stable():
    # Four Earth-mass planets 5 mutual Hill radii apart: every pair is Hill stable (Gladman 1993,
    # > 2 sqrt 3), yet such systems have close encounters within ~10^3-10^4 orbits (Chambers et al.
    # 1996; Obertas et al. 2017, from memory).  Issue 18 saw "Hill 1.00, AMD 0.96" reported.
    res = analyze(_equal_spacing(4, 5.0), _opts(nbody=12, nbody_orbits=20000))
    doc = res.document
    assert doc["all_pairs_hill_stable_probability"] == 1.0
    dyn = doc["dynamics"]
    assert "compact_three_or_more" in dyn["outside_domain"]
    assert dyn["class"] in ("unstable_nbody", "mixed_nbody")
    assert dyn["nbody"]["event_probability"] >= 0.5
    # published estimate inside its domain (circular, coplanar, >= 3 planets): ~10^3.2 inner orbits
    # (Yalinewich & Petrovich 2020), Obertas et al. 2017 fit log t = 0.951 Delta - 1.202 -> 3.55 (from memory)
    lt = dyn["instability_time"]["compact_three_body"]["log10_inner_orbits"]["median"]
    assert lt == pytest.approx(0.951 * 5 - 1.202, abs=0.6)


def test_outside_domain_without_integration_is_not_proven_stable_never_unstable():
    # --nbody 0: a failed sufficient criterion alone must not be reported as instability (issue 18).
    doc = analyze(read_system(DATA / "gj876_like.toml"), _opts(nbody=0)).document
    dyn = doc["dynamics"]
    assert dyn["class"] == "not_proven_stable" and dyn["stable_probability"] is None
    assert "unstable" not in doc["dynamics"]["verdict"].lower().replace("not proven stable", "")
    assert "--nbody 0" in doc["dynamics"]["verdict"]


def test_instability_time_against_independent_integration_of_equal_spacing():
    # Equal-mass, equally spaced, circular, coplanar systems (the set-up of Chambers et al. 1996 and
    # Obertas et al. 2017): the published estimate (Yalinewich & Petrovich 2020) against the median
    # first-encounter time (any pair within one mutual Hill radius, checked every quarter orbit) of an
    # independent integration of 5 Earth-mass planets at Delta = 4 mutual Hill radii, within the scatter
    # of such times (~0.5 dex; Obertas et al. 2017, from memory); and against the Obertas et al. fit
    # log10 t = 0.951 Delta - 1.202 (from memory).
    mu = MEARTH_MSUN
    delta = 4.0
    k = delta * np.cbrt(2 * mu / 3) / 2
    a = ((1 + k) / (1 - k)) ** np.arange(5)
    lt = float(instability_time.log10_time_compact(a, np.full(5, mu), a ** 1.5, 1.0))
    rng = np.random.default_rng(1)
    pairs = [(i, j, np.cbrt(2 * mu / 3) * 0.5 * (a[i] + a[j])) for i in range(5) for j in range(i + 1, 5)]
    times = []
    for _ in range(8):
        sim = rebound.Simulation()
        sim.add(m=1.0)
        for x in a:
            sim.add(m=mu, a=x, M=rng.uniform(0, 2 * np.pi), inc=rng.uniform(0, 1e-3), Omega=rng.uniform(0, 2 * np.pi))
        sim.move_to_com()
        sim.integrator = "whfast"
        sim.dt = 2 * np.pi / 30
        ps = sim.particles
        t, hit = 0.0, False
        while t < 1e5 and not hit:
            t += 0.25
            sim.integrate(2 * np.pi * t, exact_finish_time=0)
            for i, j, rh in pairs:
                d = ps[i + 1] - ps[j + 1]
                if d.x ** 2 + d.y ** 2 + d.z ** 2 < rh * rh:
                    hit = True
                    break
        times.append(t)
    measured = float(np.median(np.log10(times)))
    assert measured == pytest.approx(lt, abs=0.6)
    assert measured == pytest.approx(0.951 * delta - 1.202, abs=0.6)


def test_laplace_relations_of_the_galilean_satellites_and_a_seven_planet_chain():
    # Io, Europa, Ganymede (handbook periods 1.769, 3.551, 7.155 d): n1 - 3 n2 + 2 n3 = 0, the Laplace
    # relation (Murray & Dermott 1999, ch. 8).
    rel = mmr_chains.laplace_relations([1.769138, 3.551181, 7.154553])
    assert [(r["p"], r["q"]) for r in rel] == [(1, 2)]
    # TRAPPIST-1 (periods of Agol et al. 2021, from memory): the relations (p, q) = (2, 3), (1, 2),
    # (2, 3), (1, 2), (1, 1) of Luger et al. 2017 (from memory).
    rel = mmr_chains.laplace_relations([1.51088, 2.42180, 4.04978, 6.09963, 9.20668, 12.35294, 18.7729])
    assert [(r["p"], r["q"]) for r in rel] == [(2, 3), (1, 2), (2, 3), (1, 2), (1, 1)]


def test_chain_pairs_near_second_and_third_order_resonances_are_named_like_the_super_periods():
    # Issue 18: b-c (8:5, third order) and c-d (5:3, second order) were "near resonance 2 % / 0 %"
    # while the same row said "super-period resonance 5:3".  One naming across the pair table.
    doc = analyze(read_system(DATA / "chain7.toml"), _opts(nbody=0)).document
    pairs = doc["pairs"]
    assert [q["nearest_mmr"] for q in pairs] == ["8:5", "5:3", "3:2", "3:2", "4:3", "3:2"]
    assert [q.get("super_period_resonance") for q in pairs] == [q["nearest_mmr"] for q in pairs]
    assert all(q["near_resonance_probability"] == 1.0 for q in pairs)
    assert doc["resonant_chains"] == [[p["name"] for p in doc["planets"]]]
    assert doc["dynamics"]["class"] == "not_proven_stable"


@pytest.mark.slow
def test_seven_planet_chain_with_random_phases_is_chaotic_not_stable():
    # Issue 18: the seven-planet chain (random phases) was reported "Hill stable 100 %, AMD-stable
    # 100 %" while independent integrations find no regular draw.  archsys must integrate and agree.
    res = analyze(read_system(DATA / "chain7.toml"), _opts(nbody=16, nbody_orbits=10000))
    dyn = res.document["dynamics"]
    assert dyn["class"] in ("chaotic_survived", "unstable_nbody", "mixed_nbody")
    assert dyn["stable_probability"] <= 0.25
    survived, regular = _referee_of(res, 4, 10000)
    assert regular.mean() <= 0.5


def test_resonant_chain_with_phases_is_regular_and_librating_and_random_phases_are_flagged():
    # A 3:2, 3:2 chain captured by convergent migration in an independent rebound run
    # (tests/data/dynamics/make_resonant_chain.py; TRAPPIST-1-like in miniature).  With its phases: regular,
    # both pairs and the three-body angle 2 lam1 - 5 lam2 + 3 lam3 librating, as the referee confirms.
    res = analyze(read_system(DATA / "chain3_resonant.toml"), _opts(nbody=12, nbody_orbits=4000))
    dyn = res.document["dynamics"]
    assert dyn["class"] == "regular_nbody", dyn["class"]
    assert [q["libration_probability"] for q in res.document["pairs"]] == [1.0, 1.0]
    (rel,) = dyn["three_body_relations"]
    assert (rel["p"], rel["q"]) == (2, 3) and rel["libration_probability"] >= 0.9
    survived, regular = _referee_of(res, 4, 4000)
    assert survived.all() and regular.all()
    # Without phases: drawn uniformly, said so, and not called regular.
    s = read_system(DATA / "chain3_resonant.toml")
    for p in s.planets:
        p.quantities.pop("mean_longitude", None)
    res = analyze(s, _opts(nbody=12, nbody_orbits=4000))
    dyn = res.document["dynamics"]
    assert dyn["class"] != "regular_nbody" and len(dyn["nbody"]["phases_uniform"]) == 3
    assert "Phases drawn uniformly" in " ".join(res.document["verdicts"])


def test_handbook_solar_system_is_regular_over_the_horizon():
    # The eight planets (JPL Table 1 elements, fact-sheet masses; test_joint._handbook_system) fail the
    # AMD criterion as a whole (Laskar & Petit 2017), so the verdict rests on integration; the Solar
    # System is regular over such a horizon (common practice; its Lyapunov time is ~5 Myr).
    from test_joint import _handbook_system
    res = analyze(_handbook_system(), _opts(n_draws=50, nbody=8, nbody_orbits=2000))
    dyn = res.document["dynamics"]
    assert "failed_sufficient_criterion" in dyn["outside_domain"]
    assert dyn["class"] == "regular_nbody" and dyn["nbody"]["event_probability"] == 0.0
