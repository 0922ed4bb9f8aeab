"""Room for unseen planets (archsys.physics.packing).

Sources: the packed-planetary-systems question of Barnes & Raymond 2004 (ApJ 617, 569) and
Fang & Margot 2013 (ApJ 767, 115); mutual Hill radius R_H,m = [(m1 + m2)/3M*]^(1/3) (a1 + a2)/2
(Chambers, Wetherill & Boss 1996); Gladman 1993 critical spacing 2 sqrt(3) R_H,m for circular
orbits; AMD stability (Laskar & Petit 2017).  Independent checks are the closed-form fit edges
solved by hand below and the AMD coefficients of an explicitly augmented system.
"""
import numpy as np
import pytest

from archsys.physics import amd, hill, kepler, packing
from archsys.physics.constants import MEARTH_MSUN


def _edges_by_hand(a_in, a_out, m_in, m_out, m_t, m_star, delta):
    """Solve (a_t - a_in) = delta k (a_in + a_t)/2 with k = [(m_in + m_t)/3M*]^(1/3) for a_t, and
    the same from the outer side (Chambers et al. 1996 mutual Hill radius), then Kepler III."""
    k_in = np.cbrt((m_in + m_t) / (3 * m_star))
    k_out = np.cbrt((m_t + m_out) / (3 * m_star))
    a_lo = a_in * (1 + delta * k_in / 2) / (1 - delta * k_in / 2)
    a_hi = a_out * (1 - delta * k_out / 2) / (1 + delta * k_out / 2)
    return kepler.period_day(a_lo, m_star + m_t), kepler.period_day(a_hi, m_star + m_t)


def _run(P_in, P_out, m_in, m_out, e_in=0.0, e_out=0.0, m_t=None, min_hill=10.0, n=4000, m_star=1.0):
    m_t = packing.default_test_mass(m_in, m_out) if m_t is None else m_t
    a_in, a_out = kepler.a_au(P_in, m_star + m_in), kepler.a_au(P_out, m_star + m_out)
    c_tot = amd.system_amd(np.array([m_in, m_out]), np.array([a_in, a_out]), np.array([e_in, e_out]),
                           np.zeros(2), m_star)
    grid = packing.trial_periods(P_in, P_out, n)
    flags = packing.gap_fit(grid, [a_in], [a_out], [m_in], [m_out], [e_in], [e_out], [m_star], [m_t], [c_tot],
                            min_hill=min_hill)
    return grid, flags, (a_in, a_out, m_t)


def test_default_test_mass_is_geometric_mean():
    # hand calculation: sqrt(2 * 8) = 4
    assert packing.default_test_mass(2.0, 8.0) == pytest.approx(4.0)


def test_fit_edges_match_hill_spacing_solved_by_hand():
    # Circular neighbours (no AMD), 5 and 12 Earth masses at 10 d and 40 d around 1 M_sun: the
    # Hill-spacing threshold of 10 R_H,m binds on both sides (Gladman's 2 sqrt(3) is weaker).
    m_in, m_out = 5 * MEARTH_MSUN, 12 * MEARTH_MSUN
    grid, flags, (a_in, a_out, m_t) = _run(10.0, 40.0, m_in, m_out)
    any_fit, lo, hi = packing.fit_range(grid, flags["fits"])
    p_lo, p_hi = _edges_by_hand(a_in, a_out, m_in, m_out, m_t, 1.0, 10.0)
    step = np.log(40.0 / 10.0) / grid.size                      # grid resolution in ln P
    assert any_fit[0]
    assert abs(np.log(lo[0] / p_lo)) <= step
    assert abs(np.log(hi[0] / p_hi)) <= step
    # no AMD: the AMD criterion only removes points inside the first-order MMR-overlap zone next
    # to a neighbour (zero critical AMD, Petit, Laskar & Boue 2017), closer than the Hill threshold
    assert np.array_equal(flags["fits"], flags["hill_spacing"])


def test_gladman_limit_two_sqrt_three():
    # With no spacing threshold the edges are where the Gladman (1993) margin vanishes: 2 sqrt(3)
    # mutual Hill radii for circular orbits (to ~1e-3 for these masses, [Gladman1993]).
    m_in, m_out = 5 * MEARTH_MSUN, 12 * MEARTH_MSUN
    grid, flags, (a_in, a_out, m_t) = _run(10.0, 14.0, m_in, m_out, min_hill=0.0, n=20000)
    _, lo, hi = packing.fit_range(grid, flags["gladman"])
    # the critical spacing of each new pair: 2 sqrt(3) (Gladman 1993) up to a small term that
    # depends on the masses and their ratio (0.2 % here)
    d_in = hill.gladman_critical_separation(m_in, m_t, 1.0)
    d_out = hill.gladman_critical_separation(m_t, m_out, 1.0)
    assert d_in == pytest.approx(2 * np.sqrt(3), rel=3e-3) and d_out == pytest.approx(2 * np.sqrt(3), rel=3e-3)
    p_lo, _ = _edges_by_hand(a_in, a_out, m_in, m_out, m_t, 1.0, d_in)
    _, p_hi = _edges_by_hand(a_in, a_out, m_in, m_out, m_t, 1.0, d_out)
    step = np.log(14.0 / 10.0) / grid.size
    assert abs(np.log(lo[0] / p_lo)) <= step
    assert abs(np.log(hi[0] / p_hi)) <= step


def test_amd_flags_agree_with_augmented_system():
    # Eccentric neighbours: the AMD flags equal those of amd.amd_beta run on the three-planet system
    # with the test planet inserted (circular, coplanar), pair by pair (Laskar & Petit 2017).
    m_in, m_out = 8 * MEARTH_MSUN, 20 * MEARTH_MSUN
    e_in, e_out = 0.04, 0.06
    grid, flags, (a_in, a_out, m_t) = _run(10.0, 30.0, m_in, m_out, e_in, e_out, n=200, min_hill=0.0)
    a_t = kepler.a_au(grid, 1.0 + m_t)
    m = np.stack(np.broadcast_arrays(m_in, m_t, m_out), -1) * np.ones((grid.size, 1))
    a = np.stack([np.full(grid.size, a_in), a_t, np.full(grid.size, a_out)], -1)
    e = np.stack(np.broadcast_arrays(e_in, 0.0 * a_t, e_out), -1)
    beta, _ = amd.amd_beta(m, a, e, np.zeros_like(a), np.ones(grid.size))
    expected = np.all(beta < 1.0, axis=-1)
    cand = (flags["hill_spacing"] & flags["gladman"])[0]             # AMD is evaluated there only
    assert np.array_equal(flags["amd"][0][cand], expected[cand])
    assert not flags["amd"][0][~cand].any()
    assert expected[cand].any() and not expected[cand].all()       # the criterion binds somewhere


def test_packed_and_roomy_gaps():
    # Neighbours 15 R_H,m apart cannot hold a planet 10 R_H,m from both (needs about 20):
    # packed (Barnes & Raymond 2004 sense).  A factor-4 gap in period has room.
    m = 10 * MEARTH_MSUN
    a_in = kepler.a_au(10.0, 1.0 + m)
    k = np.cbrt(2 * m / 3.0)
    a_out = a_in * (1 + 15 * k / 2) / (1 - 15 * k / 2)
    P_out = kepler.period_day(a_out, 1.0 + m)
    grid, flags, _ = _run(10.0, P_out, m, m)
    tight, _, _ = packing.fit_range(grid, flags["fits"])
    grid, flags, _ = _run(10.0, 40.0, m, m)
    roomy, _, _ = packing.fit_range(grid, flags["fits"])
    assert not tight[0] and roomy[0]
    per_draw = packing.packed(np.array([[tight[0], False], [tight[0], roomy[0]]]))
    assert per_draw.tolist() == [True, False]


def test_fit_range_hand_case():
    P = np.array([1.0, 2.0, 3.0, 4.0])
    any_fit, lo, hi = packing.fit_range(P, np.array([[False, True, True, False], [False] * 4]))
    assert any_fit.tolist() == [True, False]
    assert (lo[0], hi[0]) == (2.0, 3.0) and np.isnan(lo[1]) and np.isnan(hi[1])


def test_trial_periods_inside_gap_and_bad_input():
    g = packing.trial_periods(10.0, 20.0, 8)
    assert g.min() > 10 and g.max() < 20 and np.all(np.diff(np.log(g)) > 0)
    with pytest.raises(ValueError, match="need 0 < p_in < p_out"):
        packing.trial_periods(20.0, 10.0)


@pytest.mark.parametrize("per_row_grid", [False, True])
def test_bisection_finds_the_same_room_as_the_full_grid(per_row_grid):
    """gap_room (bisection on the trial grid) gives gap_fit's flags draw by draw, on 3000 random gaps.

    Random pairs from Earth to ten Jupiter masses, period ratios 1.1-8, e up to 0.16: the fits, the
    Hill-spacing and the Gladman flags are intervals of the grid (the criteria are monotonic in the
    distance from each neighbour), so both ends found by bisection give exactly the grid's answer.
    Reference: the brute-force evaluation of every trial period (gap_fit: the Barnes & Raymond 2004 /
    Fang & Margot 2013 test-planet method with Gladman 1993 and Laskar & Petit 2017 criteria); that a
    bisection of a monotonic predicate finds its switch point is common practice.
    """
    from archsys.physics.kepler import period_day
    rng = np.random.default_rng(3)
    n = 3000
    ms = rng.uniform(0.3, 1.5, n)
    a1 = rng.uniform(0.02, 1.0, n)
    a2 = a1 * rng.uniform(1.05, 4.0, n)
    m1, m2 = 10 ** rng.uniform(-6.5, -2.5, n), 10 ** rng.uniform(-6.5, -2.5, n)
    e1, e2 = rng.uniform(0, 0.4, n) ** 2, rng.uniform(0, 0.4, n) ** 2
    mt = np.sqrt(m1 * m2)
    c_tot = amd.system_amd(np.stack([m1, m2], 1), np.stack([a1, a2], 1), np.stack([e1, e2], 1),
                           np.zeros((n, 2)), ms)
    p1, p2 = period_day(a1, ms), period_day(a2, ms)
    if per_row_grid:
        grid = np.stack([packing.trial_periods(p, q) for p, q in zip(p1, p2)])
    else:
        grid = packing.trial_periods(np.median(p1), np.median(p2))
    full = packing.gap_fit(grid, a1, a2, m1, m2, e1, e2, ms, mt, c_tot)
    room = packing.gap_room(grid, a1, a2, m1, m2, e1, e2, ms, mt, c_tot)
    idx = np.arange(grid.shape[-1])
    fits = (idx >= room["fit_lo"][:, None]) & (idx <= room["fit_hi"][:, None])
    assert 0.1 < full["fits"].any(axis=1).mean() < 0.9          # both outcomes are exercised
    np.testing.assert_array_equal(fits, full["fits"])
    np.testing.assert_array_equal(room["hill_spacing"], full["hill_spacing"].any(axis=1))
    np.testing.assert_array_equal(room["gladman"], full["gladman"].any(axis=1))
