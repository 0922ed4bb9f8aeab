"""Timing signatures of near-resonant pairs (archsys.physics.timing).

Sources: super-period P_sup = 1/|j/P' - (j-1)/P| and Delta = (P'/P)(j-1)/j - 1 of Lithwick, Xie
& Wu 2012 (ApJ 761, 122), with the worked example P = 10 d, P' = 15.3 d, j = 3 -> 255 d
([LithwickXieWu2012], derived); Laplace coefficients against complete elliptic integrals
from scipy (Murray & Dermott 1999 eq. 6.67-6.69 relations, from memory); the TTV amplitudes
against a direct three-body integration written here (scipy's DOP853 integrator).
"""
import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.special import ellipe, ellipk

from archsys.physics import kepler, timing
from archsys.physics.constants import GM_SUN


def test_super_period_worked_example_lxw2012():
    # 3:2 pair, P_in = 10 d, P_out = 15.3 d: 1/|3/15.3 - 2/10| = 255 d (recomputed here by hand:
    # 3/15.3 = 0.196078..., 2/10 = 0.2, difference 0.0039216 = 1/255).
    by_hand = 1.0 / abs(3 / 15.3 - 2 / 10)
    assert by_hand == pytest.approx(255.0, rel=1e-12)
    assert timing.super_period(10.0, 15.3, 3) == pytest.approx(by_hand, rel=1e-12)
    # equivalent LXW12 form P'/(j |Delta|) with Delta = (15.3/10)(2/3) - 1 = 0.0200
    delta = timing.lxw_delta(10.0, 15.3, 3)
    assert delta == pytest.approx(0.02, rel=1e-12)
    assert 15.3 / (3 * abs(delta)) == pytest.approx(255.0, rel=1e-12)


def test_super_period_second_order_and_exact_resonance():
    # 5:3 (second order): 1/|5/P' - 3/P|, hand value with P = 10, P' = 16.9: 1/|0.295858 - 0.3| = 241.4 d
    assert timing.super_period(10.0, 16.9, 5, 2) == pytest.approx(1 / abs(5 / 16.9 - 0.3), rel=1e-12)
    assert timing.super_period(10.0, 16.9, 5, 2) == pytest.approx(241.43, rel=1e-4)
    assert np.isinf(timing.super_period(10.0, 20.0, 2))
    with pytest.raises(ValueError, match="1 <= k < j"):
        timing.super_period(10.0, 30.0, 2, 2)


@pytest.mark.parametrize("alpha", [0.1, 0.5, 0.63, 0.9])
def test_laplace_coefficients_against_elliptic_integrals(alpha):
    # b_{1/2}^{(0)} = (4/pi) K(alpha^2) and b_{1/2}^{(1)} = 4/(pi alpha) [K - E] (Murray & Dermott
    # 1999, from memory; scipy's ellipk/ellipe take the parameter m = k^2).
    K, E = ellipk(alpha ** 2), ellipe(alpha ** 2)
    assert timing.laplace_coefficient(0.5, 0, alpha) == pytest.approx(4 / np.pi * K, rel=1e-12)
    assert timing.laplace_coefficient(0.5, 1, alpha) == pytest.approx(4 / (np.pi * alpha) * (K - E), rel=1e-12)
    # derivative against a central difference
    h = 1e-6
    fd = (timing.laplace_coefficient(0.5, 3, alpha + h) - timing.laplace_coefficient(0.5, 3, alpha - h)) / (2 * h)
    assert timing.laplace_coefficient(0.5, 3, alpha, derivative=True) == pytest.approx(fd, rel=1e-7)


@pytest.mark.parametrize("j,f_ref,g_ref", [(2, -1.190, 0.428), (3, -2.025, 2.484), (4, -2.840, 3.283)])
def test_resonant_coefficients_at_commensurability(j, f_ref, g_ref):
    # f, g at exact commensurability as tabulated for LXW12 / Murray & Dermott 1999 (from memory,
    # three decimals; g at 2:1 includes the indirect term).
    f, g = timing.ttv_coefficients(j)
    assert f == pytest.approx(f_ref, abs=1.5e-3)
    assert g == pytest.approx(g_ref, abs=1.5e-3)


def test_ttv_amplitude_formula_by_hand():
    # LXW12 eq. for the inner planet, zero free eccentricity, recomputed by hand:
    # |V| = P mu' |f| / (pi j^(2/3) (j-1)^(1/3) |Delta|), |V'| = P' mu |g| / (pi j |Delta|)
    P, Pp, mu, mup, j = 10.0, 15.3, 2e-5, 4e-5, 3
    f, g = timing.ttv_coefficients(j, (P / Pp) ** (2 / 3))
    d = 0.02
    v_in, v_out = timing.ttv_amplitudes(P, Pp, mu, mup, j)
    assert v_in == pytest.approx(P * mup * abs(f) / (np.pi * 3 ** (2 / 3) * 2 ** (1 / 3) * d), rel=1e-10)
    assert v_out == pytest.approx(Pp * mu * abs(g) / (np.pi * 3 * d), rel=1e-10)
    # a free eccentricity adds in quadrature over its unknown phase
    v_in_z, _ = timing.ttv_amplitudes(P, Pp, mu, mup, j, z_free=0.01)
    assert v_in_z == pytest.approx(v_in * np.hypot(f, 1.5 * 0.01 / d) / abs(f), rel=1e-10)


def _three_body_transit_times(m1, m2, P1, P2, t_end):
    """Coplanar, edge-on star + two planets (heliocentric start on circular orbits, outer with the
    inner mass inside); transit = heliocentric y crossing 0 upwards with x > 0 (observer at +x)."""
    GM = GM_SUN
    a1, a2 = kepler.a_au(P1, 1 + m1), kepler.a_au(P2, 1 + m1 + m2)
    mass = np.array([1.0, m1, m2])
    th2 = 2.0                                                      # outer planet starts 2 rad ahead
    pos = np.array([[0, 0], [a1, 0], [a2 * np.cos(th2), a2 * np.sin(th2)]], float)
    v1, v2 = np.sqrt(GM * (1 + m1) / a1), np.sqrt(GM * (1 + m1 + m2) / a2)
    vel = np.array([[0, 0], [0, v1], [-v2 * np.sin(th2), v2 * np.cos(th2)]], float)
    pos -= (mass[:, None] * pos).sum(0) / mass.sum()
    vel -= (mass[:, None] * vel).sum(0) / mass.sum()

    eye = np.eye(3, dtype=bool)

    def rhs(t, y):
        r = y[:6].reshape(3, 2)
        d = r[None, :, :] - r[:, None, :]                          # d[i, k] = r_k - r_i
        dist3 = np.where(eye, 1.0, np.sum(d * d, axis=-1) ** 1.5)
        acc = GM * np.sum(np.where(eye[..., None], 0.0, mass[None, :, None] * d / dist3[..., None]), axis=1)
        return np.concatenate([y[6:], acc.ravel()])

    def event(i):
        def ev(t, y):
            return y[2 * i + 1] - y[1]
        ev.direction = 1.0
        return ev

    sol = solve_ivp(rhs, (0, t_end), np.concatenate([pos.ravel(), vel.ravel()]), method="DOP853",
                    rtol=1e-11, atol=1e-14, events=[event(1), event(2)])
    times = []
    for i, (te, ye) in enumerate(zip(sol.t_events, sol.y_events), start=1):
        keep = ye[:, 2 * i] - ye[:, 0] > 0                          # in front of the star
        times.append(te[keep])
    return times


def _ttv_amplitude(times, p_sup):
    n = np.arange(times.size)
    A = np.stack([np.ones_like(n, float), n, np.sin(2 * np.pi * times / p_sup),
                  np.cos(2 * np.pi * times / p_sup)], axis=1)
    coef, *_ = np.linalg.lstsq(A, times, rcond=None)
    return np.hypot(coef[2], coef[3]), coef[1]


@pytest.mark.parametrize("j,p_out", [(3, 15.3), pytest.param(2, 20.4, marks=pytest.mark.slow)])
def test_ttv_amplitudes_against_three_body_integration(j, p_out):
    # Independent check: integrate the three-body problem (one Earth mass each, Delta = +0.02,
    # about three super-periods), measure the transit times, fit a linear ephemeris plus a
    # sinusoid at the super-period and compare the amplitudes with LXW12's formulae.  Those are
    # first-order, near-resonance approximations; measured agreement here is 0.88-0.98 (and
    # 0.82-1.10 over Delta = -0.02 ... +0.04 when this was written), so the tolerance is 20 %.
    m = 3.0e-6
    P1 = 10.0
    p_sup = timing.super_period(P1, p_out, j)
    t1, t2 = _three_body_transit_times(m, m, P1, p_out, 3 * p_sup)
    amp1, per1 = _ttv_amplitude(t1, p_sup)
    amp2, per2 = _ttv_amplitude(t2, p_sup)
    v1, v2 = timing.ttv_amplitudes(per1, per2, m, m, j)
    assert amp1 == pytest.approx(v1, rel=0.2)
    assert amp2 == pytest.approx(v2, rel=0.2)


def test_coefficients_at_a_fixed_alpha_change_amplitudes_negligibly():
    # Behaviour check: evaluating f, g at the median alpha instead of per draw changes the
    # amplitudes by far less than their approximation error (period ratios spread by 1e-4 here).
    rng = np.random.default_rng(0)
    P, Pp = 10.0, 15.3 * (1 + 1e-4 * rng.standard_normal(200))
    exact = timing.ttv_amplitudes(P, Pp, 1e-5, 1e-5, 3)
    fixed = timing.ttv_amplitudes(P, Pp, 1e-5, 1e-5, 3, coeff_alpha=float(np.median((P / Pp) ** (2 / 3))))
    assert np.allclose(exact, fixed, rtol=1e-3)
