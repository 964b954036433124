"""Sun and Earth from the analytical series that astropy uses as its built-in ephemeris."""

import erfa
import numpy as np

__all__ = ["earth_sun_builtin", "BUILTIN_RANGE_JD"]

#: Validity of the series, 1900-2100 (SOFA/ERFA documentation of epv00).
BUILTIN_RANGE_JD = (2415020.5, 2488069.5)


def earth_sun_builtin(jd1, jd2):
    """Barycentric Earth and Sun states (AU, AU/day, ICRS axes) at TDB Julian dates.

    Notes
    -----
    ``erfa.epv00``: the Earth's heliocentric and barycentric states from the series of
    Bretagnon & Francou (1988) fitted to DE405 (SOFA, ~4.6 km in the Earth's position over
    1900-2100); this is what ``astropy.coordinates.get_body_barycentric_posvel(...,
    ephemeris="builtin")`` evaluates. The Sun is barycentric Earth minus heliocentric Earth.
    """
    pvh, pvb = erfa.epv00(np.asarray(jd1, dtype=float), np.asarray(jd2, dtype=float))
    earth_p = np.moveaxis(pvb["p"], -1, 0)
    earth_v = np.moveaxis(pvb["v"], -1, 0)
    sun_p = earth_p - np.moveaxis(pvh["p"], -1, 0)
    sun_v = earth_v - np.moveaxis(pvh["v"], -1, 0)
    return earth_p, earth_v, sun_p, sun_v
