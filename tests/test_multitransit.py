"""Geometry of several transiting planets (archsys.physics.multitransit) and the forward model's building
blocks (archsys.survey.multiplicity), against worked values of docs/references.md and reference libraries."""
import math

import numpy as np
import pytest
from scipy import stats

from archsys.physics import multitransit as mt
from archsys.survey import multiplicity as mp

SIDEREAL_YEAR_DAY = 365.256363  # Sun-Earth worked case of [Winn2010] (sidereal year from memory, docs/references.md)
# Solar-system masses as fractions of the Sun ([Luzum2011], IAU 2009 ratios, verified)
M_EARTH = 1.0 / 332946.050895
M_MARS = 1.0 / 3098703.59


def test_sun_earth_grazing_halfwidth():
    # Winn 2010 eq. 9 (e = 0) with grazing transits: (R_sun + R_E)/a = 0.4693 % ([Winn2010], derived).
    a = mt.semi_major_axis_au(SIDEREAL_YEAR_DAY, 1.0)
    assert float(a) == pytest.approx(1.0, abs=2e-5)        # Kepler III, planet mass neglected
    assert float(mt.transit_halfwidth(a, 1.0, 1.0)) == pytest.approx(0.004693, abs=1e-6)   # R_p = 1 R_E


def test_single_planet_transit_probability_is_epsilon_for_isotropic_observers():
    # Isotropic orbit normals: o.n uniform on [-1, 1], so P(|o.n| < eps) = eps ([Winn2010], Winn 2010 eq. 9).
    rng = np.random.default_rng(3)
    n = 400_000
    eps = np.full((n, 1), 0.05)
    sin_beta = 2.0 * rng.random(n) - 1.0
    psi = np.arccos(2.0 * rng.random((n, 1)) - 1.0)         # isotropic orbit normal about z
    node = 2 * np.pi * rng.random((n, 1))
    hit = mt.transit_mask(psi, node, sin_beta, eps, np.ones((n, 1), bool))
    assert hit.mean() == pytest.approx(0.05, abs=4 * math.sqrt(0.05 * 0.95 / n))


def test_earth_mars_spacing_in_mutual_hill_radii():
    # [Standish1992] (derived): Earth-Mars are 40.0 mutual Hill radii apart at period ratio 1.881.
    # The inverse of that spacing must give back the period ratio (3 significant figures quoted).
    r = float(mt.min_period_ratio(M_EARTH, M_MARS, 1.0, 40.0))
    assert r == pytest.approx(1.881, rel=2e-3)


def test_enforce_spacing_sorts_and_separates():
    # Behaviour check (no outside source): output increasing, adjacent ratios at least the minimum.
    rng = np.random.default_rng(0)
    P = np.exp(rng.uniform(0, 3, (500, 5)))
    m = np.full((500, 5), 3e-5)
    Ms = np.ones(500)
    P2, order = mt.enforce_spacing(P, m, Ms, 10.0)
    assert np.all(np.diff(P2, axis=1) > 0)
    rmin = float(mt.min_period_ratio(3e-5, 3e-5, 1.0, 10.0))
    assert np.all(P2[:, 1:] / P2[:, :-1] >= rmin * (1 - 1e-12))
    assert np.allclose(P2[:, 0], np.sort(P, axis=1)[:, 0])      # the innermost planet is never moved
    assert np.array_equal(np.sort(order, axis=1), np.tile(np.arange(5), (500, 1)))


def test_coplanar_pair_gives_nested_bands():
    # Common practice geometry: two coplanar planets (sigma = 0) with eps1 > eps2 transit together
    # for a fraction eps2 of isotropic observers and the inner one alone for eps1 - eps2.
    n = 200_000
    rng = np.random.default_rng(1)
    g = {"eps": np.tile([0.08, 0.03], (n, 1)), "asin_eps": np.arcsin(np.tile([0.08, 0.03], (n, 1))),
         "det": np.ones((n, 2), bool), "ray": np.sqrt(-2 * np.log(rng.random((n, 2)))),
         "node": 2 * np.pi * rng.random((n, 2)), "u": rng.random(n)}
    c = mp._counts(g, 0.0, 7) / n              # band importance weights: observers only in |sin beta| < 0.08
    sd = 0.08 * math.sqrt(0.375 * 0.625 / n)   # 0.03/0.08 of the band sees both
    assert c[2] == pytest.approx(0.03, abs=4 * sd)
    assert c[1] == pytest.approx(0.05, abs=4 * sd)
    assert c[1] + c[2] == pytest.approx(0.08, rel=1e-12)    # exact: every observer in the band sees the inner one
    iso = mp._counts(g, 0.0, 7, isotropic_observers=True) / n
    assert iso[2] == pytest.approx(0.03, abs=4 * math.sqrt(0.03 / n))
    assert iso[1] == pytest.approx(0.05, abs=4 * math.sqrt(0.05 / n))


def test_band_importance_sampling_matches_isotropic_observers():
    # Unbiasedness of the observer band (derivation in archsys.physics.multitransit): the weighted counts
    # agree with plain isotropic observers within Monte Carlo error, for tilted systems of 4 planets.
    rng = np.random.default_rng(5)
    n = 2000
    pool = mp.PlanetPool.from_transits(np.exp(rng.uniform(0, 5, n)), rng.lognormal(0.7, 0.5, n),
                                       np.ones(n), np.ones(n))
    det = mp.Detectability((1.0, 150.0))
    for sigma in (1.0, 8.0):
        a = mp.simulate_counts(pool, det, math.radians(sigma), 4.0, 0.0, 300_000, np.random.default_rng(2))
        b = mp.simulate_counts(pool, det, math.radians(sigma), 4.0, 0.0, 300_000, np.random.default_rng(2),
                               isotropic_observers=True)
        for k in (1, 2, 3):
            assert a[k] == pytest.approx(b[k], abs=5 * math.sqrt(b[k]) + 5)


def test_truncated_poisson_against_scipy():
    # scipy.stats.poisson conditioned on 1 <= N <= 10 (reference library).
    lam = 2.7
    ref = stats.poisson.pmf(np.arange(1, 11), lam)
    ref /= ref.sum()
    assert np.allclose(mp.truncated_poisson_pmf(lam)[0], ref, rtol=1e-12)
    mean = float(ref @ np.arange(1, 11))
    assert float(mp.poisson_rate_for_mean(mean)) == pytest.approx(lam, rel=1e-4)


def test_period_law_against_its_cdf():
    # Broken power law in ln P: compare draws with the analytic CDF (Kolmogorov-Smirnov, scipy).
    law = mp.PeriodLaw(p_lo=1.0, p_break=10.0, p_hi=100.0, alpha1=1.0, alpha2=0.0)
    x = np.log(law.sample(np.random.default_rng(0).random(50_000)))
    xb, x1 = math.log(10.0), math.log(100.0)
    w1, w2 = (10.0 - 1.0) / 10.0, (x1 - xb)          # integrals of P^1 dlnP (relative to P_b) and 1 dlnP

    def cdf(v):
        v = np.asarray(v)
        return np.where(v < xb, (np.exp(v) - 1.0) / 10.0, w1 + (v - xb)) / (w1 + w2)
    assert stats.kstest(x, cdf).pvalue > 1e-3


def test_isotropic_second_population_is_poisson_binomial():
    # Probability theory (common practice): with mutually isotropic orbit normals each planet transits
    # independently with probability eps_j, so k is Poisson-binomial.  The exact recursion of hot_tables
    # must match a brute-force simulation of isotropic normals seen by isotropic observers.
    rng = np.random.default_rng(8)
    n = 1500
    pool = mp.PlanetPool.from_transits(np.exp(rng.uniform(0, 3, n)), rng.lognormal(0.7, 0.5, n),
                                       np.ones(n), np.ones(n))
    det = mp.Detectability((1.0, 20.0))
    model = mp.MultiplicityModel(pool, det, n_per_multiplicity=50_000, n_max=4, k_max=4, seed=1)
    H = model.hot_tables()                                        # (n_max, k_max)
    g = model._groups[2]                                          # three planets
    m = len(g["u"])
    psi = np.arccos(2.0 * rng.random((m, 3)) - 1.0)              # isotropic normals, independent
    hit = mt.transit_mask(psi, g["node"], 2.0 * g["u"] - 1.0, g["eps"], g["det"]).sum(axis=1)
    for k in (1, 2):
        frac = np.mean(hit == k)
        assert H[2, k - 1] == pytest.approx(frac, abs=5 * math.sqrt(frac / m) + 1e-6)
    assert H[0, 0] == pytest.approx(model.single_transit_probability(), rel=1e-12)
