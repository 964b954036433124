"""Where a frame was taken, from its header, when the header says so.

Read in this order: the FITS standard's geocentric ``OBSGEO-X/Y/Z`` (metres), its geodetic
``OBSGEO-B/L/H`` (degrees, degrees east, metres; FITS Standard 4.0, sect. 8.4.1), then the
``SITELAT/SITELONG/SITEELEV`` trio many acquisition programs write (also ``LAT-OBS`` /
``LONG-OBS`` / ``ALT-OBS``). Longitudes are east-positive; angles may be sexagesimal strings.
A frame whose header names no site uses its night's.
"""

from astropy import units as u
from astropy.coordinates import Angle, EarthLocation

from ._headers import first_present, keyword_errors, number
from .errors import FrameError

__all__ = ["site_from_header", "SITE_KEYWORDS"]

#: (latitude, longitude, height) keyword triples tried after OBSGEO-X/Y/Z.
SITE_KEYWORDS = (("OBSGEO-B", "OBSGEO-L", "OBSGEO-H"), ("SITELAT", "SITELONG", "SITEELEV"),
                 ("LAT-OBS", "LONG-OBS", "ALT-OBS"))


def _angle(path, key, value, limit):
    if isinstance(value, str):
        text = value.strip()
        with keyword_errors(path, key, value):
            try:
                deg = float(text)
            except ValueError:
                deg = Angle(text, u.deg).deg
        return number(path, key, deg, low=-limit, high=limit)
    return number(path, key, value, low=-limit, high=limit)


def site_from_header(path, header):
    """The observing site a header states, or None.

    Parameters
    ----------
    path : str
        The frame (named in errors).
    header : `~astropy.io.fits.Header` or dict

    Returns
    -------
    `~astropy.coordinates.EarthLocation` or None

    Raises
    ------
    FrameError
        When site keywords are present but unusable (latitude beyond ±90°, text, ...).

    Examples
    --------
    >>> loc = site_from_header("a.fits", {"SITELAT": "-30 10 12", "SITELONG": "-70 48 0",
    ...                                   "SITEELEV": 2200})
    >>> round(float(loc.lat.deg), 4), round(float(loc.lon.deg), 4), round(float(loc.height.value))
    (-30.17, -70.8, 2200)
    >>> site_from_header("a.fits", {}) is None
    True
    """
    keys = ("OBSGEO-X", "OBSGEO-Y", "OBSGEO-Z")
    if all(first_present(header, (k,))[0] for k in keys):
        xyz = [number(path, k, header[k], low=-7e6, high=7e6) for k in keys]
        with keyword_errors(path, "OBSGEO-X/Y/Z", tuple(xyz)):
            loc = EarthLocation.from_geocentric(*xyz, unit=u.m)
            radius = float((loc.x ** 2 + loc.y ** 2 + loc.z ** 2).to_value(u.m ** 2)) ** 0.5
        if not 6.3e6 <= radius <= 6.4e6:
            raise FrameError(path, f"OBSGEO-X/Y/Z = {tuple(xyz)} is {radius / 1e3:.0f} km from "
                                   f"the Earth's centre, not on its surface")
        return loc
    for klat, klon, kh in SITE_KEYWORDS:
        klat_found, lat = first_present(header, (klat,))
        klon_found, lon = first_present(header, (klon,))
        if klat_found is None or klon_found is None:
            continue
        lat_deg = _angle(path, klat, lat, 90.0)
        lon_deg = _angle(path, klon, lon, 360.0)
        _, h = first_present(header, (kh,))
        height = 0.0 if h is None else number(path, kh, h, low=-500.0, high=9000.0)
        with keyword_errors(path, f"{klat}/{klon}", (lat, lon)):
            return EarthLocation.from_geodetic(lon_deg * u.deg, lat_deg * u.deg, height * u.m)
    return None
