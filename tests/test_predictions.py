"""Predictions from the architecture on posterior draws (archsys.scores: companion_transits,
packing, super_periods).

Synthetic posteriors with known geometry are built here, so each block can be checked against
its published formula (Winn 2010 eqs. 7 and 9; Lithwick, Xie & Wu 2012 super-period; Gladman
1993 / mutual Hill radius of Chambers et al. 1996) or against a Monte Carlo written here.
"""
import numpy as np
import pytest

from archsys.inference.posterior import Posterior
from archsys.model.reader import build_system
from archsys.physics import kepler, transit_odds
from archsys.physics.constants import MEARTH_MSUN, RSUN_AU
from archsys.scores.companion_transits import companion_transit_block, transit_probability_curve
from archsys.scores.packing import packing_block
from archsys.scores.super_periods import super_period_block

N = 4000


def _system(p_out=15.3, p_third=45.0):
    # invented test system (values made up)
    return build_system({
        "name": "Test",
        "star": {"mass": 1.0, "radius": 1.0},
        "planet": [
            {"name": "T b", "period": 10.0, "b": 0.3, "transiting": True, "msini": 5.0},
            {"name": "T c", "period": p_out, "b": 0.4, "transiting": True, "msini": 8.0},
            {"name": "T d", "period": p_third, "msini": 12.0},
        ]})


def _posterior(system, ref_inc_deg=89.3, sigma_deg=1.5, seed=3, method="mcmc", ecc=0.0):
    rng = np.random.default_rng(seed)
    P = np.array([p.period.center for p in system.planets])[None, :] * np.ones((N, 1))
    m = np.array([5.0, 8.0, 12.0])[None, :] * MEARTH_MSUN * np.ones((N, 1))
    a = kepler.a_au(P, 1.0 + m)
    ref = np.radians(np.full(N, ref_inc_deg))
    sig = np.radians(np.full(N, sigma_deg))
    psi = sig[:, None] * np.sqrt(-2 * np.log(rng.uniform(size=(N, 3))))
    phi = rng.uniform(0, 2 * np.pi, (N, 3))
    cos_i = np.cos(ref)[:, None] * np.cos(psi) + np.sin(ref)[:, None] * np.sin(psi) * np.cos(phi)
    draws = dict(m_star=np.ones(N), r_star=np.ones(N), rho_star=np.full(N, np.nan), period=P, a=a,
                 ecc=np.full((N, 3), ecc), omega=rng.uniform(-np.pi, np.pi, (N, 3)), msini=m, mass=m,
                 inc=np.arccos(cos_i), node=np.zeros((N, 3)))
    if method == "mcmc":
        draws.update(psi=psi, sigma_mutual=sig, ref_inc=ref)
    else:
        draws["inc"][:, 2] = np.nan
    return Posterior(system, draws, method, seed=seed, notes={})


def test_companion_transit_probability_counts_winn_condition():
    # The planet without `transiting` gets the fraction of draws with |b| < 1 (Winn 2010 eq. 7,
    # no radius: centre crossing), recomputed here from the same draws.
    post = _posterior(_system())
    blocks = companion_transit_block(post)
    assert blocks[:2] == [{}, {}]                                 # b and c are known to transit
    entry = blocks[2]
    aor = post["a"][:, 2] / RSUN_AU
    b = aor * np.cos(post["inc"][:, 2])
    assert entry["transit_probability"] == pytest.approx(np.mean(np.abs(b) < 1.0), abs=1e-12)
    # isotropic reference: Winn 2010 eq. 9, circular: mean of R*/a
    assert entry["transit_probability_isotropic"] == pytest.approx(np.mean(1.0 / aor), rel=1e-12)
    # the architecture raises the odds well above isotropic for a nearly edge-on, flat system
    assert entry["transit_probability"] > 5 * entry["transit_probability_isotropic"]


def test_companion_transit_probability_agrees_with_conditional_kernel():
    # Independent route: the mean over draws of the tilt-integrated conditional probability given
    # (reference plane, sigma) must agree with the fraction of sampled tilts (5 binomial errors).
    post = _posterior(_system(), ref_inc_deg=89.0, sigma_deg=2.0, seed=11)
    entry = companion_transit_block(post)[2]
    aor = post["a"][:, 2] / RSUN_AU
    p = transit_odds.conditional_transit_probability(aor, post["ref_inc"], post["sigma_mutual"]).mean()
    assert abs(entry["transit_probability"] - p) < 5 * np.sqrt(p * (1 - p) / N)


def test_companion_transit_sigma_to_zero_is_reference_plane_indicator():
    # sigma -> 0: the probability is 1 if the reference plane's impact parameter is below 1, else 0
    # (Winn 2010 eq. 7); a/R* = 54.6 for 45 d around the Sun, so 1/aor ~ cos(88.95 deg).
    sys_ = _system()
    aor = kepler.a_au(45.0, 1.0 + 12 * MEARTH_MSUN) / RSUN_AU
    edge = np.degrees(np.arccos(1.0 / aor))
    for ref, expected in ((edge + 0.05, 1.0), (edge - 0.05, 0.0)):
        entry = companion_transit_block(_posterior(sys_, ref_inc_deg=ref, sigma_deg=1e-5))[2]
        assert entry["transit_probability"] == expected


def test_companion_transit_without_orientation_posterior_says_why():
    entry = companion_transit_block(_posterior(_system(), method="direct"))[2]
    assert entry["transit_probability"] is None and "mcmc" in entry["transit_probability_basis"]
    assert entry["transit_probability_isotropic"] > 0


def test_transit_probability_curve_limits():
    # Hypothetical planet: near-coplanar edge-on system -> probability ~1 close in, falling towards
    # the isotropic R*/a (Winn 2010 eq. 9) at long periods where a/R* cos I >> 1... here checked
    # against the conditional kernel evaluated by hand at one period.
    post = _posterior(_system(), ref_inc_deg=89.5, sigma_deg=1.0)
    c = transit_probability_curve(post, periods=[5.0, 100.0, 3000.0])
    aor = kepler.a_au(np.array([5.0, 100.0, 3000.0]), 1.0) / RSUN_AU
    assert c["isotropic"] == pytest.approx(list(1 / aor), rel=1e-12)
    hand = transit_odds.conditional_transit_probability(aor, np.radians(89.5), np.radians(1.0))
    assert c["probability"] == pytest.approx(list(hand), rel=1e-9)
    assert c["probability"][0] > 0.99 and c["probability"][2] < c["probability"][1]
    assert transit_probability_curve(_posterior(_system(), method="direct")) is None


def test_super_period_block_worked_example():
    # Lithwick, Xie & Wu 2012: 3:2 pair, 10 d and 15.3 d -> 1/|3/15.3 - 2/10| = 255 d (recomputed).
    pairs, system = super_period_block(_posterior(_system()))
    first = pairs[0]
    assert (first["super_period_resonance"], first["super_period_order"]) == ("3:2", 1)
    assert first["super_period_days"]["median"] == pytest.approx(1 / abs(3 / 15.3 - 2 / 10), rel=1e-12)
    assert first["super_period_offset"]["median"] == pytest.approx(0.02, rel=1e-9)
    assert "approximate" in system["timing"]["assumptions"]
    assert first["ttv_amplitude_inner_min"]["median"] > 0
    # 45 / 15.3 = 2.94: nearest 3:1 (second order), Delta = 2.94/3 - 1 = -0.0196 -> super-period only
    second = pairs[1]
    assert (second["super_period_resonance"], second["super_period_order"]) == ("3:1", 2)
    assert second["super_period_days"]["median"] == pytest.approx(1 / abs(3 / 45.0 - 1 / 15.3), rel=1e-12)
    assert "ttv_amplitude_inner_min" not in second


def test_super_period_block_skips_pairs_far_from_resonance():
    # 10 d and 18.5 d (ratio 1.85) and 18.5 d and 60 d (3.24): more than 5 % from every first- and
    # second-order resonance (5:3 = 1.667, 2:1, 3:1) -> no super-period
    pairs, system = super_period_block(_posterior(_system(p_out=18.5, p_third=60.0)))
    assert pairs == [{}, {}] and system == {}


def test_packing_block_room_and_packed_probability():
    # Gap 15.3 -> 45 d (factor 2.9) has room for a test planet; 10 -> 15.3 d is 12.0 mutual Hill
    # radii wide, too narrow for a planet 10 R_H,m from both neighbours: packed there.
    pairs, system = packing_block(_posterior(_system()))
    g1, g2 = pairs
    assert g1["room_fit_probability"] == 0.0 and g1["room_fit_interval_day"] is None
    assert g2["room_fit_probability"] == 1.0
    lo, hi = g2["room_fit_interval_day"]
    assert 15.3 < lo < hi < 45.0
    assert system["packing"]["packed_probability"] == 0.0
    # default mass: geometric mean of 8 and 12 Earth masses = 9.80
    assert g2["room_test_mass_mearth"]["median"] == pytest.approx(np.sqrt(96.0), rel=1e-9)
    # a heavier given test planet needs more room: narrower interval
    heavy = packing_block(_posterior(_system()), test_mass_mearth=30.0)[0][1]
    assert heavy["room_test_mass_basis"].startswith("30 Earth masses")
    assert heavy["room_fit_interval_day"][0] > lo and heavy["room_fit_interval_day"][1] < hi
    # with a 25 R_H,m threshold nothing fits anywhere: packed in every draw
    assert packing_block(_posterior(_system()), min_hill=25.0)[1]["packing"]["packed_probability"] == 1.0


def test_transit_odds_figure_from_document():
    # The figure reads only the document: curve, band, isotropic line and the companion's marker.
    from archsys.output.figures.transit_odds import transit_odds_figure
    post = _posterior(_system(), ref_inc_deg=89.5, sigma_deg=1.0)
    planets = [{"name": n, "period_days": {"median": P}} for n, P in (("T b", 10.0), ("T c", 15.3), ("T d", 45.0))]
    for entry, extra in zip(planets, companion_transit_block(post)):
        entry.update(extra)
    doc = {"system": "Test", "planets": planets, "transit_probability_curve": transit_probability_curve(post)}
    fig = transit_odds_figure(doc)
    ax = fig.axes[0]
    assert len(ax.lines) == 3                                     # mean, isotropic, one companion
    assert ax.get_xscale() == "log" and ax.get_xlabel() == "period [d]"
    assert transit_odds_figure({"planets": []}) is None


def test_readme_worked_example_numbers():
    # Regression of the README's worked example (invented demo system Perrow, seed 0, 4000 draws):
    # the numbers printed there must stay true to within their Monte Carlo scatter (the README says
    # so), so that an engine change that keeps the posterior does not break this test.
    from archsys.model.reader import read_system
    from archsys.pipeline import analyze
    import pathlib
    path = pathlib.Path(__file__).resolve().parents[1] / "demo_systems" / "perrow.toml"
    doc = analyze(read_system(path)).document
    ct = doc["planets"][2]
    assert ct["transit_probability"] == pytest.approx(0.62, abs=0.03)
    assert ct["transit_probability_isotropic"] == pytest.approx(0.027, abs=0.001)
    assert "transit_probability" not in doc["planets"][0]
    b, c = doc["pairs"]
    assert b["room_fit_probability"] == 0.0
    assert c["room_fit_probability"] == pytest.approx(0.91, abs=0.04)
    lo, hi = c["room_fit_interval_day"]
    assert lo == pytest.approx(12.3, abs=0.15) and hi == pytest.approx(14.7, abs=0.15)
    assert doc["packing"]["packed_probability"] == pytest.approx(0.09, abs=0.04)
    assert b["super_period_days"]["median"] == pytest.approx(177.6, abs=0.1)
    assert b["ttv_amplitude_inner_min"]["median"] == pytest.approx(3.3, abs=0.2)
    assert b["ttv_amplitude_outer_min"]["median"] == pytest.approx(3.9, abs=0.2)
    assert c["super_period_resonance"] == "3:1" and "ttv_amplitude_inner_min" not in c
    assert c["super_period_days"]["median"] == pytest.approx(2800, rel=0.05)
    curve = doc["transit_probability_curve"]
    at = [float(np.interp(np.log(x), np.log(curve["period_day"]), curve["probability"])) for x in (10, 24, 48)]
    assert at == pytest.approx([0.88, 0.61, 0.22], abs=0.03)


def test_cli_probe_mass_and_free_eccentricity(capsys):
    # Behaviour check (no outside source): the options reach the blocks and the provenance;
    # bad values give one line and exit status 2.
    import json
    import pathlib
    from archsys.cli import main
    demo = str(pathlib.Path(__file__).resolve().parents[1] / "demo_systems" / "perrow.toml")
    fast = ["--mode", "direct", "--draws", "300", "--quiet"]
    assert main(["report", demo, "--json", *fast, "--probe-mass", "3", "--ttv-free-ecc", "0.01"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["pairs"][1]["room_test_mass_basis"].startswith("3 Earth masses")
    assert "|Z_free| = 0.01" in doc["timing"]["assumptions"]
    assert doc["provenance"]["options"]["test_planet_mass"] == 3.0
    for bad in (["--probe-mass", "0"], ["--ttv-free-ecc", "1.5"]):
        assert main(["report", demo, *fast, *bad]) == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and err[0].startswith("archsys: error:")


def test_room_intervals_for_the_architecture_figure():
    from archsys.scores.packing import room_intervals
    pairs, _ = packing_block(_posterior(_system()))
    doc = {"pairs": pairs}
    (iv,) = room_intervals(doc)                                   # only the 15.3 -> 45 d gap has room
    assert iv == pairs[1]["room_fit_interval_day"]
    assert room_intervals({"pairs": []}) == []


def test_timing_figure_from_document():
    # Behaviour check: one point per planet of each near-first-order pair, a triangle for the
    # second-order pair; None without super-periods.
    from archsys.output.figures.timing import timing_figure
    pairs, system = super_period_block(_posterior(_system()))
    doc = {"system": "Test", "pairs": [{"inner": a, "outer": b, **q} for (a, b), q in
                                       zip((("T b", "T c"), ("T c", "T d")), pairs)], **system}
    fig = timing_figure(doc)
    ax = fig.axes[0]
    assert ax.get_xlabel() == "super-period [d]" and "approx" in ax.get_ylabel()
    assert timing_figure({"pairs": [{"inner": "x", "outer": "y"}]}) is None


def test_joint_posterior_companion_probability_matches_tilt_integral():
    # On a real joint posterior (invented demo system Perrow), the planet without orientation data
    # follows the tilt model given each draw's reference plane and sigma, so the fraction of draws
    # that transit (Winn 2010 eq. 7) must agree with the mean tilt-integrated probability (an
    # independent route through transit_odds) within 4 binomial errors.
    import pathlib
    from archsys.model.reader import read_system
    from archsys.pipeline import AnalysisOptions, analyze
    path = pathlib.Path(__file__).resolve().parents[1] / "demo_systems" / "perrow.toml"
    res = analyze(read_system(path), AnalysisOptions(n_draws=2000, seed=5))
    d = res.posterior.draws
    entry = res.document["planets"][2]
    aor = d["a"][:, 2] / (d["r_star"] * RSUN_AU)
    rb = transit_odds.conditional_transit_probability(aor, d["ref_inc"], d["sigma_mutual"], 0.0,
                                                      d["ecc"][:, 2], d["omega"][:, 2]).mean()
    assert abs(entry["transit_probability"] - rb) < 4 * entry["transit_probability_mc_error"]


def test_predictions_reach_every_format():
    # Behaviour check (no outside source): the three registered scores show in every human format
    # through their column metadata, and their verdicts are worded.
    import pathlib
    from archsys.model.reader import read_system
    from archsys.output.formats import render
    from archsys.pipeline import AnalysisOptions, analyze
    path = pathlib.Path(__file__).resolve().parents[1] / "demo_systems" / "perrow.toml"
    res = analyze(read_system(path), AnalysisOptions(n_draws=600, seed=2))
    for fmt in ("text", "markdown", "html"):
        out = render(res, fmt, figures=[])
        for label in ("P(transits), given the architecture", "super-period", "TTV amplitude, inner (approx.)",
                      "room for a planet", "system packed", "given the architecture"):
            assert label in out, (fmt, label)
    tex = render(res, "latex", figures=[])
    assert r"$P_\mathrm{tr}$" in tex and r"$P_\mathrm{sup}$" in tex


def test_every_prediction_key_has_column_metadata():
    # Behaviour check: the keys the predictions add (joint posterior: curve and companion keys
    # included) all have column metadata, as the registry requires.
    import pathlib
    from archsys.model.reader import read_system
    from archsys.pipeline import AnalysisOptions, analyze
    from archsys.scores import column
    path = pathlib.Path(__file__).resolve().parents[1] / "demo_systems" / "perrow.toml"
    doc = analyze(read_system(path), AnalysisOptions(n_draws=600, seed=4)).document
    keys = {k for q in doc["pairs"] for k in q if k.startswith(("super_period", "ttv_", "room_"))}
    assert {"super_period_days", "ttv_amplitude_inner_min", "room_fit_probability"} <= keys
    for k in keys:
        assert column(k, "pair") is not None, k
    for k in {k for p in doc["planets"] for k in p if k.startswith("transit_")}:
        assert column(k, "planet") is not None, k
    for block in ("packing", "timing", "transit_probability_curve"):
        for k in doc[block]:
            assert column(f"{block}.{k}", "system") is not None, (block, k)
