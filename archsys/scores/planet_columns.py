"""Column metadata of the document's star and planet keys (scores declare their own columns).

These are not scores, but every output format and figure reads their labels
and units from the same :class:`~archsys.scores.registry.Column` model, through
:func:`archsys.scores.registry.column`.
"""
from __future__ import annotations

from .column_model import Column

__all__ = ["PLANET_COLUMNS", "STAR_COLUMNS", "BASE_COLUMNS"]

_ME, _MEt = "M⊕", r"$M_\oplus$"

PLANET_COLUMNS = (
    Column("period_days", "P", "$P$", "d", "d", table="planet", unit_astropy="d", description="orbital period"),
    Column("a_au", "a", "$a$", "au", "au", table="planet", unit_astropy="AU", description="semi-major axis"),
    Column("mass_mearth", "M", r"$M_\mathrm{p}$", _ME, _MEt, table="planet", unit_astropy="earthMass",
           description="true mass"),
    Column("msini_mearth", "M sin i", r"$M_\mathrm{p}\sin i$", _ME, _MEt, table="planet",
           unit_astropy="earthMass", description="minimum mass"),
    Column("radius_rearth", "R", r"$R_\mathrm{p}$", "R⊕", r"$R_\oplus$", table="planet",
           unit_astropy="earthRad", description="planet radius"),
    Column("ecc", "e", "$e$", table="planet", description="eccentricity"),
    Column("omega_deg", "ω", r"$\omega$", "deg", "deg", table="planet", unit_astropy="deg",
           description="argument of periastron"),
    Column("inclination_deg", "i (sky)", r"$i_\mathrm{sky}$", "deg", "deg", table="planet", unit_astropy="deg",
           description="inclination to the sky plane"),
    Column("node_deg", "Ω", r"$\Omega$", "deg", "deg", table="planet", unit_astropy="deg",
           description="longitude of the ascending node on the sky"),
    Column("psi_deg", "ψ (tilt)", r"$\psi$", "deg", "deg", table="planet", unit_astropy="deg",
           description="tilt from the system reference plane"),
    Column("transiting", "transiting", "Transiting", fmt="text", table="planet", show=False),
    Column("mass_basis", "mass basis", "Mass basis", fmt="text", table="planet", show=False),
    Column("ecc_basis", "eccentricity basis", "Eccentricity basis", fmt="text", table="planet", show=False),
    Column("ecc_origin", "eccentricity source", "Eccentricity source", fmt="text", table="planet", show=False,
           description="data, prior, assumed or fixed"),
    Column("inclination_origin", "inclination source", "Inclination source", fmt="text", table="planet",
           show=False, description="data, prior, assumed or fixed"),
    Column("inclination_basis", "inclination basis", "Inclination basis", fmt="text", table="planet",
           show=False),
    Column("ecc_limit", "e upper limit", "$e$ upper limit", fmt="text", table="planet", show=False,
           description="95th percentile of e where the input gave only an upper limit or the data do not "
                       "constrain e (shown in the e column as a limit)"),
    Column("estimated", "estimates", "Estimates", fmt="text", table="planet", show=False,
           description="keys whose values are estimates: mass_radius_relation, prior_inclination, "
                       "prior_dominated"),
)

STAR_COLUMNS = (
    Column("mass_msun", "stellar mass M★", r"Stellar mass $M_\star$", "M☉", r"$M_\odot$", table="star",
           unit_astropy="solMass"),
    Column("radius_rsun", "stellar radius R★", r"Stellar radius $R_\star$", "R☉", r"$R_\odot$", table="star",
           unit_astropy="solRad"),
    Column("density_gcc", "stellar density ρ★", r"Stellar density $\rho_\star$", "g cm⁻³", r"g\,cm$^{-3}$",
           table="star", unit_astropy="g / cm3"),
)

BASE_COLUMNS = PLANET_COLUMNS + STAR_COLUMNS
