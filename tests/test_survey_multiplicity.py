"""Population mutual inclinations from transit multiplicity (archsys.survey.multiplicity*).

Recovery: synthetic catalogues made by the forward model with plain isotropic observers (not the band
importance sampling the fit uses) and a different seed.  Real data: the Open Exoplanet Catalogue extract
(Rein 2012, arXiv:1211.7121, snapshot 2026-08-22) with tests/data/oec_columns.toml, compared with

* Fabrycky et al. 2014 (ApJ 790, 146): mode of the mutual inclinations 1.0-2.2 deg ([Fabrycky2014],
  verified).  For a Rayleigh law the mode is its sigma; the mutual inclination of two planets tilted by
  Rayleigh(s) from one plane is Rayleigh(sqrt(2) s) for small angles, so our tilt sigma should be
  1.0/sqrt(2)-2.2/sqrt(2) = 0.71-1.56 deg (derived).
* Fang & Margot 2012 (ApJ 761, 92): more than 85 % of planets within 3 deg of a common plane ([FangMargot2012],
  verified), i.e. a tilt sigma below 1.55 deg for a single Rayleigh ([FangMargot2012], derived).
* Lissauer et al. 2011 (ApJS 197, 8): a single population that reproduces the numbers of multi-transiting
  systems predicts too few single-transit systems (an excess of singles, the later "Kepler dichotomy";
  from memory, [Lissauer2011]), with inclination dispersions of a few degrees at most (from memory).
  The dichotomy itself is verified as a headline of He, Ford & Ragozzine 2019 ([He2019]).
"""
import csv
import math
import pathlib

import numpy as np
import pytest

from archsys.cli import main
from archsys.survey import multiplicity as mp
from archsys.survey.catalog import group_systems, read_catalog
from archsys.survey.column_map import bind, load_column_map
from archsys.survey.multiplicity_block import MultiplicitySettings, transit_multiplicity
from archsys.output.figures.multiplicity import plot_transit_multiplicity
from archsys.survey.multiplicity_fit import CountModel, fit_counts, single_excess
from archsys.survey.run import run_survey

OEC = pathlib.Path(__file__).parent / "data" / "oec" / "open_exoplanet_catalogue_planets.csv"  # Rein 2012; see data/oec/README.md
COLUMNS = pathlib.Path(__file__).parent / "data" / "oec_columns.toml"
FABRYCKY_TILT_DEG = (1.0 / math.sqrt(2.0), 2.2 / math.sqrt(2.0))     # derived, see module docstring
FANG_MARGOT_MAX_TILT_DEG = 1.55                                      # derived ([FangMargot2012])


def _pool(seed=0, n=2000):
    """Invented planet pool (log-uniform periods 1-300 d, radii around 2 R_E, Sun-like hosts)."""
    rng = np.random.default_rng(seed)
    return mp.PlanetPool.from_transits(np.exp(rng.uniform(0.0, math.log(300.0), n)), rng.lognormal(0.7, 0.5, n),
                                       rng.uniform(0.8, 1.1, n), rng.uniform(0.8, 1.2, n))


def _synthetic(pool, det, truth, seed, n_systems=60_000):
    sigma, mbar, f = truth
    c = mp.simulate_counts(pool, det, math.radians(sigma), mbar, f, n_systems, np.random.default_rng(seed),
                           isotropic_observers=True)
    return c[1:]


def _inside(iv, x, lo="lo95", hi="hi95"):
    return iv[lo] <= x <= iv[hi]


def test_single_recovery_of_sigma_multiplicity_and_single_fraction():
    # Behaviour check against the model's own truth (no outside source): sigma = 2 deg, mean multiplicity 3,
    # 40 % singles recovered within their 95 % intervals from ~3000 synthetic transiting systems.
    pool, det = _pool(), mp.Detectability((1.0, 300.0))
    truth = (2.0, 3.0, 0.4)
    counts = _synthetic(pool, det, truth, seed=11)
    assert 2000 < counts.sum() < 6000
    cm = CountModel(mp.MultiplicityModel(pool, det, n_per_multiplicity=5000, seed=3), n_grid=32)
    fit = fit_counts(cm, counts, seed=1, n_steps=2000, n_burn=600)
    assert _inside(fit["sigma_deg"], truth[0])
    assert _inside(fit["mean_multiplicity"], truth[1])
    assert _inside(fit["single_fraction"], truth[2])
    # the one-population fit to the multis must see the excess of singles the truth implies:
    # [p1/(1 - p1)] with the singles over the same without them (the multis' shape does not depend on f)
    one = fit_counts(cm, counts, mixture=False, bins=np.arange(1, 7), seed=2, n_steps=1500, n_burn=500)
    ex = single_excess(cm, counts, one, np.random.default_rng(0))
    ls = math.log(math.radians(truth[0]))
    p, p0 = (cm.probabilities([ls], [truth[1]], [f])[0, 0] for f in (truth[2], 0.0))
    true_ratio = (p / (1 - p)) / (p0 / (1 - p0))
    assert true_ratio > 1.2
    assert _inside(ex["ratio_observed_to_predicted"], true_ratio)
    assert ex["ratio_observed_to_predicted"]["median"] > 1.0


@pytest.mark.slow
def test_coverage_over_synthetic_catalogues():
    # Coverage of the 68 % and 95 % intervals over 40 synthetic catalogues whose truths are drawn from
    # sigma log-uniform in [0.5, 8] deg, mbar uniform in [1.5, 5], f uniform in [0.1, 0.7].  With 40
    # catalogues and 3 parameters (120 intervals, correlated within a catalogue) we accept 68 % coverage
    # in [0.50, 0.86] and 95 % coverage >= 0.85 (binomial ranges, common practice).
    pool, det = _pool(seed=4), mp.Detectability((1.0, 300.0))
    cm = CountModel(mp.MultiplicityModel(pool, det, n_per_multiplicity=8000, seed=5), n_grid=40)
    rng = np.random.default_rng(2026)
    hit68, hit95 = [], []
    for i in range(40):
        truth = (math.exp(rng.uniform(math.log(0.5), math.log(8.0))), rng.uniform(1.5, 5.0), rng.uniform(0.1, 0.7))
        counts = _synthetic(pool, det, truth, seed=100 + i)
        fit = fit_counts(cm, counts, seed=i, n_steps=2000, n_burn=600)
        for key, x in zip(("sigma_deg", "mean_multiplicity", "single_fraction"), truth):
            hit68.append(_inside(fit[key], x, "lo", "hi"))
            hit95.append(_inside(fit[key], x))
    assert 0.50 <= np.mean(hit68) <= 0.86, np.mean(hit68)
    assert np.mean(hit95) >= 0.85, np.mean(hit95)


# ---------------------------------------------------------------- real data

@pytest.fixture(scope="module")
def oec_block():
    cat = read_catalog(str(OEC))
    cmap = bind(load_column_map(str(COLUMNS)), cat)
    groups, _ = group_systems(cat, cmap.system)
    st = MultiplicitySettings(planets="transiting == true and method == transit")
    return transit_multiplicity(groups, cmap, cat.columns, cat.units, st, seed=0)


def test_oec_counts_are_complete(oec_block):
    # The extract's transit-discovered, transit-flagged planets (counted from the file itself): 3927, of
    # which 10 have no period; nothing is dropped silently.
    b = oec_block
    ex = b["excluded"]
    assert ex["planets_matching"] == 3927 and ex["no_period"] == 10
    assert b["observed"]["n_planets"] == 3927 - 10 - ex["cut_by_period"] - ex["cut_by_radius"]
    counts = b["observed"]["counts"]
    assert sum(k * n for k, n in zip(range(1, 7), counts[:6])) + 7 * counts[6] <= b["observed"]["n_planets"]
    assert counts[0] > counts[1] > counts[2] > counts[3]


def test_oec_sigma_against_fabrycky_and_fang_margot(oec_block):
    s = oec_block["fit"]["two_populations"]["sigma_deg"]
    # Fabrycky et al. 2014 (verified; tilt range derived): the 68 % interval overlaps 0.71-1.56 deg.
    assert s["lo"] <= FABRYCKY_TILT_DEG[1] and s["hi"] >= FABRYCKY_TILT_DEG[0]
    # Fang & Margot 2012 (verified headline; bound derived): 1.55 deg lies inside the 68 % interval.
    # (With the observed spacing -- adjacent period ratios near 2 -- outer planets rarely transit together,
    # so counts alone constrain sigma only loosely: the interval spans more than a decade; README.)
    assert s["lo"] < FANG_MARGOT_MAX_TILT_DEG < s["hi"]
    # Lissauer et al. 2011 (from memory): a few degrees, inside the 95 % interval.
    assert s["lo95"] < 3.0 < s["hi95"]
    # the spacing the model used, and that the lower part of the posterior follows the prior
    assert oec_block["model"]["spacing"]["kind"] == "observed_ratios"
    assert oec_block["model"]["spacing"]["n_ratios"] > 500
    assert oec_block["sigma_follows_prior"] is True


def test_oec_excess_of_single_transit_systems(oec_block):
    # Lissauer et al. 2011 (from memory) / He, Ford & Ragozzine 2019 (dichotomy headline, verified): the
    # one-population model fitted to the multis predicts fewer singles than observed.
    ex = oec_block["single_excess"]
    assert ex["ratio_observed_to_predicted"]["lo95"] > 1.2
    assert ex["observed_single_transit_systems"] == oec_block["observed"]["counts"][0]
    assert oec_block["fit"]["two_populations"]["single_fraction"]["lo95"] > 0.1
    # the two-population model fits the singles better than one population fitted to all counts
    assert oec_block["fit"]["two_populations"]["max_log_likelihood"] > \
        oec_block["fit"]["one_population"]["max_log_likelihood"]


def test_figure_of_observed_and_simulated_counts(oec_block):
    from matplotlib.figure import Figure
    fig = plot_transit_multiplicity(oec_block, preset="two-column")
    assert isinstance(fig, Figure) and fig.get_figwidth() == pytest.approx(7.1)   # preset width (style.py)
    assert len(fig.axes[0].get_lines()) == 3                  # observed + two simulated series
    empty = plot_transit_multiplicity({"fit": None, "reason": "no transits"})
    assert "no transits" in empty.axes[0].texts[0].get_text()


# ---------------------------------------------------------------- survey plumbing

def _catalogue(path, n_systems=40, with_flag=True):
    """Invented systems (not real planets) with 1-3 planets, all transiting."""
    rng = np.random.default_rng(7)
    header = ["system", "planet", "period", "star_mass", "star_radius", "radius"] + (["transiting"] if with_flag else [])
    with open(path, "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=header, extrasaction="ignore")
        w.writeheader()
        for s in range(n_systems):
            n = 1 if s % 3 else 1 + s % 4
            p = 3.0 * np.cumprod(rng.uniform(1.5, 2.5, n))
            for j in range(n):
                w.writerow({"system": f"Inv-{s:02d}", "planet": f"Inv-{s:02d} {'bcde'[j]}", "period": f"{p[j]:.4f}",
                            "star_mass": "0.9", "star_radius": "0.85", "radius": f"{rng.uniform(1, 3):.2f}",
                            "transiting": "1"})
    return path


def test_survey_writes_block_figure_and_side_by_side(tmp_path, capsys):
    cat = _catalogue(tmp_path / "inv.csv")
    rc = main(["survey", str(cat), "--out", str(tmp_path / "o"), "--mode", "fast", "--jobs", "1",
               "--transit-period", "1", "200", "--transit-second", "isotropic"])
    assert rc == 0
    import json
    pop = json.loads((tmp_path / "o" / "population.json").read_text())
    b = pop["transit_multiplicity"]
    assert b["detectability"]["period_day"] == [1.0, 200.0]
    assert b["model"]["second_population"] == "isotropic"
    assert b["observed"]["n_systems"] == 40 and b["fit"]["two_populations"]["sigma_deg"]["median"] > 0
    sbs = b["side_by_side"]
    assert set(sbs) == {"per_system_posteriors", "transit_multiplicity"}
    assert all(v["assumptions"] for v in sbs.values())
    assert (tmp_path / "o" / "figures" / "transit_multiplicity.png").exists()
    err = capsys.readouterr().err
    assert "transit multiplicity (geometric only)" in err and "per-system posteriors" in err


def test_no_transit_flag_switches_the_block_off(tmp_path):
    cat = _catalogue(tmp_path / "noflag.csv", n_systems=4, with_flag=False)
    pop = run_survey(str(cat), str(tmp_path / "o"), mode="fast", jobs=1, figures=False)
    assert pop["transit_multiplicity"]["fit"] is None
    assert "no transit flag" in pop["transit_multiplicity"]["reason"]


@pytest.mark.parametrize("args, match", [
    (["--transit-period", "10", "5"], "--transit-period needs MIN MAX"),
    (["--transit-planets", "transiting == == 1"], "--transit-planets"),
])
def test_bad_transit_options_are_one_line_errors(tmp_path, capsys, args, match):
    cat = _catalogue(tmp_path / "c.csv", n_systems=3)
    rc = main(["survey", str(cat), "--out", str(tmp_path / "o"), "--jobs", "1"] + args)
    err = capsys.readouterr().err
    assert rc == 2 and match in err and err.count("\n") == 1 and "Traceback" not in err
    assert not (tmp_path / "o" / "systems.csv").exists()


# ---------------------------------------------------------------- spacing: recovery on wider-spaced catalogues

def _independent_catalogue(sigma_deg, n_sys, seed, single_fraction=0.0, mbar=3.0):
    """An independent transit-survey simulator (not archsys' forward model; vector geometry written here).

    Sun-like stars; N planets from the zero-truncated Poisson law (mean ``mbar``, at most 8) or one planet
    for a fraction ``single_fraction``; innermost period log-uniform in 1-30 d and adjacent period ratios
    log-normal (median 1.8, 0.25 in ln, at least 1.3) -- spaced much wider than 2 sqrt 3 mutual Hill radii;
    radii log-normal around 2 R_E; each orbit normal tilted from an isotropic reference normal by
    psi ~ Rayleigh(sigma) at a uniform node; one isotropic observer per star; a planet is seen when
    |n . o| < (R* + Rp)/a (Winn 2010, circular) and 1 <= P <= 300 d.  Returns (system ids, P, Rp) of
    the transiting planets."""
    from archsys.physics.constants import REARTH_AU, RSUN_AU
    rng = np.random.default_rng(seed)
    pmf = mp.truncated_poisson_pmf(mp.poisson_rate_for_mean(mbar, 8), 8)[0]
    N = 1 + np.searchsorted(np.cumsum(pmf)[:-1], rng.uniform(size=n_sys), side="right")
    N[rng.uniform(size=n_sys) < single_fraction] = 1
    unit = lambda v: v / np.linalg.norm(v, axis=-1, keepdims=True)      # noqa: E731
    obs, ref = unit(rng.normal(size=(n_sys, 3))), unit(rng.normal(size=(n_sys, 3)))
    e1 = unit(np.cross(ref, [0.0, 0.0, 1.0]))
    e2 = np.cross(ref, e1)
    sid, per, rad = [], [], []
    for n in range(1, 9):
        idx = np.flatnonzero(N == n)
        m = idx.size
        if not m:
            continue
        ratios = np.maximum(np.exp(rng.normal(math.log(1.8), 0.25, (m, n - 1))), 1.3)
        P = np.exp(rng.uniform(0.0, math.log(30.0), m))[:, None] * np.concatenate(
            [np.ones((m, 1)), np.cumprod(ratios, axis=1)], axis=1)
        R = np.exp(rng.normal(math.log(2.0), 0.4, (m, n)))
        a = (P / 365.25) ** (2.0 / 3.0)                       # au, one solar mass (Kepler III)
        psi = math.radians(sigma_deg) * np.sqrt(-2.0 * np.log(rng.uniform(size=(m, n))))
        phi = rng.uniform(0.0, 2.0 * np.pi, (m, n))
        normal = (np.cos(psi)[..., None] * ref[idx, None, :] + np.sin(psi)[..., None]
                  * (np.cos(phi)[..., None] * e1[idx, None, :] + np.sin(phi)[..., None] * e2[idx, None, :]))
        seen = (np.abs(np.sum(normal * obs[idx, None, :], axis=-1)) < (RSUN_AU + R * REARTH_AU) / a) \
            & (P >= 1.0) & (P <= 300.0)
        i, j = np.nonzero(seen)
        sid.append(idx[i])
        per.append(P[i, j])
        rad.append(R[i, j])
    return np.concatenate(sid), np.concatenate(per), np.concatenate(rad)


def _fit_catalogue(sid, P, R, spacing, n_per=3000, n_grid=24, n_steps=1000, n_burn=400):
    k = np.bincount(np.unique(sid, return_inverse=True)[1])
    counts = np.bincount(np.minimum(k, mp.K_MAX), minlength=mp.K_MAX + 1)[1:]
    pool = mp.PlanetPool.from_transits(P, R, np.ones_like(P), np.ones_like(P))
    ratios = mp.adjacent_ratios(sid, P) if spacing else None
    cm = CountModel(mp.MultiplicityModel(pool, mp.Detectability((1.0, 300.0)), n_per_multiplicity=n_per,
                                         seed=3, spacing=ratios), n_grid=n_grid)
    return fit_counts(cm, counts, seed=1, n_steps=n_steps, n_burn=n_burn), counts


def test_sigma_recovered_from_a_wider_spaced_catalogue_with_observed_spacing():
    # Fast small version: one catalogue of about 3500 observed systems, sigma = 3 deg, spaced wider than
    # the Hill minimum.  With the spacing taken from the observed adjacent period ratios the truth lies in
    # the 95 % interval (packing instead: next test).
    sid, P, R = _independent_catalogue(3.0, 30_000, seed=1)
    fit, counts = _fit_catalogue(sid, P, R, spacing=True, n_per=2000, n_grid=20, n_steps=700, n_burn=300)
    assert 2500 < counts.sum() < 5000
    assert _inside(fit["sigma_deg"], 3.0), fit["sigma_deg"]


@pytest.mark.slow
def test_packing_to_the_hill_minimum_overestimates_sigma_on_wider_spaced_catalogues():
    # The assumption the model used to make silently: on the same catalogue, packed systems need a
    # sigma far above the truth (measured: median 11 deg for a truth of 3 deg).
    sid, P, R = _independent_catalogue(3.0, 30_000, seed=1)
    packed, _ = _fit_catalogue(sid, P, R, spacing=False)
    assert packed["sigma_deg"]["lo95"] > 3.0 * 1.5, packed["sigma_deg"]


@pytest.mark.slow
def test_sigma_recovery_over_wider_spaced_catalogues():
    # Six catalogues of about 3500 observed systems: sigma 1.5, 3 and 6 deg, single fraction 0 and 0.4.
    # The 95 % intervals must hold the truth in at least 5 of 6 (binomial: 95 % coverage gives >= 5 of 6
    # with probability 0.967, while "all 6" would fail a perfect model 26 % of the time).  The 68 %
    # intervals are reported, not asserted: on the final main they held the truth in 2 of 6 (they
    # undercover; the 95 % bound is the number to quote -- README, transit multiplicity).
    hits95, hits68, missed = 0, 0, []
    for i, (s, f) in enumerate([(1.5, 0.0), (3.0, 0.0), (6.0, 0.0), (1.5, 0.4), (3.0, 0.4), (6.0, 0.4)]):
        sid, P, R = _independent_catalogue(s, 30_000 if f == 0 else 50_000, seed=10 + i, single_fraction=f)
        fit, _ = _fit_catalogue(sid, P, R, spacing=True, n_per=6000, n_grid=32, n_steps=2000, n_burn=600)
        ok = _inside(fit["sigma_deg"], s)
        hits95 += ok
        if not ok:
            missed.append((s, f, fit["sigma_deg"]))
        hits68 += _inside(fit["sigma_deg"], s, "lo", "hi")
    print(f"68 % intervals holding the truth: {hits68} of 6; 95 %: {hits95} of 6")
    assert hits95 >= 5, missed
