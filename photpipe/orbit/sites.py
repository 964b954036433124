"""Observing sites of astrometric records: from the record itself or from a table of sites."""

import numpy as np
from astropy import units as u
from astropy.coordinates import EarthLocation

__all__ = ["GEOCENTRE_CODES", "site_vectors"]

#: Station codes that mean the geocentre ("500" is the Minor Planet Center's code for it,
#: common practice).
GEOCENTRE_CODES = ("500",)


def _location_xyz(loc):
    return np.array([loc.x.to_value(u.km), loc.y.to_value(u.km), loc.z.to_value(u.km)])


def _row_site(row):
    if str(row["sys"]).upper() != "WGS84":
        return None
    lon, lat, h = float(row["pos1"]), float(row["pos2"]), float(row["pos3"])
    if not (np.isfinite(lon) and np.isfinite(lat) and -90.0 <= lat <= 90.0):
        msg = f"sys WGS84 needs pos1 (longitude), pos2 (latitude), got {lon}, {lat}"
        raise ValueError(msg)
    h = 0.0 if not np.isfinite(h) else h
    return _location_xyz(EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, h * u.m))


def site_vectors(table, sites=None):
    """Geocentric (ITRS) site vectors of the observations, km, and the rows without a site.

    Parameters
    ----------
    table : `~astropy.table.QTable`
        Observations (`photpipe.orbit.ades.OBSERVATION_COLUMNS`).
    sites : dict, optional
        Station code -> `~astropy.coordinates.EarthLocation` (from the configuration).

    Returns
    -------
    xyz : ndarray, shape (3, n)
        Zero for the geocentre, NaN where no site is known.
    problems : list of str
        ``"<source>: unknown site <stn>"`` for each such row.

    Notes
    -----
    A record's own ``sys = WGS84`` with ``pos1`` (east longitude, deg), ``pos2`` (geodetic
    latitude, deg) and ``pos3`` (height, m) wins over the table (ADES description, "roving"
    observer positions); then the table; the geocentre codes give zero.

    Examples
    --------
    >>> from astropy.table import QTable
    >>> t = QTable({"stn": ["500", "Q99"], "sys": ["", ""], "pos1": [0.0, 0.0],
    ...             "pos2": [0.0, 0.0], "pos3": [0.0, 0.0], "source": ["a:2", "a:3"]})
    >>> xyz, problems = site_vectors(t, {})
    >>> xyz[:, 0].tolist(), problems
    ([0.0, 0.0, 0.0], ['a:3: unknown site Q99'])
    """
    sites = sites or {}
    table_xyz = {code: _location_xyz(loc) for code, loc in sites.items()}
    xyz = np.full((3, len(table)), np.nan)
    problems = []
    for i, row in enumerate(table):
        stn = str(row["stn"])
        try:
            own = _row_site(row)
        except ValueError as exc:
            problems.append(f"{row['source']}: {exc}")
            continue
        if own is not None:
            xyz[:, i] = own
        elif stn in table_xyz:
            xyz[:, i] = table_xyz[stn]
        elif stn in GEOCENTRE_CODES:
            xyz[:, i] = 0.0
        else:
            problems.append(f"{row['source']}: unknown site {stn}")
    return xyz, problems
