"""Where the observer is: an observing site, and its barycentric position and velocity."""

import erfa
import numpy as np
from astropy import units as u
from astropy.coordinates import EarthLocation
from astropy.time import Time
from scipy.interpolate import CubicSpline

from photpipe._quantity import as_value
from photpipe.geometry._constants import AU_KM
from photpipe.geometry._offline import offline_earth_orientation
from photpipe.geometry._sampling import sampled_states
from photpipe.geometry.solar_system import earth_sun_states

__all__ = ["site_location", "location_from_header", "observer_states", "HEIGHT_RANGE_M"]

#: Accepted site heights: from the Dead Sea shore to above the highest mountain observatories.
HEIGHT_RANGE_M = (-500.0, 9000.0)

#: Grid step (days) for site positions when many epochs are asked for: the site circles the
#: geocentre at ω = 2π/day with radius ≤ 6400 km; Hermite error Δ⁴ω⁴R/384 ≈ 1 m at 15 min.
_SITE_STEP_DAYS = 1.0 / 96.0

#: From this many epochs on, the site follows from the Earth rotation angle and a sampled
#: precession-nutation matrix instead of one full astropy transformation per grid node.
_MANY_EPOCHS = 500

# FITS header keywords for the site, in order of preference (common practice: SITELONG/SITELAT
# /SITEELEV are written by many acquisition programs, LONG-OBS/LAT-OBS/ALT-OBS by others;
# OBSGEO-L/-B/-H are the FITS WCS Paper VII keywords, Rots et al. 2015).
_HEADER_KEYS = (
    ("OBSGEO-L", "OBSGEO-B", "OBSGEO-H"),
    ("SITELONG", "SITELAT", "SITEELEV"),
    ("LONG-OBS", "LAT-OBS", "ALT-OBS"),
)


def site_location(longitude, latitude, height, *, name="site"):
    """An observing site as an `~astropy.coordinates.EarthLocation`, with checked coordinates.

    Parameters
    ----------
    longitude : `~astropy.units.Quantity` ['angle']
        East longitude, -180° to 360°.
    latitude : `~astropy.units.Quantity` ['angle']
        Geodetic latitude (WGS84), -90° to 90°.
    height : `~astropy.units.Quantity` ['length']
        Height above the WGS84 ellipsoid, within `HEIGHT_RANGE_M`.
    name : str, optional
        The site's name, used in error messages.

    Returns
    -------
    location : `~astropy.coordinates.EarthLocation`

    Raises
    ------
    ValueError
        A coordinate that no site on the Earth can have; the message names it.

    Examples
    --------
    >>> from astropy import units as u
    >>> loc = site_location(-111.42 * u.deg, 34.17 * u.deg, 1710 * u.m)
    >>> round(float(loc.lat.to_value(u.deg)), 2)
    34.17
    >>> site_location(10 * u.deg, 95 * u.deg, 0 * u.m, name="kettle_rock")
    Traceback (most recent call last):
    ...
    ValueError: site 'kettle_rock': latitude must be within -90 and 90 deg, got 95.0 deg
    """
    lon = as_value(longitude, u.deg, "longitude")
    lat = as_value(latitude, u.deg, "latitude")
    h = as_value(height, u.m, "height")
    for label, value, lo, hi, unit in (("longitude", lon, -180.0, 360.0, "deg"),
                                       ("latitude", lat, -90.0, 90.0, "deg"),
                                       ("height", h, *HEIGHT_RANGE_M, "m")):
        if np.ndim(value) != 0 or not np.isfinite(value) or not lo <= value <= hi:
            msg = (f"site {name!r}: {label} must be within {lo:g} and {hi:g} {unit}, "
                   f"got {value} {unit}")
            raise ValueError(msg)
    return EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, h * u.m)


def location_from_header(header, *, source="header"):
    """Read the observing site from FITS header keywords, if it is there.

    Parameters
    ----------
    header : `~astropy.io.fits.Header` or dict
        The header. Recognised: OBSGEO-L/B/H, SITELONG/SITELAT/SITEELEV, LONG-OBS/LAT-OBS/ALT-OBS
        (degrees east, degrees, metres; sexagesimal strings "dd:mm:ss" or "dd mm ss" accepted).
    source : str, optional
        The frame's name, used in error messages.

    Returns
    -------
    location : `~astropy.coordinates.EarthLocation` or None
        None when the header has no complete set of site keywords.

    Raises
    ------
    ValueError
        A keyword that is present but cannot be read, or an impossible coordinate.

    Examples
    --------
    >>> loc = location_from_header({"SITELONG": "-111:25:12", "SITELAT": "34:10:12",
    ...                             "SITEELEV": 1710})
    >>> round(float(loc.lon.to_value("deg")), 2)
    -111.42
    """
    for klon, klat, kh in _HEADER_KEYS:
        if klon in header and klat in header:
            try:
                lon = _degrees(header[klon])
                lat = _degrees(header[klat])
                height = float(header.get(kh, 0.0) or 0.0)
            except ValueError as exc:
                msg = f"{source}: cannot read the site from {klon}/{klat}/{kh}: {exc}"
                raise ValueError(msg) from exc
            return site_location(lon * u.deg, lat * u.deg, height * u.m, name=source)
    return None


def _degrees(value):
    if isinstance(value, (int, float, np.floating, np.integer)):
        return float(value)
    text = str(value).strip().replace(":", " ")
    parts = text.split()
    if not parts:
        msg = f"empty angle {value!r}"
        raise ValueError(msg)
    sign = -1.0 if parts[0].startswith("-") else 1.0
    nums = [abs(float(parts[0]))] + [float(p) for p in parts[1:3]]
    return sign * sum(n / 60.0**k for k, n in enumerate(nums))


def _site_gcrs(location):
    def func(jd1, jd2):
        with offline_earth_orientation():
            t = Time(jd1, jd2, format="jd", scale="tdb")
            pos, vel = location.get_gcrs_posvel(t)
        p = pos.xyz.to_value(u.km) / AU_KM
        v = vel.xyz.to_value(u.km / u.s) * 86400.0 / AU_KM
        return np.atleast_2d(p.T).T, np.atleast_2d(v.T).T
    return func


def _site_gcrs_rotating(location, jd1, jd2):
    """Geocentric site state for many TDB epochs from the Earth's rotation written out.

    x_GCRS = C(t)ᵀ R₃(-θ(t)) x_ITRS with the celestial-to-intermediate matrix C (IAU 2006/2000A,
    ``erfa.c2i06a``) and the Earth rotation angle θ (``erfa.era00``, IERS Conventions 2010,
    Eq. 5.15); ẋ = Cᵀ (ω ẑ × R₃(-θ) x_ITRS). C and TDB - UT1 vary slowly and are taken from a
    0.25-day grid by cubic splines; polar motion (< 0.5", i.e. < 15 m at the site) is left out.
    """
    base = np.floor(jd1.min())
    x = (jd1 - base) + jd2
    step = 0.25
    k0, k1 = np.floor(x.min() / step) - 1, np.floor(x.max() / step) + 2
    nodes = (k0 + np.arange(int(k1 - k0) + 1)) * step
    with offline_earth_orientation():
        t_nodes = Time(np.full(nodes.size, base), nodes, format="jd", scale="tdb")
        ut1 = t_nodes.ut1
    lag = ((t_nodes.jd1 - ut1.jd1) + (t_nodes.jd2 - ut1.jd2))          # TDB - UT1, days
    c2i = erfa.c2i06a(np.full(nodes.size, base), nodes)                # (n, 3, 3)
    lag_t = CubicSpline(nodes, lag)(x)
    c2i_t = CubicSpline(nodes, c2i, axis=0)(x)                          # (N, 3, 3)
    theta = erfa.era00(np.full(x.size, base), x - lag_t)
    xyz = np.array([location.x.to_value(u.km), location.y.to_value(u.km),
                    location.z.to_value(u.km)], dtype=float)
    c, s = np.cos(theta), np.sin(theta)
    cirs = np.stack([c * xyz[0] - s * xyz[1], s * xyz[0] + c * xyz[1],
                     np.full(x.size, xyz[2])])
    omega = 2.0 * np.pi * 1.00273781191135448 * 86400.0 / 86400.0      # rad/day
    cirs_v = omega * np.stack([-cirs[1], cirs[0], np.zeros(x.size)])
    pos = np.einsum("nji,jn->in", c2i_t, cirs) / AU_KM
    vel = np.einsum("nji,jn->in", c2i_t, cirs_v) / AU_KM
    return pos, vel


def observer_states(jd1, jd2, *, location=None, ephemeris="builtin"):
    """Barycentric observer and Sun states as plain floats (AU, AU/day, ICRS axes).

    Parameters
    ----------
    jd1, jd2 : ndarray, shape (n,)
        Two-part TDB Julian dates.
    location : `~astropy.coordinates.EarthLocation` or None, optional
        The site; None for the geocentre.
    ephemeris : {"builtin", "de421"}
        Ephemeris of the Sun and the Earth.

    Returns
    -------
    obs_p, obs_v, sun_p, sun_v : ndarray, shape (3, n)

    Notes
    -----
    The site's geocentric position and velocity come from astropy
    (``EarthLocation.get_gcrs_posvel``: IAU 2006/2000A precession-nutation, Earth rotation from
    the bundled IERS tables) and are added to the barycentric Earth. For many epochs the same
    rotation is written out with the Earth rotation angle and a sampled precession-nutation
    matrix (agreement with astropy to ~15 m, the polar motion left out).
    """
    earth_p, earth_v, sun_p, sun_v = earth_sun_states(jd1, jd2, ephemeris=ephemeris)
    if location is None:
        return earth_p, earth_v, sun_p, sun_v
    if not isinstance(location, EarthLocation):
        msg = f"'location' must be an astropy EarthLocation or None, got {type(location).__name__}"
        raise TypeError(msg)
    jd1 = np.atleast_1d(np.asarray(jd1, dtype=float))
    jd2 = np.atleast_1d(np.asarray(jd2, dtype=float))
    if jd1.size >= _MANY_EPOCHS:
        site_p, site_v = _site_gcrs_rotating(location, jd1, jd2)
    else:
        site_p, site_v = sampled_states(_site_gcrs(location), jd1, jd2, step=_SITE_STEP_DAYS)
    return earth_p + site_p, earth_v + site_v, sun_p, sun_v
