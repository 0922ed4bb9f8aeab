"""A mass–radius relation for planets that have a radius but no mass.

Used only to give Hill separations an order-of-magnitude mass where the
catalogue has none; every mass obtained this way is flagged "from radius" in
the outputs.

Relation (from memory; check against the papers before relying on it):
  R < 1.5 R_E:       rho = 2.43 + 3.39 (R/R_E) g/cm^3       (Weiss & Marcy 2014, ApJ 783, L6)
  1.5 <= R < 4 R_E:  M/M_E = 2.69 (R/R_E)^0.93              (Weiss & Marcy 2014)
  R >= 4 R_E:        M = M(4 R_E) (R / 4 R_E)^(1/0.589), capped at 1 M_J, since R is
                     nearly independent of M for giants (Chen & Kipping 2017, ApJ 834, 17:
                     Neptunian exponent 0.589, from memory)
Scatter: log-normal, 0.15 dex (heuristic; the published relations scatter by
roughly this amount or more).
"""
from __future__ import annotations

import numpy as np

from .constants import MEARTH_MSUN, MJUP_MSUN, R_EARTH_M

__all__ = ["mass_from_radius_mearth", "SCATTER_DEX"]

SCATTER_DEX = 0.15
_M_EARTH_G = 5.972168e27      # M_E in grams (derived: nominal GM_E / CODATA 2018 G)
_R_EARTH_CM = R_EARTH_M * 100.0
_M_AT_4 = 2.69 * 4.0**0.93


def mass_from_radius_mearth(r_mearth):
    """Median mass [M_earth] for a planet radius [R_earth] (vectorised)."""
    R = np.asarray(r_mearth, dtype=float)
    vol_cm3 = 4.0 / 3.0 * np.pi * (R * _R_EARTH_CM) ** 3
    m_rocky = (2.43 + 3.39 * R) * vol_cm3 / _M_EARTH_G
    m_sub = 2.69 * R**0.93
    m_big = np.minimum(_M_AT_4 * (R / 4.0) ** (1.0 / 0.589), MJUP_MSUN / MEARTH_MSUN)
    return np.where(R < 1.5, m_rocky, np.where(R < 4.0, m_sub, m_big))
