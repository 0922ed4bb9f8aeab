"""Tests of archsys.physics.hill (Hill radii, Hill spacing, Gladman 1993)."""
import math

import numpy as np
import pytest
from scipy.optimize import brentq

from archsys.physics import hill
from archsys.physics.constants import GM_SUN, MEARTH_MSUN
from archsys.physics.hill import (
    CHAMBERS_B, CHAMBERS_C, HILL_CRIT, chambers_instability_time,
    critical_hill_separation_circular, gladman_critical_separation,
    gladman_hill_stable, gladman_margin, hill_radius, hill_separation,
    mutual_hill_radius,
)

# Solar system: semi-major axes from Standish, JPL approximate elements Table 1
# ([Standish1992], verified); masses as Sun/planet ratios, IAU 2009 /
# INPOP10a, Earth+Moon barycentre for Earth ([Luzum2011], verified).
SS_A = np.array([0.38709927, 0.72333566, 1.00000261, 1.52371034,
                 5.20288700, 9.53667594, 19.18916464, 30.06992276])
SS_M = 1.0 / np.array([6023600.0, 408523.719, 328900.5614, 3098703.59,
                       1047.348644, 3497.9018, 22902.98, 19412.26])


def _a_kepler(period_day, m_star):
    """Kepler III test-particle form a = (GM P^2 / 4 pi^2)^(1/3) (standard)."""
    return np.cbrt(GM_SUN * m_star * np.asarray(period_day) ** 2 / (4.0 * math.pi**2))


def test_hill_crit_constant():
    # Gladman 1993: circular, coplanar, low-mass critical spacing 2 sqrt(3).
    assert HILL_CRIT == pytest.approx(2.0 * math.sqrt(3.0), rel=1e-15)
    assert critical_hill_separation_circular() == HILL_CRIT


def test_solar_system_spacings():
    # [Standish1992] (derived, Table 1 a, IAU 2009 masses, Chambers
    # et al. 1996 mean-a convention): Me-V 63.4, V-E 26.2, E-Ma 40.0, Ma-J 16.0,
    # J-S 7.89, S-U 14.0, U-N 14.0.  Quoted to 3 significant figures.
    delta = hill_separation(SS_A[:-1], SS_A[1:], SS_M[:-1], SS_M[1:], 1.0)
    expected = np.array([63.4, 26.2, 40.0, 16.0, 7.89, 14.0, 14.0])
    # One unit of the last quoted digit: V-E recomputes to 26.253, which the
    # table quotes as 26.2 (truncated rather than rounded); the rest round.
    unit = np.array([0.1, 0.1, 0.1, 0.1, 0.01, 0.1, 0.1])
    assert np.all(np.abs(delta - expected) <= unit)
    assert delta[1] == pytest.approx(26.253, abs=5e-4)  # regression of our own recomputation


def test_scalar_loop_reference():
    # Style rule: a slow scalar loop (math module) is the reference for the kernel.
    rng = np.random.default_rng(3)
    a1 = rng.uniform(0.05, 1.0, 50)
    a2 = a1 * rng.uniform(1.05, 3.0, 50)
    m1, m2 = 10 ** rng.uniform(-6, -3, (2, 50))
    ms = rng.uniform(0.3, 1.5, 50)
    r_vec = mutual_hill_radius(a1, a2, m1, m2, ms)
    rh_vec = hill_radius(a1, m1, ms)
    for k in range(50):
        assert r_vec[k] == pytest.approx(((m1[k] + m2[k]) / (3 * ms[k])) ** (1 / 3)
                                         * (a1[k] + a2[k]) / 2, rel=1e-13)
        assert rh_vec[k] == pytest.approx(a1[k] * (m1[k] / (3 * ms[k])) ** (1 / 3), rel=1e-13)


def test_mutual_hill_equal_masses():
    # Derived identity: equal masses at equal a give 2^(1/3) r_H.
    r = mutual_hill_radius(1.0, 1.0, 1e-5, 1e-5, 1.0)
    assert r == pytest.approx(2 ** (1 / 3) * hill_radius(1.0, 1e-5, 1.0), rel=1e-14)


def test_broadcast_shapes():
    # (n_draws, n_pairs) planet arrays with an (n_draws, 1) stellar mass.
    a1 = np.full((4, 3), 0.1)
    m_star = np.linspace(0.5, 1.2, 4)[:, None]
    d = hill_separation(a1, 1.5 * a1, 1e-5, 2e-5, m_star)
    ok = gladman_hill_stable(a1, 1.5 * a1, 1e-5, 2e-5, m_star, 0.05, 0.0)
    assert d.shape == (4, 3) and ok.shape == (4, 3) and ok.dtype == bool


def test_gladman_circular_limit_is_two_sqrt3():
    # Gladman 1993 circular limit 2 sqrt(3); [Gladman1993] derives
    # 3.4640 for mu1 = mu2 = 1e-7.  Independent root with scipy's brentq.
    mu = 1e-7
    ratio = brentq(lambda r: gladman_margin(1.0, r, mu, mu, 1.0), 1.0 + 1e-9, 1.5, xtol=1e-15)
    delta = hill_separation(1.0, ratio, mu, mu, 1.0)
    assert delta == pytest.approx(2 * math.sqrt(3), rel=1e-3)
    assert delta == pytest.approx(3.4640, abs=1e-4)
    assert gladman_critical_separation(mu, mu, 1.0) == pytest.approx(delta, rel=1e-9)


def test_gladman_worked_example():
    # [Gladman1993] derived test case: 5 and 8 M_E around 1 M_sun at
    # P = 10 d and 15 d: a = 0.090838 and 0.119031 au, Delta = 11.42,
    # LHS/RHS = 1.01317/1.00118 at e = 0; LHS = 1.01063 (e = 0.05), 1.00303
    # (e = 0.10), so Hill stable in every case.
    m1, m2 = 5 * MEARTH_MSUN, 8 * MEARTH_MSUN
    a1, a2 = _a_kepler([10.0, 15.0], 1.0)
    assert (a1, a2) == (pytest.approx(0.090838, abs=1e-6), pytest.approx(0.119031, abs=1e-6))
    assert hill_separation(a1, a2, m1, m2, 1.0) == pytest.approx(11.42, abs=0.005)
    mu = m1 + m2
    rhs = 1 + 3 ** (4 / 3) * m1 * m2 / mu ** (4 / 3)
    assert rhs == pytest.approx(1.00118, abs=5e-6)
    for e, lhs in [(0.0, 1.01317), (0.05, 1.01063), (0.10, 1.00303)]:
        margin = gladman_margin(a1, a2, m1, m2, 1.0, e, e)
        assert (margin + 1) * rhs == pytest.approx(lhs, abs=5e-6)
        assert gladman_hill_stable(a1, a2, m1, m2, 1.0, e, e)


def test_gladman_order_symmetry():
    # The criterion is written for planet 1 inside planet 2; swapped input
    # must give the same margin.
    args = (0.1, 0.13, 3e-5, 1e-5, 0.9, 0.1, 0.02)
    a1, a2, m1, m2, ms, e1, e2 = args
    assert gladman_margin(a2, a1, m2, m1, ms, e2, e1) == pytest.approx(
        gladman_margin(*args), rel=1e-14)


def test_gladman_eccentricity_widens_critical_spacing():
    # Derived from the criterion: LHS falls as gamma_i = sqrt(1 - e_i^2) falls,
    # so the critical spacing grows with eccentricity.
    e = np.linspace(0.0, 0.3, 7)
    d_crit = gladman_critical_separation(1e-5, 3e-5, 1.0, e, e)
    assert np.all(np.diff(d_crit) > 0)
    # Finite masses (mu = 4e-5) lower the circular value slightly below 2 sqrt(3).
    assert d_crit[0] == pytest.approx(HILL_CRIT, rel=5e-3)
    # The margin changes sign at the root (bisection consistency).
    ratio = (1 + 0.5 * d_crit * np.cbrt(4e-5 / 3)) / (1 - 0.5 * d_crit * np.cbrt(4e-5 / 3))
    assert np.all(np.abs(gladman_margin(1.0, ratio, 1e-5, 3e-5, 1.0, e, e)) < 1e-12)
    assert np.all(~gladman_hill_stable(1.0, ratio * 0.999, 1e-5, 3e-5, 1.0, e, e))
    assert np.all(gladman_hill_stable(1.0, ratio * 1.001, 1e-5, 3e-5, 1.0, e, e))


def test_gladman_critical_inner_eccentric():
    # With e1 > e2 the LHS has a minimum at delta^3 = gamma1/gamma2 (derived);
    # the returned root must be the single one above it.
    d = gladman_critical_separation(1e-4, 1e-5, 1.0, 0.3, 0.0)
    ratio = (1 + 0.5 * d * np.cbrt(1.1e-4 / 3)) / (1 - 0.5 * d * np.cbrt(1.1e-4 / 3))
    grid = np.linspace(1.0001, ratio * 0.9999, 2000)
    assert np.all(gladman_margin(1.0, grid, 1e-4, 1e-5, 1.0, 0.3, 0.0) < 0)
    assert gladman_margin(1.0, ratio * 1.0001, 1e-4, 1e-5, 1.0, 0.3, 0.0) > 0


def test_input_validation():
    with pytest.raises(ValueError, match="e1 must be in"):
        gladman_margin(1.0, 1.5, 1e-5, 1e-5, 1.0, 1.0, 0.0)
    with pytest.raises(ValueError, match="m2 must be positive"):
        mutual_hill_radius(1.0, 1.5, 1e-5, -1e-5, 1.0)
    with pytest.raises(ValueError, match="a must be positive"):
        hill_radius(np.nan, 1e-5, 1.0)


def test_chambers_heuristic_uses_labelled_constants():
    # Chambers, Wetherill & Boss 1996 functional form; coefficients are module
    # constants labelled "from memory, heuristic" -- not checked against the paper.
    assert hill.CHAMBERS_B is CHAMBERS_B and hill.CHAMBERS_C is CHAMBERS_C
    delta = np.array([4.0, 6.0, 8.0, 10.0])
    t_orb, t_yr = chambers_instability_time(delta, 365.25)
    np.testing.assert_allclose(np.log10(t_orb), CHAMBERS_B * delta + CHAMBERS_C, rtol=1e-12)
    np.testing.assert_allclose(t_yr, t_orb, rtol=1e-12)  # P = 1 Julian year
    t_orb2, t_yr2 = chambers_instability_time(delta, 36.525, b=2.0, c=0.0)
    np.testing.assert_allclose(t_orb2, 10 ** (2.0 * delta), rtol=1e-12)
    np.testing.assert_allclose(t_yr2, t_orb2 / 10, rtol=1e-12)


def test_chambers_monotonic():
    t_orb, _ = chambers_instability_time(np.linspace(2, 12, 50), 10.0)
    assert np.all(np.diff(t_orb) > 0)
