"""archsys.physics.nbody_runs.integrate_draws: survival, chaos, resonances, horizon, budget.

Outside references: independent rebound set-ups written here ([ReinLiu2012]; IAS15, Rein & Spiegel
2015), [Gladman1993] (two-planet Hill stability), [Chambers1996] and [Obertas2017] (instability times of
compact equal-mass systems), MEGNO [CincottaSimo2000] as computed by rebound [ReinTamayo2015], and a
GJ 876-like 2:1 pair (values from memory of [Rivera2010]).  Heavier runs are marked slow.
"""
import math

import numpy as np
import pytest

rebound = pytest.importorskip("rebound")

from archsys.physics import kepler
from archsys.physics import nbody_runs
from archsys.physics import nbody_setup
from archsys.physics.constants import GM_SUN, MEARTH_MSUN, MJUP_MSUN, TWO_PI  # noqa: E402


# ---------------------------------------------------------------- libration test on synthetic signals

def _jittered(n, span, rng):
    return (np.arange(n) + rng.uniform(size=n)) / n * span


def test_libration_test_synthetic_signals():
    rng = np.random.default_rng(0)
    t = _jittered(200, 1000.0, rng)
    lib = 0.6 * np.sin(TWO_PI * t / 37.0) + 0.05 * rng.standard_normal(200)            # about 0
    lib_pi = np.pi + 2.0 * np.sin(TWO_PI * t / 91.0)                                   # about pi, wide
    fast = TWO_PI * t / 1.37                                                           # aliased circulation
    slow = TWO_PI * t / 400.0 + 0.3 * np.sin(TWO_PI * t / 9.0)                         # 2.5 slow turns
    part = 1.2 * np.pi * t / 1000.0                                              # 0.6 turn: confined, drifting
    ok, amp, centre = nbody_setup.libration_test(np.stack([lib, lib_pi, fast, slow, part]), t)
    assert ok.tolist() == [True, True, False, False, False]
    assert amp[0] == pytest.approx(0.6, abs=0.15) and amp[1] == pytest.approx(2.0, abs=0.1)
    assert min(centre[0], TWO_PI - centre[0]) < 0.1 and centre[1] == pytest.approx(np.pi, abs=0.1)


# ---------------------------------------------------------------- helpers

def _gj876_like(ratio, n, rng):
    """A GJ 876-like 2:1 pair (values from memory of Rivera et al. 2010): M* = 0.37 M_sun, inner
    0.71 M_J at 30.1 d with e = 0.26, outer 2.3 M_J with e = 0.03; apsides aligned and conjunction at
    the inner planet's pericentre (the resonant configuration: 2 lam_2 - lam_1 - varpi_1 ~ 0)."""
    ms = 0.37
    P = np.array([30.1, 30.1 * ratio])
    m = np.array([0.71, 2.3]) * MJUP_MSUN
    a = kepler.a_au(P, ms + m)
    shape = (n, 2)
    return dict(m_star=ms, m=np.broadcast_to(m, shape), a=np.broadcast_to(a, shape),
                e=np.broadcast_to([0.26, 0.03], shape), inc=np.full(shape, np.pi / 2),
                omega=np.zeros(shape), Omega=np.zeros(shape), M0=rng.normal(0.0, 0.05, shape))


def test_gj876_like_pair_librates_and_survives_off_resonance_circulates():
    rng = np.random.default_rng(1)
    res = nbody_runs.integrate_draws(**_gj876_like(2.03, 2, rng), n_inner_orbits=2000, seed=1,
                                resonances=[(0, 1, 1, 1)])
    spec = (0, 1, 1, 1)
    assert res.survived.all() and not res.chaotic.any() and not res.crossing.any()
    assert res.librating[spec].all()
    assert np.all(res.libration_amplitude[spec] < 1.5)
    assert np.all(res.energy_error < 1e-3)
    off = nbody_runs.integrate_draws(**_gj876_like(2.3, 2, rng), n_inner_orbits=2000, seed=1,
                                resonances=[spec])
    assert not off.librating[spec].any() and np.isnan(off.libration_amplitude[spec]).all()


def test_wide_pair_is_regular():
    # Gladman 1993: circular pairs far beyond 2 sqrt(3) mutual Hill radii are Hill stable; MEGNO -> 2 for
    # quasi-periodic orbits (Cincotta & Simo 2000).  Two Earth masses at P2/P1 = 2.7 (~ 40 R_H,m).
    rng = np.random.default_rng(2)
    shape = (3, 2)
    P = np.array([10.0, 27.0])
    a = kepler.a_au(P, 1.0)
    res = nbody_runs.integrate_draws(1.0, np.full(shape, MEARTH_MSUN), np.broadcast_to(a, shape),
                                rng.uniform(0, 0.02, shape), np.full(shape, np.pi / 2), rng.uniform(0, TWO_PI, shape),
                                np.zeros(shape), rng.uniform(0, TWO_PI, shape), n_inner_orbits=3000, seed=4)
    assert res.survived.all() and not res.chaotic.any() and not res.encounter.any()
    np.testing.assert_allclose(res.megno, 2.0, atol=0.3)
    np.testing.assert_allclose(res.t_stop_inner_orbits, 3000, rtol=1e-3)
    assert res.n_draws_integrated == 3 and not res.truncated and set(res.integrator) == {"whfast"}


def test_encounter_distance_matches_an_independent_integration():
    # Two Jupiter masses 2 mutual Hill radii apart (Gladman 1993: unstable).  Our engine stops at the first
    # approach closer than one mutual Hill radius; an independent IAS15 integration of the same initial
    # conditions, sampled finely, must reach below R_H,m by then and not much earlier.
    mu = 1e-3
    k = 0.5 * 2.0 * np.cbrt(2 * mu / 3)
    a = np.array([1.0, (1 + k) / (1 - k)])
    M0 = np.array([0.0, 2.0])
    res = nbody_runs.integrate_draws(1.0, [[mu, mu]], [a], [[0.0, 0.0]], [[0.0, 0.0]], [[0.0, 0.0]], [[0.0, 0.0]],
                                [M0], n_inner_orbits=200, seed=0, megno=False)
    assert res.encounter[0] and not res.survived[0]
    t_stop = res.t_stop_inner_orbits[0] * TWO_PI * math.sqrt(1.0 / (GM_SUN * (1 + mu)))
    sim = rebound.Simulation()
    sim.G = GM_SUN
    sim.add(m=1.0)
    for j in range(2):
        sim.add(m=mu, a=a[j], M=M0[j])
    sim.move_to_com()
    sim.integrator = "ias15"
    r_hm = np.cbrt(2 * mu / 3) * a.mean()
    first = None
    for t in np.linspace(0, 1.2 * t_stop, 6000):
        sim.integrate(t)
        d = sim.particles[1] - sim.particles[2]
        if math.sqrt(d.x ** 2 + d.y ** 2 + d.z ** 2) < r_hm:
            first = t
            break
    assert first is not None
    # within one WHFast step (P_inner / 20: the line search flags the step holding the approach)
    assert abs(first - t_stop) < TWO_PI * math.sqrt(1.0 / GM_SUN) / 20 + 0.01 * t_stop


def test_results_do_not_depend_on_jobs_and_are_seeded():
    rng = np.random.default_rng(3)
    args = _gj876_like(2.2, 3, rng)
    one = nbody_runs.integrate_draws(**args, n_inner_orbits=300, seed=5, resonances=[(0, 1, 1, 1)], n_snapshots=40)
    two = nbody_runs.integrate_draws(**args, n_inner_orbits=300, seed=5, resonances=[(0, 1, 1, 1)], n_snapshots=40,
                                jobs=2)
    for f in ("megno", "chaotic", "encounter", "survived", "t_stop_inner_orbits", "energy_error", "crossing"):
        np.testing.assert_array_equal(getattr(one, f), getattr(two, f))
    np.testing.assert_array_equal(one.librating[(0, 1, 1, 1)], two.librating[(0, 1, 1, 1)])


def test_time_budget_leaves_draws_out_and_says_so():
    rng = np.random.default_rng(4)
    res = nbody_runs.integrate_draws(**_gj876_like(2.03, 6, rng), n_inner_orbits=2e5, seed=1, time_budget=0.5,
                                n_snapshots=50)
    assert res.truncated and res.n_draws_integrated < 6
    assert not res.survived[~res.completed].any()


def test_energy_switch_to_ias15():
    # 3 steps per pericentre time scale is far too coarse for e = 0.6: WHFast's energy error passes the
    # threshold and the draw continues with IAS15
    rng = np.random.default_rng(5)
    args = _gj876_like(2.5, 1, rng)
    args["e"] = np.array([[0.6, 0.0]])
    res = nbody_runs.integrate_draws(**args, n_inner_orbits=50, seed=1, steps_per_orbit=3, n_snapshots=20)
    assert res.integrator[0] == "whfast+ias15" and np.isfinite(res.energy_error[0])


def test_horizon():
    # >= 1e4 inner orbits and >= 100 outer orbits (module documentation)
    assert nbody_setup.default_horizon([1.51, 2.42, 4.05, 6.10, 9.21, 12.35, 18.77]) == 1e4
    assert nbody_setup.default_horizon([[10.0, 3000.0], [10.0, 5000.0]]) == pytest.approx(100 * 400)
    h = nbody_setup.horizon_summary(1e4, [1.5, 15.0])
    assert h["outer_orbits"] == pytest.approx(1e3) and h["years"] == pytest.approx(1.5e4 / 365.25)


@pytest.mark.parametrize("kw, match", [
    (dict(resonances=[(1, 0, 1, 1)]), "resonance spec"), (dict(resonances=[(0, 1, 1, 4)]), "resonance spec"),
    (dict(laplace=[(0, 0, 1, 1, -2, 1)]), "Laplace spec"), (dict(n_inner_orbits=-1), "positive"),
])
def test_bad_arguments(kw, match):
    args = dict(n_inner_orbits=10)
    args.update(kw)
    with pytest.raises(ValueError, match=match):
        nbody_runs.integrate_draws(1.0, [[1e-5, 1e-5]], [[1.0, 2.0]], [[0.0, 0.0]], [[0.0, 0.0]], [[0.0, 0.0]],
                              [[0.0, 0.0]], [[0.0, 0.0]], **args)


# ---------------------------------------------------------------- slow cross-checks

def _chain(n, rng):
    """Seven Earth-mass planets on circular orbits, periods of a TRAPPIST-1-like chain (from memory),
    M* = 0.09 M_sun, random phases."""
    P = np.array([1.51, 2.42, 4.05, 6.10, 9.21, 12.35, 18.77])
    ms = 0.09
    m = np.full(7, MEARTH_MSUN)
    shape = (n, 7)
    return dict(m_star=ms, m=np.broadcast_to(m, shape), a=np.broadcast_to(kepler.a_au(P, ms + m), shape),
                e=np.zeros(shape), inc=np.full(shape, np.pi / 2), omega=np.zeros(shape), Omega=np.zeros(shape),
                M0=rng.uniform(0, TWO_PI, shape))


@pytest.mark.slow
def test_seven_planet_chain_with_random_phases_is_mostly_chaotic():
    # issue 18: independent integrations found 0 of 30 draws regular (MEGNO 3-15) at 2e4 inner orbits
    res = nbody_runs.integrate_draws(**_chain(6, np.random.default_rng(6)), n_inner_orbits=1e4, seed=3, jobs=2)
    assert res.chaotic.mean() >= 0.5
    assert np.all(res.energy_error < 1e-4)


@pytest.mark.slow
def test_four_planets_at_five_hill_radii_have_encounters():
    # Chambers et al. 1996 (Fig. 3, log t ~ b Delta + c) and Obertas et al. 2017 (Fig. 2): equal-mass
    # planets of mu ~ 3e-6 spaced by 5 mutual Hill radii meet within ~1e3-1e4 orbits of the innermost.
    rng = np.random.default_rng(7)
    mu = 3.0 * MEARTH_MSUN
    k = 0.5 * 5.0 * np.cbrt(2 * mu / 3)
    a = 0.1 * ((1 + k) / (1 - k)) ** np.arange(4)
    n = 6
    shape = (n, 4)
    res = nbody_runs.integrate_draws(1.0, np.full(shape, mu), np.broadcast_to(a, shape), np.zeros(shape),
                                np.full(shape, np.pi / 2), np.zeros(shape), np.zeros(shape),
                                rng.uniform(0, TWO_PI, shape), n_inner_orbits=2e4, seed=8, jobs=2, megno=False)
    assert (~res.survived).mean() >= 0.5
    assert np.all(res.t_stop_inner_orbits[res.encounter] < 2e4)


def test_posterior_with_phases_to_a_librating_gj876_like_pair():
    # End to end: a GJ 876-like system file with mean longitudes at an epoch (values from memory of
    # Rivera et al. 2010, Table 3: lambda = omega + M; masses as m sin i, coplanar edge-on), through the
    # posterior's phases and initial_conditions, into the engine: the 2:1 angles librate, the pair survives.
    from archsys.inference.draws import direct_draws
    from archsys.inference.nbody_setup import initial_conditions
    from archsys.model.reader import build_system
    sysm = build_system({
        "name": "GJ 876-like (invented test values)", "epoch": 2450602.093, "star": {"mass": 0.37},
        "planet": [
            {"name": "c", "period": {"value": 30.088, "err": 0.005}, "msini": {"value": 227.0, "err": 3.0},
             "ecc": {"value": 0.256, "err": 0.002}, "omega": {"value": 48.8, "err": 0.5},
             "mean_longitude": {"value": 343.4, "err": 0.5}},
            {"name": "b", "period": {"value": 61.117, "err": 0.005}, "msini": {"value": 723.0, "err": 3.0},
             "ecc": {"value": 0.032, "err": 0.002}, "omega": {"value": 50.3, "err": 3.0},
             "mean_longitude": {"value": 16.0, "err": 0.5}}]})
    post = direct_draws(sysm, n=200, seed=2)
    el, info = initial_conditions(post, 3)
    assert info["uniform_phases"] == [] and info["epoch"] == 2450602.093 and el["M0"].shape == (3, 2)
    assert info["mass_basis"] == {"c": "minimum (m sin i)", "b": "minimum (m sin i)"}
    res = nbody_runs.integrate_draws(**el, n_inner_orbits=2000, seed=3, resonances=[(0, 1, 1, 1)])
    assert res.survived.all() and res.librating[(0, 1, 1, 1)].all()


def test_gj876_like_laplace_angle_librates():
    # The 4:2:1 Laplace relation of a GJ 876-like c-b-e chain: 1/P_c - 3/P_b + 2/P_e ~ 0, angle
    # lam_c - 3 lam_b + 2 lam_e librating about 0 (Rivera et al. 2010; elements from memory of their
    # Table 3, lambda = omega + M, coplanar, m sin i).  Shifting the outer planet's mean longitude by 90 deg
    # moves the angle by 180 deg, away from its centre: then it circulates.
    from archsys.physics.constants import MEARTH_MSUN as ME
    ms = 0.37
    P = np.array([30.088, 61.117, 124.26])
    m = np.array([227.0, 723.0, 14.6]) * ME
    a = kepler.a_au(P, ms + m)
    omega = np.radians([48.8, 50.3, 239.0])
    lam = np.radians([343.4, 16.0, 214.0])
    M0 = np.mod(lam - omega, TWO_PI)
    args = dict(m=[m], a=[a], e=[[0.256, 0.032, 0.055]], inc=[[np.pi / 2] * 3], omega=[omega],
                Omega=[[0.0] * 3], M0=[M0])
    spec = (0, 1, 2, 1, -3, 2)
    res = nbody_runs.integrate_draws(ms, **args, n_inner_orbits=3000, seed=1, laplace=[spec], resonances=[(0, 1, 1, 1)])
    assert res.survived[0] and res.laplace_librating[spec][0] and res.librating[(0, 1, 1, 1)][0]
    assert res.laplace_amplitude[spec][0] < 1.5
    lam[2] += 0.5 * np.pi
    args["M0"] = [np.mod(lam - omega, TWO_PI)]
    off = nbody_runs.integrate_draws(ms, **args, n_inner_orbits=3000, seed=1, laplace=[spec])
    assert not off.laplace_librating[spec][0]


def test_shadow_megno_agrees_with_rebound_variational_megno():
    # The default MEGNO by a shadow trajectory (Benettin et al. 1980 two-particle method, Cincotta & Simo
    # 2000 definition) against rebound's MEGNO from variational equations (Rein & Tamayo 2016), same
    # draws: three 10 M_E planets 5-11 mutual Hill radii apart, 1500 inner orbits.  Same verdict
    # (MEGNO > 2.5) in every draw, values within 0.3 where regular.
    rng = np.random.default_rng(11)
    n = 5
    mu = 10 * MEARTH_MSUN
    delta = np.array([5.0, 5.5, 6.5, 9.0, 11.0])[:, None]
    k = 0.5 * delta * np.cbrt(2 * mu / 3)
    a = 0.1 * ((1 + k) / (1 - k)) ** np.arange(3)
    args = dict(m=np.full((n, 3), mu), a=a, e=rng.uniform(0, 0.05, (n, 3)), inc=np.full((n, 3), np.pi / 2),
                omega=rng.uniform(0, TWO_PI, (n, 3)), Omega=np.zeros((n, 3)), M0=rng.uniform(0, TWO_PI, (n, 3)))
    var = nbody_runs.integrate_draws(1.0, **args, n_inner_orbits=1500, seed=1, megno="variational", megno_drop=1e9)
    sha = nbody_runs.integrate_draws(1.0, **args, n_inner_orbits=1500, seed=1, megno="shadow", megno_drop=1e9)
    np.testing.assert_array_equal(var.chaotic, sha.chaotic)
    regular = ~var.chaotic
    assert regular.any() and var.chaotic.any()
    np.testing.assert_allclose(sha.megno[regular], var.megno[regular], atol=0.3)
