"""Tests for archsys.physics.flatness (mutual inclinations)."""
import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import angular_separation
from hypothesis import given, settings
from hypothesis import strategies as st

from archsys.physics import flatness as fl

# Giant planets, J2000 ecliptic.  I: JPL approximate elements Table 1
# (Standish; [Standish1992], verified).  Omega: same table, from memory.
GIANTS = ("Jupiter", "Saturn", "Uranus", "Neptune")
GIANT_I = np.radians([1.30439695, 2.48599187, 0.77263783, 1.77004347])
GIANT_NODE = np.radians([100.474, 113.662, 74.017, 131.784])  # from memory
# Inclinations to the invariable plane, Souami & Souchay 2012 ([SouamiSouchay2012], verified).
GIANT_I_INV_DEG = np.array([0.32, 0.93, 1.02, 0.72])


def _normal(i, node):
    # Orbit normal (unit angular-momentum vector) in the reference frame.
    return np.stack([np.sin(i) * np.sin(node), -np.sin(i) * np.cos(node), np.cos(i)], axis=-1)


def test_solar_giants_mutual_inclinations_below_3_deg():
    psi, pairs = fl.pairwise_mutual_inclinations(GIANT_I, GIANT_NODE)
    assert pairs.tolist() == [[0, 1], [0, 2], [0, 3], [1, 2], [1, 3], [2, 3]]
    # Solar-system giants are flat to a few degrees (common practice).
    assert np.all(np.degrees(psi) < 3.0)
    assert np.degrees(fl.max_mutual_inclination(GIANT_I, GIANT_NODE)) < 3.0


def test_solar_giants_consistent_with_invariable_plane_inclinations():
    # psi does not depend on the reference plane, so it must obey the triangle
    # bounds |i_a - i_b| <= psi <= i_a + i_b with inclinations to the invariable
    # plane (Souami & Souchay 2012, [SouamiSouchay2012], 2 decimals).  Tolerance
    # 0.02 deg: two rounded inputs (0.01) plus mean-element and from-memory-node
    # slack.  Jupiter-Saturn sits at the upper bound: their nodes on the
    # invariable plane are opposite (angular-momentum balance; common practice).
    psi, pairs = fl.pairwise_mutual_inclinations(GIANT_I, GIANT_NODE)
    psi_deg = np.degrees(psi)
    a, b = GIANT_I_INV_DEG[pairs[:, 0]], GIANT_I_INV_DEG[pairs[:, 1]]
    tol = 0.02
    assert np.all(psi_deg >= np.abs(a - b) - tol)
    assert np.all(psi_deg <= a + b + tol)
    assert psi_deg[0] == pytest.approx(0.32 + 0.93, abs=tol)


def test_formula_against_astropy_angular_separation_of_normals():
    # Reference library: astropy angular_separation between the orbit normals,
    # whose direction is (lon, lat) = (Omega - 90 deg, 90 deg - i).
    rng = np.random.default_rng(5)
    i1, i2 = np.arccos(rng.uniform(-1, 1, (2, 500)))
    O1, O2 = rng.uniform(0, 2 * np.pi, (2, 500))
    ref = angular_separation((O1 - np.pi / 2) * u.rad, (np.pi / 2 - i1) * u.rad,
                             (O2 - np.pi / 2) * u.rad, (np.pi / 2 - i2) * u.rad).to_value(u.rad)
    np.testing.assert_allclose(fl.mutual_inclination(i1, O1, i2, O2), ref, rtol=0, atol=1e-12)


def test_formula_against_numpy_normal_vectors_and_cosine_law():
    # numpy vector computation (atan2 of |n1 x n2| and n1 . n2) and the plain
    # spherical law of cosines with clipping (common practice).
    rng = np.random.default_rng(6)
    i = rng.uniform(0, np.pi, (300, 2))
    node = rng.uniform(-np.pi, np.pi, (300, 2))
    n1, n2 = _normal(i[:, 0], node[:, 0]), _normal(i[:, 1], node[:, 1])
    ref = np.arctan2(np.linalg.norm(np.cross(n1, n2), axis=-1), np.sum(n1 * n2, axis=-1))
    psi = fl.mutual_inclination(i[:, 0], node[:, 0], i[:, 1], node[:, 1])
    np.testing.assert_allclose(psi, ref, atol=1e-12)
    cos_law = np.arccos(np.clip(np.cos(i[:, 0]) * np.cos(i[:, 1]) + np.sin(i[:, 0])
                                * np.sin(i[:, 1]) * np.cos(node[:, 0] - node[:, 1]), -1, 1))
    np.testing.assert_allclose(psi, cos_law, atol=1e-7)  # arccos loses digits near 0 and pi


def test_small_angle_precision():
    # Two orbits 1e-9 rad apart in inclination, same node: psi = 1e-9 exactly
    # (arccos of the cosine law would return 0 or ~1e-8 noise; common practice).
    assert fl.mutual_inclination(0.3, 1.0, 0.3 + 1e-9, 1.0) == pytest.approx(1e-9, rel=1e-6)


@settings(max_examples=100, deadline=None)
@given(st.floats(0, np.pi), st.floats(-10, 10), st.floats(0, np.pi), st.floats(-10, 10))
def test_symmetry_and_identity(i1, O1, i2, O2):
    # psi(a, b) = psi(b, a); psi(a, a) = 0; 0 <= psi <= pi; node shift by 2 pi
    # irrelevant (definition; common practice).
    psi = fl.mutual_inclination(i1, O1, i2, O2)
    assert psi == pytest.approx(fl.mutual_inclination(i2, O2, i1, O1), abs=1e-12)
    assert fl.mutual_inclination(i1, O1, i1, O1) == 0.0
    assert 0.0 <= psi <= np.pi
    assert psi == pytest.approx(fl.mutual_inclination(i1, O1 + 2 * np.pi, i2, O2), abs=1e-9)


def test_vectorised_pairs_match_scalar_loop():
    rng = np.random.default_rng(7)
    inc = rng.uniform(0, 0.2, (20, 5))  # (n_draws, n_planets)
    node = rng.uniform(0, 2 * np.pi, (20, 5))
    psi, pairs = fl.pairwise_mutual_inclinations(inc, node)
    adj = fl.adjacent_mutual_inclinations(inc, node)
    assert psi.shape == (20, 10) and adj.shape == (20, 4)
    for d in range(20):
        for col, (a, b) in enumerate(pairs):
            assert psi[d, col] == fl.mutual_inclination(inc[d, a], node[d, a], inc[d, b], node[d, b])
        for a in range(4):
            assert adj[d, a] == fl.mutual_inclination(inc[d, a], node[d, a], inc[d, a + 1], node[d, a + 1])
    np.testing.assert_array_equal(fl.max_mutual_inclination(inc, node), psi.max(axis=-1))
    assert np.isnan(fl.max_mutual_inclination([0.1], [0.2]))


def test_fraction_within():
    lim = np.radians(3.0)  # Fang & Margot 2012 "within 3 deg" statistic
    psi_ref = np.radians([[0.5, 1.0, 2.9], [0.5, 3.1, 0.1], [-2.0, 0.0, 1.0]])
    assert fl.fraction_within(psi_ref, lim).tolist() == [True, False, True]
    # Probability over draws is the mean of the flags (done by callers).
    assert fl.fraction_within(psi_ref, lim).mean() == pytest.approx(2 / 3)


def test_sky_inclination_spread_is_lower_bound():
    # Spherical trigonometry: psi >= |i_a - i_b| for any node difference, with
    # equality for aligned nodes and psi = i_a + i_b for anti-aligned nodes
    # (common practice).
    rng = np.random.default_rng(8)
    i_sky = np.arccos(rng.uniform(-1, 1, (1000, 4)))
    node = rng.uniform(0, 2 * np.pi, (1000, 4))
    bound, pairs = fl.sky_inclination_spread(i_sky)
    psi, pairs2 = fl.pairwise_mutual_inclinations(i_sky, node)
    np.testing.assert_array_equal(pairs, pairs2)
    assert np.all(psi >= bound - 1e-12)
    psi_aligned, _ = fl.pairwise_mutual_inclinations(i_sky, np.zeros_like(i_sky))
    np.testing.assert_allclose(psi_aligned, bound, atol=1e-12)
    # Anti-aligned nodes reach the upper bound min(i_a + i_b, 2 pi - i_a - i_b).
    anti = fl.mutual_inclination(0.3, 0.0, 0.5, np.pi)
    assert anti == pytest.approx(0.8, abs=1e-12)


def test_sky_inclination_spread_reflection_ambiguity():
    # Transits give |cos i|: i = 80 deg and i = 100 deg may be the same plane
    # seen from the other side, so the bound drops to 0 (common practice).
    b, _ = fl.sky_inclination_spread(np.radians([80.0, 100.0]), reflection_ambiguous=True)
    assert b[0] == pytest.approx(0.0, abs=1e-12)
    b, _ = fl.sky_inclination_spread(np.radians([80.0, 100.0]))
    assert np.degrees(b[0]) == pytest.approx(20.0)
