"""Transit geometry (archsys.physics.transit) against worked cases of [Winn2010]."""
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from archsys.inference.draws import direct_draws
from archsys.model.reader import build_system
from archsys.physics import constants as C
from archsys.physics import transit as tr

SIDEREAL_YEAR_DAY = 365.256363  # Sun-Earth worked case of [Winn2010] (sidereal year from memory, docs/references.md)


def test_sun_earth_scaled_semi_major_axis():
    # 1 au / R_sun^N = 215.032 16 ([IAU2012], [Prsa2016], derived from IAU 2012 B2 and 2015 B3).
    assert float(tr.a_over_rstar(1.0, 1.0)) == pytest.approx(215.03216, abs=5e-6)


def test_sun_density_from_transit_matches_nominal_sun():
    # Seager & Mallen-Ornelas 2003: rho* = 3 pi (a/R*)^3 / (G P^2).  [SeagerMallenOrnelas2003] worked
    # case: Sun-Earth gives 1.40978 g/cm^3, and M_sun^N / (4/3 pi R_sun^N^3) = 1.40978
    # (agree to 3e-6; the difference is M_E in Kepler III and a != 1 au exactly).
    aor = float(tr.a_over_rstar(1.0, 1.0))
    rho = float(tr.stellar_density_gcc(aor, SIDEREAL_YEAR_DAY))
    assert rho == pytest.approx(1.40978, abs=5e-6)
    rho_nominal = C.MSUN_KG / (4.0 / 3.0 * math.pi * C.R_SUN_M**3) * 1e-3  # kg/m^3 -> g/cm^3
    assert rho_nominal == pytest.approx(1.40978, abs=5e-6)
    assert rho == pytest.approx(rho_nominal, rel=1e-5)
    # Inverse: a/R* from the density (round trip, common practice).
    assert float(tr.a_over_rstar_from_density(rho, SIDEREAL_YEAR_DAY)) == pytest.approx(aor, rel=1e-13)


def test_sun_earth_transit_probability():
    # Winn 2010 eq. 9, circular: p = R*/a = 0.4650 %; grazing (R* + R_E)/a = 0.4693 %
    # ([Winn2010], derived).
    aor = tr.a_over_rstar(1.0, 1.0)
    assert float(tr.transit_probability(aor)) == pytest.approx(0.004650, abs=5e-7)
    k_earth = C.R_EARTH_M / C.R_SUN_M
    assert float(tr.transit_probability(aor, k_earth)) == pytest.approx(0.004693, abs=5e-7)
    assert float(tr.transit_probability(aor, k_earth, grazing=False)) < 0.004650
    # Eccentric orbit transiting near periastron (omega = 90 deg) is more likely by
    # (1 + e)/(1 - e^2) = 1/(1 - e) (Winn 2010 eq. 9).
    p_e = float(tr.transit_probability(aor, 0.0, 0.5, np.pi / 2))
    assert p_e == pytest.approx(float(tr.transit_probability(aor)) / 0.5, rel=1e-12)


def test_inclination_from_impact_parameter_worked_case():
    # b = 0.5, a/R* = 10 -> i = 87.134 deg ([Winn2010], derived; Winn 2010 eq. 7).
    assert math.degrees(float(tr.inclination_from_b(0.5, 10.0))) == pytest.approx(87.134, abs=5e-4)
    # b = 0 is edge-on; b beyond the projected distance has no solution (NaN).
    assert float(tr.inclination_from_b(0.0, 10.0)) == pytest.approx(math.pi / 2, abs=1e-15)
    assert math.isnan(float(tr.inclination_from_b(11.0, 10.0)))


def test_hd209458b_from_memory():
    # HD 209458 b, Torres, Winn & Holman 2008 (from memory, low-medium confidence,
    # [Torres2008]): a/R* = 8.76, i = 86.71 deg -> b = 0.503 (recomputed) and
    # rho* = 1.024 g/cm^3 with P = 3.52474859 d.
    b = float(tr.impact_parameter(8.76, math.radians(86.71)))
    assert b == pytest.approx(0.503, abs=5e-4)
    assert float(tr.stellar_density_gcc(8.76, 3.52474859)) == pytest.approx(1.024, abs=1e-3)


def test_eccentric_factor_at_periastron_and_apastron():
    # Winn 2010 eq. 7: r_conj / a = (1 - e^2)/(1 + e sin omega): 1 - e at omega = 90 deg,
    # 1 + e at omega = -90 deg (common practice).
    e = np.array([0.0, 0.1, 0.5, 0.9])
    np.testing.assert_allclose(tr.eccentric_factor(e, np.pi / 2), 1 - e, rtol=1e-14)
    np.testing.assert_allclose(tr.eccentric_factor(e, -np.pi / 2), 1 + e, rtol=1e-14)


@settings(max_examples=150, deadline=None)
@given(aor=st.floats(1.5, 500.0), u=st.floats(0.0, 1.0), e=st.floats(0.0, 0.9),
       w=st.floats(-math.pi, math.pi))
def test_eccentric_impact_parameter_round_trip(aor, u, e, w):
    # impact_parameter(inclination_from_b(b)) == b for any b the geometry allows
    # (Winn 2010 eq. 7, common practice).
    b = u * aor * float(tr.eccentric_factor(e, w))
    i = float(tr.inclination_from_b(b, aor, e, w))
    assert 0.0 <= i <= math.pi / 2
    assert float(tr.impact_parameter(aor, i, e, w)) == pytest.approx(b, rel=1e-9, abs=1e-12)


def test_isotropic_orientations_via_uniform_b():
    # For isotropic orbit normals cos i is uniform, i.e. b = (a/R*) cos i is uniform on
    # [0, a/R*]; then <sin i> = pi/4 and median sin i = sqrt(3)/2 ([Winn2010], derived).
    # A uniform-in-i prior would give <sin i> = 2/pi instead (the common mistake).
    rng = np.random.default_rng(2024)
    n = 200_000
    aor = 20.0
    i = tr.inclination_from_b(rng.uniform(0.0, aor, n), aor)
    s = np.sin(i)
    se = s.std() / math.sqrt(n)
    assert abs(s.mean() - math.pi / 4) < 5 * se
    assert abs(s.mean() - 2 / math.pi) > 50 * se
    # Median of sin i: density of sin i at the median is s / sqrt(1 - s^2) = sqrt(3).
    se_med = math.sqrt(0.25 / n) / math.sqrt(3)
    assert abs(np.median(s) - math.sqrt(3) / 2) < 5 * se_med


def test_transiting_planet_draws_are_isotropic_given_transit():
    # archsys draws b uniform on [0, 1 + Rp/R*] for a transiting planet without a
    # measured b: isotropic orientations conditioned on a transit ([Winn2010]),
    # so (a/R*) cos i must be uniform on that interval (KS test, scipy reference).
    data = {"name": "T", "star": {"mass": 1.0, "radius": 1.0},
            "planet": [{"name": "T b", "period": 10.0, "ror": 0.1, "transiting": True}]}
    post = direct_draws(build_system(data), n=4000, seed=5)
    aor = tr.a_over_rstar(post["a"][:, 0], post["r_star"])
    b = aor * np.cos(post["inc"][:, 0])
    assert np.all(np.isfinite(b))
    res = stats.kstest(b, stats.uniform(loc=0.0, scale=1.1).cdf)
    assert res.pvalue > 1e-3
