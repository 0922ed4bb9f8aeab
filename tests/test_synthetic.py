"""Synthetic populations (archsys simulate): the drawn laws match their stated distributions.

Sources beside each check: Rayleigh distributions against scipy.stats (a general reference library);
geometric transit probability R*/a for circular orbits (Winn 2010, "Transits and Occultations", eq. 9);
mutual Hill spacing recomputed with the Chambers, Wetherill & Boss (1996) mutual Hill radius.
"""
import csv
import math
import subprocess
import sys

import numpy as np
import pytest
from scipy import stats

from archsys.errors import InputError
from archsys.physics import hill, kepler
from archsys.physics.constants import MEARTH_MSUN, RSUN_AU
from archsys.survey.synthetic import PopulationLaws, simulate_population, write_population


def _all(n, laws, seed=0, truth=True):
    blocks = list(simulate_population(n, laws, seed=seed, truth=truth))
    return {k: np.concatenate([b[k] for b in blocks]) for k in blocks[0]}


def test_rayleigh_eccentricities_and_tilts_against_scipy():
    c = _all(20000, PopulationLaws(planets=2, ecc_sigma=0.05, incl_sigma_deg=3.0))
    # KS tests against scipy.stats.rayleigh (the cap at 0.8 is ~16 sigma away: no effect)
    assert stats.kstest(c["true_ecc"], stats.rayleigh(scale=0.05).cdf).pvalue > 1e-3
    assert stats.kstest(c["true_psi_deg"], stats.rayleigh(scale=3.0).cdf).pvalue > 1e-3


def test_transit_fraction_matches_geometric_probability():
    # one planet, circular orbits, isotropic planes: P(transit) = R*/a (Winn 2010, eq. 9)
    c = _all(30000, PopulationLaws(planets=1, ecc_sigma=0.0, incl_sigma_deg=0.0, mass_measured=1.0))
    a = kepler.a_au(c["period"], c["star_mass"])          # observed values: tiny noise, enough here
    expected = np.mean(c["star_radius"] * RSUN_AU / a)
    got = c["transiting"].mean()
    se = math.sqrt(expected * (1 - expected) / a.size)
    assert abs(got - expected) < 4 * se + 0.002, (got, expected)


def test_spacing_in_mutual_hill_radii():
    c = _all(10000, PopulationLaws(planets=2))
    m = c["true_mass"].reshape(-1, 2) * MEARTH_MSUN
    P = c["period"].reshape(-1, 2)
    ms = c["star_mass"].reshape(-1, 2)[:, 0]
    a = kepler.a_au(P, ms[:, None])
    d = hill.hill_separation(a[:, 0], a[:, 1], m[:, 0], m[:, 1], ms)
    # N(20, 8) truncated below 2 sqrt(3): mean from the truncated-normal formula (scipy.stats.truncnorm)
    mean = stats.truncnorm((2 * math.sqrt(3) - 20) / 8, np.inf, loc=20, scale=8).mean()
    assert abs(np.mean(d) - mean) < 0.4                    # stellar-mass noise moves a by ~1.7 %
    assert np.all(d > 2 * math.sqrt(3) * 0.9)


def test_seeded_and_prefix_stable(tmp_path):
    laws = PopulationLaws(planets=3)
    small, big = tmp_path / "s.csv", tmp_path / "b.csv"
    write_population(small, 120, laws, seed=5)
    write_population(big, 10050, laws, seed=5)
    s, b = small.read_text().splitlines(), big.read_text().splitlines()
    assert s == b[:len(s)] and len(s) == 1 + 360
    write_population(tmp_path / "s2.csv", 120, laws, seed=5)
    assert (tmp_path / "s2.csv").read_bytes() == small.read_bytes()
    write_population(tmp_path / "s3.csv", 120, laws, seed=6)
    assert (tmp_path / "s3.csv").read_bytes() != small.read_bytes()


def test_truncated_poisson_multiplicity_and_only_transiting(tmp_path):
    c = _all(20000, PopulationLaws(mean_planets=2.0, max_planets=8))
    _, counts = np.unique(c["system"], return_counts=True)
    lam = 2.0
    pk = stats.poisson(lam).pmf(np.arange(1, 9))
    pk /= pk.sum()                                        # zero-truncated (and at 8) Poisson
    assert abs(counts.mean() - np.sum(np.arange(1, 9) * pk)) < 0.03
    t = _all(20000, PopulationLaws(mean_planets=2.0, only_transiting=True))
    assert np.all(t["transiting"] == 1) and np.all(np.isfinite(t["b"]))


def test_survey_reads_the_catalogue(tmp_path):
    from archsys.survey.run import run_survey
    cat = tmp_path / "pop.csv"
    write_population(cat, 6, PopulationLaws(planets=3), seed=1)
    pop = run_survey(cat, tmp_path / "out", mode="fast", jobs=1, figures=False, quiet=True)
    assert pop["counts"]["systems_analysed"] == 6 and pop["counts"]["systems_rejected"] == 0
    rows = list(csv.DictReader(open(tmp_path / "out" / "planets.csv")))
    assert len(rows) == 18


def test_bad_laws_and_paths(tmp_path):
    with pytest.raises(InputError, match="ecc measured fraction"):
        PopulationLaws(ecc_measured=1.5)
    with pytest.raises(InputError, match=".csv or .parquet"):
        write_population(tmp_path / "x.txt", 3)
    r = subprocess.run([sys.executable, "-m", "archsys", "simulate", str(tmp_path / "no" / "x.csv"),
                        "--systems", "3"], capture_output=True, text=True)
    assert r.returncode == 2 and r.stderr.count("\n") == 1 and "does not exist" in r.stderr
    assert not list(tmp_path.glob(".*tmp"))
