"""Physical constants used by every kernel, in the internal units.

Internal units (stated once for the whole package): time in days, mass in
solar masses, length in au, angles in radians, radial velocity in m/s.

We use the IAU 2015 Resolution B3 nominal solar mass parameter (GM)_sun^N,
which is exact by definition, so that results do not carry the ~2e-5 relative
uncertainty of G (Prsa et al. 2016, AJ 152, 41).  Planet masses are expressed
through ratios of nominal mass parameters, which are also independent of G.
"""
import math

__all__ = ["GM_SUN_SI", "GM_EARTH_SI", "GM_JUP_SI", "R_SUN_M", "R_EARTH_M", "R_JUP_M", "AU_M", "DAY_S",
           "JULIAN_YEAR_DAY", "G_SI", "GM_SUN", "MEARTH_MSUN", "MJUP_MSUN", "RSUN_AU", "REARTH_AU",
           "MSUN_KG", "TWO_PI"]

#: IAU 2015 B3 nominal solar mass parameter [m^3 s^-2] (exact).
GM_SUN_SI = 1.3271244e20
#: IAU 2015 B3 nominal terrestrial mass parameter [m^3 s^-2].
GM_EARTH_SI = 3.986004e14
#: IAU 2015 B3 nominal jovian mass parameter [m^3 s^-2].
GM_JUP_SI = 1.2668653e17
#: IAU 2015 B3 nominal solar radius [m] (exact).
R_SUN_M = 6.957e8
#: IAU 2015 B3 nominal terrestrial equatorial radius [m].
R_EARTH_M = 6.3781e6
#: IAU 2015 B3 nominal jovian equatorial radius [m].
R_JUP_M = 7.1492e7
#: IAU 2012 Resolution B2 astronomical unit [m] (exact).
AU_M = 149_597_870_700.0
#: Day [s].
DAY_S = 86_400.0
#: Julian year [day] (IAU convention).
JULIAN_YEAR_DAY = 365.25
#: CODATA 2018 Newtonian constant [m^3 kg^-1 s^-2]; used only to express
#: densities in g/cm^3 (a stellar density needs G; mass parameters do not).
G_SI = 6.67430e-11

#: GM_sun in internal units [au^3 day^-2].
GM_SUN = GM_SUN_SI * DAY_S**2 / AU_M**3
#: Mass ratios of nominal parameters (independent of G).
MEARTH_MSUN = GM_EARTH_SI / GM_SUN_SI
MJUP_MSUN = GM_JUP_SI / GM_SUN_SI
#: Solar radius in au.
RSUN_AU = R_SUN_M / AU_M
REARTH_AU = R_EARTH_M / AU_M
#: Solar mass in kg (derived: nominal GM / CODATA 2018 G); density only.
MSUN_KG = GM_SUN_SI / G_SI

TWO_PI = 2.0 * math.pi
