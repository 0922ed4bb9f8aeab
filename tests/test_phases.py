"""Orbital phases (transit time, periastron time, mean longitude) carried into the posterior draws.

Checked against rebound [ReinLiu2012], an independent general-purpose N-body library: its own
orbit-from-elements set-up and its own two-body integration.  Conventions: observer along +z, so
mid-transit (inferior conjunction) is at true anomaly f = pi/2 - omega ([Winn2010], "Transits and
Occultations", Sect. 3, eq. 1-3); Kepler's equation M = E - e sin E ([MurrayDermott1999], eq. 2.52).
"""
import csv
import math

import numpy as np
import pytest
from scipy import stats

from archsys.errors import InputError
from archsys.inference.draws import direct_draws
from archsys.inference.phases import phase_draws
from archsys.model.checks import InputWarning
from archsys.model.reader import build_system
from archsys.physics import phases
from archsys.physics.constants import GM_SUN, MEARTH_MSUN

rebound = pytest.importorskip("rebound")

T0 = 2459000.5          # an invented BJD_TDB


def _system(planets, **top):
    base = {"name": "Phase test (invented)", "star": {"mass": 0.8}}
    base.update(top)
    base["planet"] = planets
    return build_system(base)


def _rebound_planet(m_star, m, P, e, omega_rad, inc_rad, **anomaly):
    sim = rebound.Simulation()
    sim.G = GM_SUN
    sim.add(m=m_star)
    sim.add(m=m, P=P, e=e, omega=omega_rad, inc=inc_rad, Omega=0.0, **anomaly)
    return sim


@pytest.mark.parametrize("e, omega_deg, inc_deg", [(0.0, 0.0, 90.0), (0.3, 70.0, 90.0), (0.6, 250.0, 90.0),
                                                   (0.45, 130.0, 86.0)])
def test_transit_time_at_epoch_puts_the_planet_in_front_of_the_star(e, omega_deg, inc_deg):
    # rebound builds the orbit from our mean anomaly; in the sky frame (observer along +z) the planet
    # must be in front of the star: x = 0, y = r cos i (the impact direction), z > 0 (Winn 2010 Sect. 3).
    sysm = _system([{"name": "b", "period": 12.3, "mass": 10.0, "ecc": e, "omega": omega_deg,
                     "transit_time": T0, "inclination": inc_deg}], epoch=T0)
    post = direct_draws(sysm, n=4, seed=3)
    assert post.phases["source"] == {"b": "transit_time"} and post.phases["epoch"] == T0
    M = post["mean_anomaly"][0, 0]
    sim = _rebound_planet(0.8, 10.0 * MEARTH_MSUN, 12.3, e, math.radians(omega_deg), math.radians(inc_deg), M=M)
    d = sim.particles[1] - sim.particles[0]
    r = math.sqrt(d.x ** 2 + d.y ** 2 + d.z ** 2)
    assert abs(d.x) < 1e-9 * r
    assert abs(d.y - r * math.cos(math.radians(inc_deg))) < 1e-9 * r
    assert d.z > 0
    # the prograde true longitude Omega + omega + f that rebound recovers from the position is pi/2 (its own
    # `theta` switches to Omega - omega + f at inc >= 90 deg, and M is undefined for e = 0, so f is summed)
    o = sim.particles[1].orbit(primary=sim.particles[0])
    assert abs(math.remainder(o.Omega + o.omega + o.f - math.pi / 2, 2 * math.pi)) < 1e-8


def test_periastron_time_at_epoch_gives_zero_mean_anomaly():
    sysm = _system([{"name": "b", "period": 40.0, "mass": 300.0, "ecc": 0.4, "omega": 100.0,
                     "periastron_time": T0}], epoch=T0)
    M = direct_draws(sysm, n=8, seed=1)["mean_anomaly"][:, 0]
    assert np.all(np.minimum(M, 2 * np.pi - M) < 1e-12)
    # rebound: the planet at that mean anomaly is at pericentre, r = a (1 - e)
    sim = _rebound_planet(0.8, 300 * MEARTH_MSUN, 40.0, 0.4, 1.7, 1.2, M=float(M[0]))
    o = sim.particles[1].orbit(primary=sim.particles[0])
    assert o.d == pytest.approx(o.a * (1 - 0.4), rel=1e-12)


@pytest.mark.parametrize("n_orbits", [0.37, 250.61, 1234.8])
def test_propagation_to_the_epoch_matches_rebound_two_body_integration(n_orbits):
    # rebound places the planet at f = pi/2 - omega at t_c (its own conversion from the true anomaly)
    # and integrates the two-body problem with IAS15 (Rein & Spiegel 2015) to the epoch.
    P, e, om = 9.7, 0.35, math.radians(200.0)
    epoch = T0 + n_orbits * P
    sysm = _system([{"name": "b", "period": P, "mass": 5.0, "ecc": e, "omega": 200.0, "transit_time": T0}],
                   epoch=epoch)
    M_ours = direct_draws(sysm, n=2, seed=0)["mean_anomaly"][0, 0]
    sim = _rebound_planet(0.8, 5.0 * MEARTH_MSUN, P, e, om, math.pi / 2, f=math.pi / 2 - om)
    sim.integrator = "ias15"
    sim.integrate(epoch - T0)
    M_rb = sim.particles[1].orbit(primary=sim.particles[0]).M
    assert abs(math.remainder(M_ours - M_rb, 2 * math.pi)) < 1e-7


def test_epoch_defaults_to_the_median_of_the_given_times():
    sysm = _system([{"name": "b", "period": 3.0, "mass": 5.0, "transit_time": T0},
                    {"name": "c", "period": 7.0, "mass": 5.0, "transit_time": T0 + 10},
                    {"name": "d", "period": 15.0, "mass": 5.0, "periastron_time": T0 + 30},
                    {"name": "e", "period": 40.0, "mass": 5.0}])
    post = direct_draws(sysm, n=2000, seed=4)
    assert post.phases["epoch"] == T0 + 10 and post.phases["uniform"] == ["e"]
    M = post["mean_anomaly"]
    # circular c transits at the epoch: f = pi/2 - omega with omega drawn uniformly (no data), and M = f
    # for e = 0, so its mean longitude omega + M is pi/2 in every draw
    lam_c = np.mod(post["omega"][:, 1] + M[:, 1], 2 * np.pi)
    np.testing.assert_allclose(lam_c, np.pi / 2, atol=1e-9)
    # b transited 10 days earlier: its mean longitude moved by 2 pi 10 / 3
    lam_b = np.mod(post["omega"][:, 0] + M[:, 0], 2 * np.pi)
    np.testing.assert_allclose(lam_b, np.mod(np.pi / 2 + 2 * np.pi * 10 / 3, 2 * np.pi), atol=1e-9)
    # planet e has no phase: uniform on [0, 2 pi) (Kolmogorov-Smirnov)
    assert stats.kstest(M[:, 3] / (2 * np.pi), "uniform").pvalue > 1e-3


def test_mean_longitude_convention():
    # lambda = Omega + omega + M with Omega = 0 when no node is measured (radial-velocity convention)
    sysm = _system([{"name": "b", "period": 30.0, "mass": 200.0, "ecc": 0.2, "omega": 50.0,
                     "mean_longitude": 290.0},
                    {"name": "c", "period": 61.0, "mass": 600.0, "ecc": 0.05, "omega": 30.0,
                     "mean_longitude": 10.0, "ascending_node": 20.0, "inclination": 80.0}], epoch=T0)
    M, info = phase_draws(sysm, direct_draws(sysm, n=3, seed=2).draws, 2)
    np.testing.assert_allclose(M[:, 0], math.radians(240.0), atol=1e-12)
    np.testing.assert_allclose(M[:, 1], math.radians(360 - 40.0), atol=1e-12)
    assert info["source"] == {"b": "mean_longitude", "c": "mean_longitude"}


def test_transit_time_uncertainty_propagates():
    # sigma(M) = 2 pi sigma(t_c) / P for a circular orbit with an exact period (first-order propagation)
    sysm = _system([{"name": "b", "period": 5.0, "mass": 5.0, "transit_time": {"value": T0, "err": 0.01}}])
    post = direct_draws(sysm, n=4000, seed=9)
    lam = np.mod(post["omega"][:, 0] + post["mean_anomaly"][:, 0] - np.pi / 2 + np.pi, 2 * np.pi) - np.pi
    assert np.std(lam) == pytest.approx(2 * np.pi * 0.01 / 5.0, rel=0.05)


def test_phases_leave_the_other_draws_unchanged_and_are_seeded():
    plain = [{"name": "b", "period": {"value": 10.0, "err": 0.1}, "msini": {"value": 8, "err": 1}},
             {"name": "c", "period": {"value": 25.0, "err": 0.2}, "msini": {"value": 12, "err": 2}}]
    with_phase = [dict(plain[0], transit_time={"value": T0, "err": 0.002}), plain[1]]
    a = direct_draws(_system(plain), n=500, seed=11)
    b = direct_draws(_system(with_phase), n=500, seed=11)
    b2 = direct_draws(_system(with_phase), n=500, seed=11)
    for k in ("period", "msini", "ecc", "omega", "mass"):
        np.testing.assert_array_equal(a[k], b[k])
    np.testing.assert_array_equal(b["mean_anomaly"], b2["mean_anomaly"])
    assert a.phases["source"] == {"b": "uniform", "c": "uniform"} and a.phases["epoch"] is None
    assert b.phases["source"]["b"] == "transit_time" and b.notes["c"]["phase"] == "uniform"
    assert a.subset(10).phases == a.phases and a.subset(10)["mean_anomaly"].shape == (10, 2)


def test_joint_engine_carries_phases():
    from archsys.pipeline import AnalysisOptions
    from archsys.inference.joint import sample_joint
    sysm = _system([{"name": "b", "period": 3.0, "mass": 5.0, "b": 0.2, "ror": 0.02, "transiting": True,
                     "transit_time": {"value": T0, "err": 0.001}},
                    {"name": "c", "period": 7.0, "mass": 5.0, "b": 0.3, "ror": 0.02, "transiting": True}],
                   star={"mass": 0.8, "radius": 0.8})
    opts = AnalysisOptions(n_draws=300, seed=3, quiet=True)
    one, two = sample_joint(sysm, opts), sample_joint(sysm, opts)
    assert one["mean_anomaly"].shape == (300, 2) and one.phases["uniform"] == ["c"]
    np.testing.assert_array_equal(one["mean_anomaly"], two["mean_anomaly"])
    # M at the epoch (= t_c here) is the transit mean anomaly of each draw's own e and omega
    np.testing.assert_allclose(np.mod(one["mean_anomaly"][:, 0] - phases.mean_anomaly_at_transit(
        one["ecc"][:, 0], one["omega"][:, 0]) + np.pi, 2 * np.pi) - np.pi, 0, atol=2 * np.pi * 0.005 / 3.0)


def test_kepler_equation_round_trip():
    rng = np.random.default_rng(0)
    e = rng.uniform(0, 0.99, 1000)
    M = rng.uniform(0, 2 * np.pi, 1000)
    f = phases.true_from_mean(M, e)
    np.testing.assert_allclose(np.mod(phases.mean_from_true(f, e) - M + np.pi, 2 * np.pi) - np.pi, 0, atol=1e-10)


@pytest.mark.parametrize("planet, top, match", [
    ({"transit_time": T0, "periastron_time": T0}, {}, "give the phase one way only"),
    ({"mean_longitude": 10.0}, {}, "needs the top-level 'epoch'"),
    ({"transit_time": {"upper": T0}}, {}, "a phase takes a value"),
    ({"transit_time": T0, "transiting": False}, {}, "transiting = false"),
    ({}, {"epoch": {"value": T0, "err": 1.0}}, "field 'epoch': is a reference time"),
    ({}, {"epoch": "soon"}, "field 'epoch'"),
    ({"mean_longitude": {"lower": 3.0}}, {"epoch": T0}, "cannot take a limit"),
])
def test_phase_input_errors_are_one_line(planet, top, match):
    with pytest.raises(InputError, match=match) as ei:
        _system([dict({"name": "b", "period": 3.0}, **planet)], **top)
    assert "\n" not in str(ei.value)


def test_times_with_different_zero_points_warn():
    with pytest.warns(InputWarning, match="one zero point"):
        _system([{"name": "b", "period": 3.0, "transit_time": T0},
                 {"name": "c", "period": 5.0, "transit_time": 5000.1}])


def test_survey_columns_carry_phases_and_epoch(tmp_path):
    from archsys.survey.catalog import group_systems, read_catalog
    from archsys.survey.column_map import bind, canonical_map, system_mapping
    header = ["system", "planet", "period", "star_mass", "transit_time", "transit_time_err", "epoch"]
    rows = [{"system": "S", "planet": "S b", "period": "3.5", "star_mass": "0.9", "transit_time": "2459000.1",
             "transit_time_err": "0.001", "epoch": "2459001"},
            {"system": "S", "planet": "S c", "period": "8.1", "star_mass": "0.9", "epoch": "2459001"}]
    path = tmp_path / "c.csv"
    with open(path, "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=header)
        w.writeheader()
        w.writerows(rows)
    cat = read_catalog(path)
    data, problems, _ = system_mapping(group_systems(cat, "system")[0][0], bind(canonical_map(cat.columns), cat))
    assert not problems
    assert data["epoch"] == {"value": 2459001.0}
    assert data["planet"][0]["transit_time"] == {"value": 2459000.1, "err": 0.001}
    sysm = build_system(data)
    assert sysm.epoch == 2459001.0 and "transit_time" in sysm.planets[0].quantities
    # rows that disagree on the epoch reject the system
    rows[1]["epoch"] = "2459002"
    with open(path, "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=header)
        w.writeheader()
        w.writerows(rows)
    cat = read_catalog(path)
    _, problems, _ = system_mapping(group_systems(cat, "system")[0][0], bind(canonical_map(cat.columns), cat))
    assert problems and "disagree on the system's epoch" in problems[0]["reason"]


def test_report_with_phases_is_byte_identical_and_chains_carry_them(tmp_path, capsys):
    # DEVELOPERS.md: the same input and seed give byte-identical JSON; the chains file keeps every draw
    from archsys.cli import main
    from archsys.output.chains import load_posterior
    f = tmp_path / "phased.toml"
    f.write_text('name = "Phased (invented)"\nepoch = 2459000.0\n[star]\nmass = 0.8\nradius = 0.8\n'
                 '[[planet]]\nname = "b"\nperiod = { value = 3.0, err = 0.001 }\nmass = 5.0\nb = 0.2\n'
                 'ror = 0.02\ntransiting = true\ntransit_time = { value = 2458999.1, err = 0.002 }\n'
                 '[[planet]]\nname = "c"\nperiod = { value = 7.0, err = 0.002 }\nmass = 6.0\nb = 0.3\n'
                 'ror = 0.02\ntransiting = true\n')
    argv = ["report", str(f), "--json", "--seed", "4", "--draws", "300"]
    outs = []
    for _ in range(2):
        assert main(argv) == 0
        outs.append(capsys.readouterr().out)
    assert outs[0] == outs[1]
    from archsys.model.reader import read_system
    from archsys.output.chains import save_posterior
    from archsys.pipeline import AnalysisOptions, analyze
    res = analyze(read_system(f), AnalysisOptions(n_draws=300, seed=4, quiet=True))
    draws, meta = load_posterior(save_posterior(tmp_path / "p.npz", res.posterior, res.document))
    assert draws["mean_anomaly"].shape == (300, 2)
    assert meta["notes"]["b"]["phase"] == "transit_time" and meta["notes"]["c"]["phase"] == "uniform"
