"""Tests of archsys.physics.amd (Laskar & Petit 2017; Petit, Laskar & Boue 2017)."""
import math

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from archsys.physics.amd import (
    PLB17_R, amd, amd_beta, amd_stable, critical_amd, lambda_circ,
    mmr_overlap_critical_amd, mmr_overlap_g, pair_critical_amd, system_amd,
)
from archsys.physics.constants import GM_SUN

# Solar system, Mercury..Neptune.  a, e: Standish, JPL approximate elements
# Table 1 ([Standish1992], verified).  Inclinations to the invariable
# plane: Souami & Souchay 2012, A&A 543, A133 (section 2d, verified).  Masses:
# Sun/planet ratios IAU 2009 / INPOP10a, Earth+Moon barycentre (section 2c).
SS_A = np.array([0.38709927, 0.72333566, 1.00000261, 1.52371034,
                 5.20288700, 9.53667594, 19.18916464, 30.06992276])
SS_E = np.array([0.20563593, 0.00677672, 0.01671123, 0.09339410,
                 0.04838624, 0.05386179, 0.04725744, 0.00859048])
SS_I = np.radians([6.34, 2.19, 1.57, 1.67, 0.32, 0.93, 1.02, 0.72])
SS_M = 1.0 / np.array([6023600.0, 408523.719, 328900.5614, 3098703.59,
                       1047.348644, 3497.9018, 22902.98, 19412.26])


def _ss(sl):
    return SS_M[sl], SS_A[sl], SS_E[sl], SS_I[sl]


def _pair_amd_on_collision_line(e, alpha, gamma):
    """Relative pair AMD C/Lambda' with e' = 1 - alpha - alpha e (coplanar)."""
    ep = 1.0 - alpha - alpha * e
    return gamma * math.sqrt(alpha) * (1 - math.sqrt(1 - e * e)) + 1 - math.sqrt(1 - ep * ep)


def test_critical_amd_check_values():
    # [LaskarPetit2017] (derived by root-finding and brute force, 6 digits).
    alpha = [0.5, 0.8, 0.9, 0.95, 0.5, 0.5]
    gamma = [1.0, 1.0, 1.0, 1.0, 0.1, 10.0]
    expected = [0.095252, 0.011695, 0.002699, 0.000649, 0.031480, 0.128385]
    np.testing.assert_allclose(critical_amd(alpha, gamma), expected, rtol=0, atol=6e-7)


def test_critical_amd_hand_computed():
    # alpha = 0.5, gamma = 1: F(e) = 0 has the exact root e0 = 2 - sqrt(3)
    # (then sqrt(alpha(1-e0^2) + e0^2) = sqrt(3) - 1), e0' = (sqrt(3) - 1)/2,
    # C_c = (1 - sqrt(4 sqrt(3) - 6))/sqrt(2) + 1 - (3/4)^(1/4) = 0.095252.
    e0 = 2 - math.sqrt(3)
    assert 0.5 * e0 + e0 / math.sqrt(0.5 * (1 - e0**2) + e0**2) - 0.5 == pytest.approx(0, abs=1e-15)
    exact = (1 - math.sqrt(4 * math.sqrt(3) - 6)) / math.sqrt(2) + 1 - 0.75**0.25
    assert critical_amd(0.5, 1.0) == pytest.approx(exact, rel=1e-12)
    assert exact == pytest.approx(0.095252, abs=5e-7)


def test_critical_amd_is_minimum_on_collision_line():
    # Reference: brute-force minimisation with scipy of the pair AMD along the
    # collision line alpha e + e' = 1 - alpha (Laskar & Petit 2017; the derived
    # values of [LaskarPetit2017] in docs/references.md agree to 1e-8).
    rng = np.random.default_rng(17)
    alpha = rng.uniform(0.05, 0.98, 40)
    gamma = 10 ** rng.uniform(-2, 2, 40)
    cc = critical_amd(alpha, gamma)
    for k in range(40):
        e_max = min(1.0, (1 - alpha[k]) / alpha[k]) - 1e-12
        grid = np.linspace(0, e_max, 2001)
        vals = [_pair_amd_on_collision_line(x, alpha[k], gamma[k]) for x in grid]
        j = int(np.argmin(vals))
        res = minimize_scalar(_pair_amd_on_collision_line, args=(alpha[k], gamma[k]),
                              bounds=(grid[max(j - 1, 0)], grid[min(j + 1, 2000)]),
                              method="bounded", options={"xatol": 1e-13})
        assert cc[k] == pytest.approx(res.fun, rel=1e-8, abs=1e-14)


def test_critical_amd_vectorised_shape():
    alpha = np.linspace(0.1, 0.95, 12).reshape(3, 4)
    cc = critical_amd(alpha, 2.0)
    assert cc.shape == (3, 4)
    assert np.all(np.diff(cc, axis=-1) < 0)  # closer pairs tolerate less AMD


def test_amd_formula_and_small_limit():
    # Laskar 1997: C_k = Lambda_k (1 - sqrt(1 - e^2) cos i); for small e and i,
    # C_k ~ Lambda_k (e^2 + i^2)/2 (standard expansion).
    m, a = np.array([1e-5, 3e-4]), np.array([0.1, 0.5])
    e, inc = np.array([0.3, 0.1]), np.array([0.2, 0.05])
    lam = m * np.sqrt(GM_SUN * 0.8 * a)
    np.testing.assert_allclose(lambda_circ(m, a, 0.8), lam, rtol=1e-15)
    naive = lam * (1 - np.sqrt(1 - e**2) * np.cos(inc))
    np.testing.assert_allclose(amd(m, a, e, inc, 0.8), naive, rtol=1e-12)
    assert system_amd(m, a, e, inc, 0.8) == pytest.approx(naive.sum(), rel=1e-12)
    small = amd(m, a, np.array([1e-6, 2e-7]), np.array([3e-7, 1e-6]), 0.8)
    np.testing.assert_allclose(small, lam * (np.array([1e-12, 4e-14]) + np.array([9e-14, 1e-12])) / 2,
                               rtol=1e-9)


def test_solar_system_whole_is_amd_unstable():
    # [Standish1992] (derived): beta = 112, 64, 187 for Me-V, V-E,
    # E-Ma, because the giants' AMD dominates.  LP17's qualitative statement
    # (Solar System as a whole AMD-unstable) is from memory.
    beta, beta_star = amd_beta(*_ss(slice(0, 8)), 1.0)
    np.testing.assert_allclose(beta[:3], [112, 64, 187], rtol=0.02)
    pair_ok, system_ok = amd_stable(*_ss(slice(0, 8)), 1.0)
    assert not system_ok and not pair_ok[:3].any() and pair_ok[3:].all()


def test_solar_system_outer_four_amd_stable():
    # [Standish1992] (derived): beta(J-S) = 0.050, beta(S-U) = 0.175,
    # beta(U-N) = 0.364 -> AMD-stable.  Qualitative LP17 statement from memory.
    beta, beta_star = amd_beta(*_ss(slice(4, 8)), 1.0)
    np.testing.assert_allclose(beta, [0.050, 0.175, 0.364], rtol=0.02)
    assert beta_star < 1
    assert amd_stable(*_ss(slice(4, 8)), 1.0)[1]


def test_solar_system_inner_four_amd_stable():
    # [Standish1992] (derived): beta = 0.207, 0.119, 0.344 and
    # star-collision C/Lambda_Mercury = 0.076 -> AMD-stable.
    beta, beta_star = amd_beta(*_ss(slice(0, 4)), 1.0)
    np.testing.assert_allclose(beta, [0.207, 0.119, 0.344], rtol=0.02)
    assert beta_star == pytest.approx(0.076, rel=0.02)
    assert amd_stable(*_ss(slice(0, 4)), 1.0)[1]


def test_mmr_correction_does_not_touch_wide_solar_system_pairs():
    # Derived: C_MMR grows as (1-alpha)^10/eps^2, so the Solar System pairs are
    # governed by C_c alone (Petit, Laskar & Boue 2017, formula from memory).
    for sl in (slice(0, 8), slice(0, 4), slice(4, 8)):
        np.testing.assert_array_equal(amd_beta(*_ss(sl), 1.0, mmr=True)[0],
                                      amd_beta(*_ss(sl), 1.0, mmr=False)[0])


def test_amd_beta_vectorised_over_draws():
    # Per-row loop is the reference for the (n_draws, n_planets) kernel.
    rng = np.random.default_rng(5)
    n = 30
    a = np.sort(rng.uniform(0.05, 2.0, (n, 4)), axis=1)
    m = 10 ** rng.uniform(-6, -3, (n, 4))
    e = rng.uniform(0, 0.3, (n, 4))
    inc = rng.uniform(0, 0.1, (n, 4))
    ms = rng.uniform(0.5, 1.5, n)
    beta, beta_star = amd_beta(m, a, e, inc, ms)
    assert beta.shape == (n, 3) and beta_star.shape == (n,)
    for k in range(n):
        bk, bsk = amd_beta(m[k], a[k], e[k], inc[k], ms[k])
        np.testing.assert_allclose(beta[k], bk, rtol=1e-13)
        assert beta_star[k] == pytest.approx(bsk, rel=1e-13)


def test_mmr_overlap_g_zero_at_deck_width():
    # [LaskarPetit2017] (derived): g = 0 at
    # 1 - alpha = (16384 r^2 / 729)^(1/7) eps^(2/7) = 1.465 eps^(2/7), the
    # Deck, Payne & Holman 2013 overlap width (coefficient 1.46 from memory).
    coeff = (16384 * PLB17_R**2 / 729) ** (1 / 7)
    assert coeff == pytest.approx(1.465, abs=5e-4)
    for eps in (1e-6, 1e-5, 1e-4, 1e-3):
        x = coeff * eps ** (2 / 7)
        scale = 3**4 * x**5 / (2**9 * PLB17_R * eps)  # size of either term
        assert abs(mmr_overlap_g(1 - x, eps)) < 1e-12 * scale
        assert mmr_overlap_g(1 - 0.99 * x, eps) < 0 < mmr_overlap_g(1 - 1.01 * x, eps)
        assert mmr_overlap_critical_amd(1 - 0.99 * x, 1.0, eps) == 0.0
        assert mmr_overlap_critical_amd(1 - 1.01 * x, 1.0, eps) > 0.0


def test_mmr_overlap_critical_amd_formula():
    # C_MMR = g^2 gamma sqrt(alpha) / (2 + 2 gamma sqrt(alpha)) (PLB17, from memory).
    alpha, gamma, eps = 0.85, 0.7, 1e-4
    x = 1 - alpha
    g = 81 * x**5 / (512 * PLB17_R * eps) - 32 * PLB17_R * eps / (9 * x**2)
    gs = gamma * math.sqrt(alpha)
    assert mmr_overlap_critical_amd(alpha, gamma, eps) == pytest.approx(g**2 * gs / (2 + 2 * gs), rel=1e-13)


def test_pair_critical_amd_rule():
    # Rule: min(C_c, C_MMR).  Wide pair: C_c; pair just outside the overlap
    # width: C_MMR (smaller); inside the overlap width: 0 (unstable).
    eps = 1e-4
    w = 1.465 * eps ** (2 / 7)
    assert pair_critical_amd(0.5, 1.0, eps) == critical_amd(0.5, 1.0)
    close = 1 - 1.2 * w
    assert pair_critical_amd(close, 1.0, eps) == mmr_overlap_critical_amd(close, 1.0, eps)
    assert pair_critical_amd(close, 1.0, eps) < critical_amd(close, 1.0)
    assert pair_critical_amd(1 - 0.9 * w, 1.0, eps) == 0.0


def test_circular_overlapping_pair_unstable_only_with_mmr():
    # Two circular coplanar planets inside the MMR-overlap width: zero AMD, so
    # LP17 alone calls them stable; with the PLB17 correction beta = inf.
    m, e, inc = np.array([3e-5, 3e-5]), np.zeros(2), np.zeros(2)
    a = np.array([1.0, 1.0 / (1 - 0.8 * 1.465 * 6e-5 ** (2 / 7))])
    beta, _ = amd_beta(m, a, e, inc, 1.0, mmr=True)
    assert np.isinf(beta[0]) and not amd_stable(m, a, e, inc, 1.0)[1]
    assert amd_beta(m, a, e, inc, 1.0, mmr=False)[0][0] == 0.0
    assert amd_stable(m, a, e, inc, 1.0, mmr=False)[1]


def test_input_validation():
    with pytest.raises(ValueError, match="strictly increasing"):
        amd_beta([1e-5, 1e-5], [1.0, 0.5], [0, 0], [0, 0], 1.0)
    with pytest.raises(ValueError, match="alpha must be"):
        critical_amd(1.2, 1.0)
    with pytest.raises(ValueError, match="e must be"):
        amd([1e-5], [1.0], [1.0], [0.0], 1.0)
    with pytest.raises(ValueError, match="batch shape"):
        amd_beta(np.full((3, 2), 1e-5), [[1.0, 2.0]] * 3, 0.0, 0.0, np.ones((3, 1)))
