"""Airmass of a frame: from the header when it has one, else from the site, time and target.

Near the horizon the plane-parallel sec z runs to infinity while the real path through the air
stays finite (about 38 at the horizon), so a fitted formula for the curved, refracting atmosphere is
used. The altitude it takes is the apparent (refracted) one; refraction is added to the geometric
altitude, so the result stays finite down to the horizon.

The geometric altitude is computed from closed formulas (sidereal time, precession of the
target's J2000 place to the date, the altitude of a star at an hour angle): an airmass needs the
altitude to a few hundredths of a degree, and the full chain of astropy's AltAz frame costs about
a second to set up in each new process (its Earth-orientation tables), more than the rest of a
frame's photometry. Nutation (at most 17 arcsec), aberration (20 arcsec), polar motion and
UT1 - UTC (at most 0.9 s of time, 14 arcsec) are left out; the test compares the altitude with
astropy's AltAz to 0.02 deg.
"""

import numpy as np
from astropy import units as u
from astropy.coordinates import EarthLocation
from astropy.time import Time

from photpipe._quantity import as_value

__all__ = ["AIRMASS_FORMULAS", "relative_airmass", "refraction", "standard_pressure",
           "geometric_altitude", "frame_airmass", "header_airmass"]


def _kasten_young_1989(h):
    # Kasten & Young (1989, Applied Optics 28, 4735), Eq. 3, apparent altitude h in degrees
    return 1.0 / (np.sin(np.radians(h)) + 0.50572 * (h + 6.07995) ** -1.6364)


def _pickering_2002(h):
    # Pickering (2002, DIO 12, 3), apparent altitude h in degrees
    return 1.0 / np.sin(np.radians(h + 244.0 / (165.0 + 47.0 * h**1.1)))


#: Formula name -> function of the apparent altitude in degrees (0 to 90).
AIRMASS_FORMULAS = {"kasten-young": _kasten_young_1989, "pickering": _pickering_2002}


def relative_airmass(altitude, *, formula="kasten-young"):
    r"""Relative optical airmass at an apparent altitude.

    Parameters
    ----------
    altitude : `~astropy.units.Quantity` ['angle']
        Apparent (refracted) altitude above the horizon.
    formula : {"kasten-young", "pickering"}, optional
        Key of `AIRMASS_FORMULAS`.

    Returns
    -------
    airmass : float or ndarray
        Path length through the air relative to the zenith path; NaN below the horizon.

    Raises
    ------
    ValueError
        An unknown formula.

    Notes
    -----
    Kasten & Young (1989, Applied Optics 28, 4735) fitted

    .. math:: X = \left[\sin h + 0.50572\,(h + 6.07995^\circ)^{-1.6364}\right]^{-1}

    to their air-mass table for the ISO standard atmosphere (h in degrees); Pickering (2002,
    DIO 12, 3) gives :math:`X = 1 / \sin(h + 244 / (165 + 47 h^{1.1}))`. Both stay finite at the
    horizon (about 38) and tend to sec z high in the sky.

    Examples
    --------
    >>> from astropy import units as u
    >>> round(float(relative_airmass(30 * u.deg)), 3)
    1.994
    >>> round(float(relative_airmass(0 * u.deg)), 2)
    37.92
    """
    try:
        func = AIRMASS_FORMULAS[formula]
    except KeyError:
        msg = f"unknown airmass formula {formula!r}; choose from {', '.join(AIRMASS_FORMULAS)}"
        raise ValueError(msg) from None
    h = np.asarray(as_value(altitude, u.deg, "altitude"), dtype=float)
    with np.errstate(invalid="ignore"):
        ok = (h >= 0.0) & (h <= 90.0)
        x = np.where(ok, func(np.where(ok, h, 45.0)), np.nan)
    return float(x) if x.ndim == 0 else x


def standard_pressure(height):
    """Air pressure of the standard atmosphere at a height (troposphere).

    Parameters
    ----------
    height : `~astropy.units.Quantity` ['length']
        Height above sea level.

    Returns
    -------
    pressure : `~astropy.units.Quantity` [pressure]

    Notes
    -----
    p = 1013.25 hPa (1 - 2.25577e-5 h/m)^5.25588 (U.S. Standard Atmosphere 1976, troposphere).

    Examples
    --------
    >>> from astropy import units as u
    >>> round(float(standard_pressure(1500 * u.m).to_value(u.hPa)), 1)
    845.6
    """
    h = as_value(height, u.m, "height")
    return 1013.25 * np.clip(1.0 - 2.25577e-5 * h, 0.0, None) ** 5.25588 * u.hPa


def refraction(true_altitude, *, pressure=1010 * u.hPa, temperature=10 * u.deg_C):
    """Atmospheric refraction for a geometric (unrefracted) altitude, valid down to the horizon.

    Parameters
    ----------
    true_altitude : `~astropy.units.Quantity` ['angle']
        Geometric altitude.
    pressure : `~astropy.units.Quantity` [pressure], optional
        Air pressure at the site.
    temperature : `~astropy.units.Quantity` [temperature], optional
        Air temperature at the site.

    Returns
    -------
    refraction : `~astropy.units.Quantity` ['angle']
        Apparent minus geometric altitude (arcmin).

    Notes
    -----
    R = 1.02' / tan(h + 10.3° / (h + 5.11°)) at 1010 hPa and 10 °C, scaled by
    (P / 1010 hPa) (283 K / T) (Sæmundsson 1986, Sky & Telescope 72, 70; Meeus 1998,
    Astronomical Algorithms, Eq. 16.4 and 16.5). About 34' at the horizon.

    Examples
    --------
    >>> from astropy import units as u
    >>> round(float(refraction(0 * u.deg).to_value(u.arcmin)), 1)
    29.0
    """
    h = np.asarray(as_value(true_altitude, u.deg, "true_altitude"), dtype=float)
    p = as_value(pressure, u.hPa, "pressure")
    if not isinstance(temperature, u.Quantity):
        msg = f"'temperature' must be an astropy Quantity, got {type(temperature).__name__}"
        raise TypeError(msg)
    t = float(temperature.to_value(u.K, equivalencies=u.temperature()))
    with np.errstate(invalid="ignore", divide="ignore"):
        r = 1.02 / np.tan(np.radians(h + 10.3 / (h + 5.11)))
    return r * (p / 1010.0) * (283.0 / t) * u.arcmin


def header_airmass(header):
    """The header's AIRMASS as a float (NaN when it is missing or not a number ≥ 0.99).

    Values a little below 1 come from rounding near the zenith and are kept (common practice).
    """
    value = header.get("AIRMASS") if header is not None else None
    try:
        x = float(value)
    except (TypeError, ValueError):
        return float("nan")
    return x if np.isfinite(x) and x >= 0.99 else float("nan")


def _mean_sidereal_deg(jd_ut):
    """Greenwich mean sidereal time in degrees (Meeus 1998, Astronomical Algorithms, Eq. 12.4)."""
    d = jd_ut - 2451545.0
    t = d / 36525.0
    return (280.46061837 + 360.98564736629 * d + 0.000387933 * t**2 - t**3 / 38710000.0) % 360.0


def _precessed_deg(ra, dec, jd):
    """A J2000 place precessed to the date (Meeus 1998, Eq. 21.2-21.4, rigorous method)."""
    t = (jd - 2451545.0) / 36525.0
    zeta = np.radians((2306.2181 * t + 0.30188 * t**2 + 0.017998 * t**3) / 3600.0)
    z = np.radians((2306.2181 * t + 1.09468 * t**2 + 0.018203 * t**3) / 3600.0)
    theta = np.radians((2004.3109 * t - 0.42665 * t**2 - 0.041833 * t**3) / 3600.0)
    a0, d0 = np.radians(ra) + zeta, np.radians(dec)
    a = np.cos(d0) * np.sin(a0)
    b = np.cos(theta) * np.cos(d0) * np.cos(a0) - np.sin(theta) * np.sin(d0)
    c = np.sin(theta) * np.cos(d0) * np.cos(a0) + np.cos(theta) * np.sin(d0)
    return np.degrees(np.arctan2(a, b) + z), np.degrees(np.arcsin(np.clip(c, -1.0, 1.0)))


def geometric_altitude(time, location, ra, dec):
    """Geometric (unrefracted) altitude of a J2000 place seen from a site, by closed formulas.

    Parameters
    ----------
    time : `~astropy.time.Time`
        Time of the observation (UT1 is taken equal to UTC).
    location : `~astropy.coordinates.EarthLocation`
        The site (geodetic longitude east and latitude).
    ra, dec : `~astropy.units.Quantity` ['angle']
        ICRS (J2000) place of a distant target.

    Returns
    -------
    altitude : `~astropy.units.Quantity` ['angle']

    Notes
    -----
    Mean sidereal time (Meeus 1998, Eq. 12.4), precession J2000 to the date (Meeus 1998,
    Eq. 21.2-21.4), then ``sin h = sin φ sin δ + cos φ cos δ cos H`` with the hour angle
    ``H = θ0 + λ - α`` (Meeus 1998, Eq. 13.6). Nutation, aberration, polar motion and
    UT1 - UTC are left out: together below 0.02 deg.

    Examples
    --------
    >>> from astropy import units as u
    >>> from astropy.coordinates import EarthLocation
    >>> from astropy.time import Time
    >>> site = EarthLocation.from_geodetic(0 * u.deg, 90 * u.deg, 0 * u.m)
    >>> alt = geometric_altitude(Time("2000-01-01T12:00:00"), site, 10 * u.deg, 45 * u.deg)
    >>> round(float(alt.to_value(u.deg)), 2)    # at the pole the altitude is the declination
    45.0
    """
    jd = time.utc.jd
    ra_d, dec_d = _precessed_deg(as_value(ra, u.deg, "ra"), as_value(dec, u.deg, "dec"), jd)
    lon, lat = location.lon.to_value(u.deg), location.lat.to_value(u.deg)
    hour = np.radians(_mean_sidereal_deg(jd) + lon - ra_d)
    phi, delta = np.radians(lat), np.radians(dec_d)
    sin_h = np.sin(phi) * np.sin(delta) + np.cos(phi) * np.cos(delta) * np.cos(hour)
    return np.degrees(np.arcsin(np.clip(sin_h, -1.0, 1.0))) * u.deg


def frame_airmass(time, location, ra, dec, *, formula="kasten-young", temperature=10 * u.deg_C,
                  pressure=None):
    """Airmass toward (ra, dec) seen from a site at a time, computed offline.

    Parameters
    ----------
    time : `~astropy.time.Time`
        Mid-exposure time.
    location : `~astropy.coordinates.EarthLocation`
        The site.
    ra, dec : `~astropy.units.Quantity` ['angle']
        Target position (ICRS).
    formula : str, optional
        Key of `AIRMASS_FORMULAS`.
    temperature : `~astropy.units.Quantity` [temperature], optional
        Air temperature for the refraction.
    pressure : `~astropy.units.Quantity` [pressure], optional
        Air pressure; default the standard atmosphere at the site's height.

    Returns
    -------
    airmass : float
        NaN when the target is below the horizon.
    altitude : `~astropy.units.Quantity` ['angle']
        Apparent altitude used.

    Raises
    ------
    TypeError
        ``time`` is not a Time or ``location`` not an EarthLocation.

    Notes
    -----
    The geometric altitude comes from `geometric_altitude` (closed formulas, within 0.02 deg
    of astropy's AltAz frame); `refraction` turns it into the apparent altitude and
    `relative_airmass` into the airmass.

    Examples
    --------
    >>> from astropy import units as u
    >>> from astropy.coordinates import EarthLocation
    >>> from astropy.time import Time
    >>> site = EarthLocation.from_geodetic(20 * u.deg, 40 * u.deg, 1000 * u.m)
    >>> x, alt = frame_airmass(Time("2026-12-01T00:00:00"), site, 60 * u.deg, 30 * u.deg)
    >>> 1.0 <= x < 1.2
    True
    """
    if not isinstance(time, Time):
        msg = f"'time' must be an astropy Time, got {type(time).__name__}"
        raise TypeError(msg)
    if not isinstance(location, EarthLocation):
        msg = f"'location' must be an EarthLocation, got {type(location).__name__}"
        raise TypeError(msg)
    h_true = geometric_altitude(time, location, ra, dec)
    p = standard_pressure(location.height) if pressure is None else pressure
    h_app = (h_true + refraction(h_true, pressure=p, temperature=temperature)).to(u.deg)
    return relative_airmass(h_app, formula=formula), h_app
