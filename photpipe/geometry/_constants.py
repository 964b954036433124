"""Physical constants and the ecliptic frame used by the geometry stage (plain floats).

Units inside the stage: astronomical units, days (TDB) and radians.
"""

import numpy as np

__all__ = [
    "AU_KM", "DAY_S", "C_AU_PER_DAY", "GM_SUN_AU3_D2", "OBLIQUITY_J2000_RAD",
    "ECLIPTIC_TO_ICRS", "RAD_PER_DAY_TO_ARCSEC_PER_HOUR", "AU_PER_DAY_TO_KM_S",
]

#: The astronomical unit in km (IAU 2012 Resolution B2: exactly 149 597 870 700 m).
AU_KM = 149_597_870.700
#: Seconds per day.
DAY_S = 86_400.0
#: Speed of light, 299 792.458 km/s exactly (SI), in AU per day.
C_AU_PER_DAY = 299_792.458 * DAY_S / AU_KM
#: Heliocentric gravitational constant, nominal 1.3271244e20 m^3/s^2 (IAU 2015 Resolution B3,
#: Prsa et al. 2016), in AU^3/day^2.
GM_SUN_AU3_D2 = 1.3271244e11 * DAY_S**2 / AU_KM**3
#: Obliquity of the ecliptic at J2000, 84381.448 arcsec (IAU 1976 value, Lieske et al. 1977),
#: the one that defines the "ecliptic and mean equinox of J2000" of published orbital elements.
OBLIQUITY_J2000_RAD = np.deg2rad(84381.448 / 3600.0)

_c, _s = np.cos(OBLIQUITY_J2000_RAD), np.sin(OBLIQUITY_J2000_RAD)
#: Rotation from ecliptic J2000 to equatorial (ICRF-aligned) axes: a rotation about x by the
#: obliquity. Frame bias (~0.02 arcsec) is not applied, as for elements referred to ICRF axes.
ECLIPTIC_TO_ICRS = np.array([[1.0, 0.0, 0.0], [0.0, _c, -_s], [0.0, _s, _c]])
del _c, _s

#: Converts an angular rate in rad/day to arcsec/hour.
RAD_PER_DAY_TO_ARCSEC_PER_HOUR = np.rad2deg(1.0) * 3600.0 / 24.0
#: Converts AU/day to km/s.
AU_PER_DAY_TO_KM_S = AU_KM / DAY_S
