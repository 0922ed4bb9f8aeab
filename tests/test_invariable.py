"""AMD about the invariable plane (Laskar & Petit 2017 define the AMD about the total angular momentum).

Sources: planetary elements referred to the ecliptic, JPL approximate elements Table 1 (Standish 1992; the
nodes from memory, see test_scores.py), masses from the NASA planetary fact sheet; inclinations to the
invariable plane from Souami & Souchay 2012 (A&A 543, A133), as tabulated in test_scores.I_INV_DEG.
"""
import numpy as np
import pytest

from archsys.inference.stability import InclinationBasis, amd_inclinations, stable_draws
from archsys.pipeline import AnalysisOptions, analyze
from archsys.physics import invariable, kepler
from archsys.physics.constants import MEARTH_MSUN

from test_joint import M_EARTHS, _handbook_system
from test_scores import ECC, I_ECL_DEG, I_INV_DEG, NODE_ECL_DEG, P_DAY


def _elements():
    m = np.array(M_EARTHS) * MEARTH_MSUN
    a = kepler.a_au(np.array(P_DAY), 1.0 + m)
    return m, a, np.array(ECC), np.radians(I_ECL_DEG), np.radians(NODE_ECL_DEG)


def test_invariable_inclinations_match_souami_souchay_2012():
    m, a, e, i, node = _elements()
    got = np.degrees(invariable.invariable_inclinations(m, a, e, i, node, 1.0))
    # Souami & Souchay 2012 give two decimals; mean elements and the rounded masses allow ~0.02 deg
    assert got == pytest.approx(I_INV_DEG, abs=0.02)


def test_invariable_inclinations_do_not_depend_on_the_frame():
    # Rotating every orbit normal by the same rotation leaves the inclinations to the invariable plane
    # unchanged (a property of the definition, common practice).
    m, a, e, i, node = _elements()
    n = invariable.orbit_normal(i, node)
    c, s = np.cos(0.7), np.sin(0.7)
    rot = np.array([[1, 0, 0], [0, c, -s], [0, s, c]])
    n2 = n @ rot.T
    i2 = np.arccos(n2[:, 2])
    node2 = np.arctan2(n2[:, 0], -n2[:, 1])
    assert invariable.invariable_inclinations(m, a, e, i2, node2, 1.0) == pytest.approx(
        invariable.invariable_inclinations(m, a, e, i, node, 1.0), abs=1e-9)


def test_coplanar_orbits_tilted_together_have_zero_amd_inclination():
    # Exactly coplanar orbits in a plane tilted by 60 deg: no inclination part in the AMD, so the
    # tilt of a fitted reference plane can no longer leak into beta (issue 18).
    m, a, e, _, _ = _elements()
    inc = np.full(8, np.radians(60.0))
    node = np.full(8, 1.1)
    assert invariable.invariable_inclinations(m, a, e, inc, node, 1.0) == pytest.approx(0.0, abs=1e-7)


def test_handbook_solar_system_amd_beta_uses_invariable_plane():
    # [Standish1992] derived values of docs/references.md (from LP17 C_c with Table 1 e and invariable-plane inclinations): beta = 112, 64,
    # 187 for Mercury-Venus, Venus-Earth, Earth-Mars; the whole system is AMD-unstable (Laskar & Petit
    # 2017 say so qualitatively -- from memory).  Exact elements: every draw has one value, no spread.
    doc = analyze(_handbook_system(), AnalysisOptions(n_draws=400, seed=5, quiet=True, nbody=0)).document
    betas = [q["amd_beta"] for q in doc["pairs"][:3]]
    for b, ref in zip(betas, (112.3, 64.0, 187.0)):
        assert b["median"] == pytest.approx(ref, rel=0.02)
        assert b["hi"] - b["lo"] == pytest.approx(0.0, abs=1e-6 * ref)
    assert "invariable plane" in doc["amd"]["inclinations"]


def test_amd_inclination_basis_falls_back_without_nodes():
    d = {"ecc": np.zeros((3, 2)), "a": np.ones((3, 2)) * [1.0, 2.0], "m_star": np.ones(3),
         "mass": np.full((3, 2), 1e-5), "msini": np.full((3, 2), 1e-5),
         "inc": np.full((3, 2), 1.5), "node": np.full((3, 2), np.nan)}
    inc, basis = amd_inclinations(d)
    assert basis is InclinationBasis.COPLANAR and np.all(inc == 0)
    st, info = stable_draws(d)
    assert info["amd"] and st.all()
