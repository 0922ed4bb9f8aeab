"""Conditional transit probability (archsys.physics.transit_odds).

Sources: the transit condition |b| < 1 + Rp/R* with b = (a/R*) cos i (1 - e^2)/(1 + e sin w)
(Winn 2010, "Transits and Occultations", eq. 7) and the geometric probability
(R* + Rp)/a (1 + e sin w)/(1 - e^2) (Winn 2010 eq. 9); the Rayleigh tilt model of the
tool's hierarchical orientation model (Fang & Margot 2012 form).  Independent checks are
Monte Carlo simulations written here.
"""
import numpy as np
import pytest

from archsys.physics import transit, transit_odds as to


def _mc_transit_fraction(rng, n, aor, ref_inc, sigma, ror=0.0, ecc=0.0, omega=np.pi / 2):
    """Brute force: tilt ~ Rayleigh(sigma) truncated at pi, uniform azimuth; count |b| < 1 + k."""
    u = rng.uniform(size=n)
    f_pi = 1.0 - np.exp(-np.pi ** 2 / (2 * sigma ** 2))
    psi = sigma * np.sqrt(-2.0 * np.log1p(-u * f_pi))
    phi = rng.uniform(0.0, 2.0 * np.pi, n)
    cos_i = np.cos(ref_inc) * np.cos(psi) + np.sin(ref_inc) * np.sin(psi) * np.cos(phi)
    b = aor * cos_i * (1 - ecc ** 2) / (1 + ecc * np.sin(omega))
    return np.mean(np.abs(b) < 1.0 + ror)


def test_isotropic_probability_winn2010_eq9_hand_calculation():
    # Winn 2010 eq. 9, hand calculation: a/R* = 10, e = 0.2, w = 90 deg, Rp/R* = 0.05:
    # (1 + 0.05) / 10 * (1 + 0.2) / (1 - 0.04) = 0.13125
    p = to.isotropic_transit_probability(10.0, 0.05, 0.2, np.pi / 2)
    assert p == pytest.approx(0.13125, rel=1e-12)
    # w = 270 deg: (1.05 / 10) * 0.8 / 0.96 = 0.0875
    assert to.isotropic_transit_probability(10.0, 0.05, 0.2, 1.5 * np.pi) == pytest.approx(0.0875, rel=1e-12)


def test_transits_matches_impact_parameter_condition():
    # Winn 2010 eq. 7: a/R* = 15, i = 87 deg, e = 0.1, w = 30 deg
    # b = 15 cos(87 deg) (0.99)/(1.05) = 0.740180 < 1 -> transits; with i = 85.9 deg b = 1.011178: misses, grazes if Rp/R* = 0.02
    b87 = 15 * np.cos(np.radians(87)) * 0.99 / (1 + 0.1 * 0.5)
    assert b87 == pytest.approx(0.740180, abs=1e-6)            # hand calculation
    assert to.transits(15.0, np.radians(87), 0.0, 0.1, np.radians(30))
    b86 = 15 * np.cos(np.radians(85.9)) * 0.99 / 1.05
    assert b86 == pytest.approx(1.011178, abs=1e-6)
    assert not to.transits(15.0, np.radians(85.9), 0.0, 0.1, np.radians(30))
    assert to.transits(15.0, np.radians(85.9), 0.02, 0.1, np.radians(30))


@pytest.mark.parametrize("ref_deg,sigma_deg,aor,ror,ecc,omega_deg", [
    (89.0, 1.5, 25.0, 0.0, 0.0, 90.0),
    (88.0, 3.0, 60.0, 0.03, 0.2, 40.0),
    (85.0, 0.5, 12.0, 0.0, 0.1, 250.0),
    (70.0, 20.0, 8.0, 0.1, 0.0, 90.0),
    (90.0, 60.0, 40.0, 0.0, 0.3, 120.0),
])
def test_conditional_probability_against_monte_carlo(ref_deg, sigma_deg, aor, ror, ecc, omega_deg):
    # Independent check: brute-force Monte Carlo over tilts and azimuths (written here).
    rng = np.random.default_rng(20260)
    n = 400_000
    args = (aor, np.radians(ref_deg), np.radians(sigma_deg), ror, ecc, np.radians(omega_deg))
    mc = _mc_transit_fraction(rng, n, *args)
    p = to.conditional_transit_probability(*args)
    tol = 5.0 * np.sqrt(max(p * (1 - p), 1e-4) / n)            # 5 binomial standard errors
    assert abs(p - mc) < tol


def test_sigma_to_zero_limit_is_reference_plane_indicator():
    # sigma -> 0: every orbit lies in the reference plane, so the probability is the indicator
    # |b_ref| < 1 + Rp/R* with b_ref from the reference-plane inclination (Winn 2010 eq. 7).
    rng = np.random.default_rng(5)
    n = 3000
    aor = rng.uniform(5, 80, n)
    ref = np.radians(rng.uniform(80, 90, n))
    e = rng.uniform(0, 0.5, n)
    w = rng.uniform(0, 2 * np.pi, n)
    k = rng.uniform(0, 0.1, n)
    b_ref = transit.impact_parameter(aor, ref, e, w)
    far = np.abs(np.abs(b_ref) - (1 + k)) > 1e-3                # away from the exact edge
    p = to.conditional_transit_probability(aor, ref, np.full(n, 1e-7), k, e, w)
    expected = (np.abs(b_ref) < 1 + k).astype(float)
    assert np.all(np.abs(p - expected)[far] < 1e-9)
    assert 0.1 < expected.mean() < 0.9                          # both outcomes are exercised
    # fraction of draws (the posterior statement of the limit)
    assert p[far].mean() == pytest.approx(expected[far].mean(), abs=1e-12)


@pytest.mark.parametrize("ref_deg", [0.0, 30.0, 75.0, 89.5, 90.0])
def test_isotropic_tilts_give_winn_probability_at_any_reference_plane(ref_deg):
    # Orbit normals uniform on the sphere -> (R*/a)(1 + Rp/R*)(1 + e sin w)/(1 - e^2), Winn 2010 eq. 9.
    args = dict(aor=30.0, ror=0.02, ecc=0.25, omega_rad=np.radians(60))
    p = to.conditional_transit_probability(ref_inc=np.radians(ref_deg), sigma=1.0, kind="isotropic", **args)
    assert p == pytest.approx(to.isotropic_transit_probability(**args), rel=1e-5)


@pytest.mark.parametrize("sigma_deg", [2.0, 20.0, 200.0])
def test_isotropic_reference_plane_gives_winn_probability_for_any_sigma(sigma_deg):
    # With nothing known about the orientation (cos I uniform, the model's prior), a tilt at a
    # uniform azimuth leaves the planet's normal isotropic, so the probability is Winn 2010 eq. 9
    # whatever sigma is.  Integral over cos I by Gauss-Legendre (independent of the kernel's own).
    x, w = np.polynomial.legendre.leggauss(400)
    cos_ref = 0.5 * (x + 1.0)
    p = to.conditional_transit_probability(20.0, np.arccos(cos_ref), np.radians(sigma_deg))
    assert 0.5 * np.sum(w * p) == pytest.approx(0.05, rel=2e-3)


def test_large_sigma_at_fixed_edge_on_plane_follows_the_truncated_rayleigh_model():
    # At sigma >> 1 rad the model's tilt density tends to 2 psi / pi^2 on [0, pi] (truncated
    # Rayleigh), which is NOT isotropic (that would be sin(psi) / 2).  The kernel follows the
    # model; an independent Monte Carlo with psi drawn from 2 psi / pi^2 agrees with it, and the
    # value exceeds the isotropic 1/a/R* (edge-on retrograde orbits are over-weighted).
    rng = np.random.default_rng(9)
    n = 400_000
    psi = np.pi * np.sqrt(rng.uniform(size=n))                  # density 2 psi / pi^2
    phi = rng.uniform(0, 2 * np.pi, n)
    mc = np.mean(np.abs(np.sin(psi) * np.cos(phi)) < 1 / 20.0)
    p = to.conditional_transit_probability(20.0, np.pi / 2, 1e3)
    assert abs(p - mc) < 5 * np.sqrt(mc * (1 - mc) / n)
    assert p > 0.05


def test_posterior_predictive_probability_against_joint_monte_carlo():
    # A synthetic orientation posterior (ref plane near edge-on, sigma spread, eccentric orbit):
    # drawing one tilt per draw and counting transits (Monte Carlo, written here) agrees with the
    # mean of the conditional probabilities over the draws.
    rng = np.random.default_rng(77)
    n = 40_000
    ref = np.radians(rng.normal(88.5, 0.6, n))
    sig = np.radians(rng.lognormal(np.log(2.0), 0.4, n))
    e = rng.beta(0.87, 3.03, n)                                  # an eccentricity-like spread
    w = rng.uniform(0, 2 * np.pi, n)
    aor = 45.0
    p = to.conditional_transit_probability(aor, ref, sig, 0.0, e, w)
    psi = sig * np.sqrt(-2 * np.log(rng.uniform(size=n)))
    phi = rng.uniform(0, 2 * np.pi, n)
    cos_i = np.cos(ref) * np.cos(psi) + np.sin(ref) * np.sin(psi) * np.cos(phi)
    hit = np.abs(transit.impact_parameter(aor, np.arccos(cos_i), e, w)) < 1.0
    assert abs(p.mean() - hit.mean()) < 5 * np.sqrt(hit.mean() * (1 - hit.mean()) / n)


def test_azimuth_fraction_hand_cases():
    # Edge-on reference plane (I = 90 deg), tilt 30 deg: cos i = sin(30) cos(phi) = cos(phi)/2;
    # |cos(phi)/2| < 0.1 <=> |cos phi| < 0.2: fraction 1 - 2 arccos(0.2)/pi... = 2 arcsin(0.2)/pi
    f = to.azimuth_fraction(0.0, np.radians(30.0), 0.1)
    assert f == pytest.approx(2 * np.arcsin(0.2) / np.pi, rel=1e-12)
    # face-on reference plane, no tilt: never transits; tilt 90 deg from face-on: always edge-on
    assert to.azimuth_fraction(1.0, 0.0, 0.1) == 0.0
    assert to.azimuth_fraction(1.0, np.pi / 2, 0.1) == pytest.approx(1.0)


def test_hypothetical_planet_aor_from_radius_or_density():
    # Earth-Sun: P = 365.256363 d around 1 M_sun, R* = 1 R_sun -> a/R* = 215.03 (IAU 2015 B3
    # nominal R_sun, IAU 2012 au; a = 1.0000 au); from the density the same star
    # (1.41 g/cm^3 for 1 M_sun in 1 R_sun, Seager & Mallen-Ornelas 2003 relation) gives the same.
    aor_r = to.hypothetical_planet_aor(365.256363, 1.0, r_star_rsun=1.0)
    assert aor_r == pytest.approx(215.03, rel=1e-4)
    rho = transit.stellar_density_gcc(aor_r, 365.256363)
    aor_rho = to.hypothetical_planet_aor(365.256363, 1.0, rho_star_gcc=rho)
    assert aor_rho == pytest.approx(aor_r, rel=1e-10)
    assert np.isnan(to.hypothetical_planet_aor(10.0, 1.0))


def test_bad_kind_and_sigma():
    with pytest.raises(ValueError, match="kind must be"):
        to.conditional_transit_probability(10.0, 1.5, 0.1, kind="fisher")
    with pytest.raises(ValueError, match="sigma must be positive"):
        to.conditional_transit_probability(10.0, 1.5, -0.1)


def _dense_quadrature(aor, ref_inc, sigma, n_gauss=to.N_GAUSS):
    """The tilt quadrature without any shortcut (written here): all 7 pieces between the sorted
    kinks, n_gauss nodes each, the azimuth fraction 2[arccos(lo) - arccos(hi)] / 2 pi everywhere."""
    c = np.minimum(1.0 / np.asarray(aor, float), 1.0)
    I, c, sig = np.broadcast_arrays(np.asarray(ref_inc, float), c, np.asarray(sigma, float))
    t1 = np.arccos(c)
    t2 = np.pi - t1
    kinks = np.sort(np.clip(np.stack([0 * I, 0 * I + np.pi, np.abs(I - t1), I + t1, 2 * np.pi - I - t1,
                                      np.abs(I - t2), I + t2, 2 * np.pi - I - t2], -1), 0.0, np.pi), -1)
    s2 = 2.0 * sig[..., None] ** 2
    f_pi = -np.expm1(-np.pi ** 2 / s2)
    ue = -np.expm1(-kinks ** 2 / s2) / f_pi
    x, w = np.polynomial.legendre.leggauss(n_gauss)
    t = 0.5 * np.pi * (x + 1.0)
    ua, ub = ue[..., :-1, None], ue[..., 1:, None]
    u = ua + (ub - ua) * 0.5 * (1.0 - np.cos(t))
    with np.errstate(divide="ignore"):
        psi = np.minimum(sig[..., None, None] * np.sqrt(-2.0 * np.log1p(-np.minimum(u * f_pi[..., None], 1.0))),
                         np.pi)
    A = np.cos(I)[..., None, None] * np.cos(psi)
    B = np.maximum(np.sin(I)[..., None, None] * np.sin(psi), 1e-300)
    cc = c[..., None, None]
    frac = (np.arccos(np.clip((-cc - A) / B, -1, 1)) - np.arccos(np.clip((cc - A) / B, -1, 1))) / np.pi
    return np.sum((ub - ua)[..., 0] * (frac @ (0.25 * np.pi * w * np.sin(t))), axis=-1)


def test_kernel_equals_the_dense_quadrature_and_is_batch_invariant():
    # The kernel skips pieces of zero width and pieces where the azimuth fraction is exactly 0 or 1
    # (tilt_kinks), and evaluates one bound where the other stays clipped: the same quadrature as the
    # dense one written above, so equal to rounding.  Absolute tolerance: the pieces' widths are
    # differences of CDF values near 1 (resolution 1.1e-16), so far-tail probabilities of 1e-17 are
    # rounding noise in both.  Measured: 4.4e-16 at most over these draws.
    rng = np.random.default_rng(11)
    ref = np.concatenate([np.radians(rng.normal(89.0, 1.5, 300)), rng.uniform(0.0, np.pi, 300)])[:, None]
    sig = np.exp(rng.uniform(np.log(1e-4), np.log(50.0), 600))[:, None]
    aor = np.geomspace(1.5, 3000.0, 23)
    p = to.conditional_transit_probability(aor, ref, sig)
    np.testing.assert_allclose(p, _dense_quadrature(aor, ref, sig), rtol=1e-12, atol=2e-15)
    # batch invariance (DEVELOPERS.md): one element alone gives the same bits as inside the array
    for i, j in ((0, 0), (17, 11), (450, 22)):
        assert to.conditional_transit_probability(aor[j], ref[i, 0], sig[i, 0]) == p[i, j]
    # c_max = 1 (a/R* <= 1 + Rp/R*): every orientation transits (the fraction is exactly 1 on every
    # piece; the dense quadrature's arccos at bounds within rounding of -1 loses up to 4e-3 here)
    np.testing.assert_allclose(to.conditional_transit_probability(0.8, ref, sig), 1.0, rtol=0, atol=1e-14)
