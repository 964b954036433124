"""Sun and Earth from JPL DE421 (the ``de421`` package read by ``jplephem``)."""

import functools

import numpy as np

from photpipe.geometry._constants import AU_KM

__all__ = ["earth_sun_de421", "de421_range_jd"]


@functools.cache
def _kernel():
    import de421
    from jplephem.ephem import Ephemeris

    return Ephemeris(de421)


def de421_range_jd():
    """First and last TDB Julian date the ``de421`` package covers (1899-12-04 to 2200-02-01)."""
    k = _kernel()
    return float(k.jalpha), float(k.jomega)


def earth_sun_de421(jd1, jd2):
    """Barycentric Earth and Sun states (AU, AU/day, ICRF axes) at TDB Julian dates.

    Notes
    -----
    DE421 (Folkner, Williams & Boggs 2009, IPN Progress Report 42-178): the Earth is the
    Earth-Moon barycentre minus the geocentric Moon times 1 / (1 + EMRAT).
    """
    k = _kernel()
    jd1 = np.asarray(jd1, dtype=float)
    jd2 = np.asarray(jd2, dtype=float)
    emb_p, emb_v = k.position_and_velocity("earthmoon", jd1, jd2)
    moon_p, moon_v = k.position_and_velocity("moon", jd1, jd2)
    sun_p, sun_v = k.position_and_velocity("sun", jd1, jd2)
    share = k.earth_share
    earth_p = emb_p - moon_p * share
    earth_v = emb_v - moon_v * share
    return earth_p / AU_KM, earth_v / AU_KM, sun_p / AU_KM, sun_v / AU_KM
