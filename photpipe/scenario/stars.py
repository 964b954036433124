"""An invented field of reference stars for a synthetic scenario."""

import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe._quantity import as_positive_value

__all__ = ["make_star_field"]


def make_star_field(center, radius, *, n_stars=300, mag_range=(11.0, 19.0), rng=None):
    """Draw an invented star field around a sky position.

    Stars are uniform on the sphere inside the cone, with magnitudes drawn from a rising
    number-magnitude law (log N ∝ 0.3 m, roughly the slope of field stars at these magnitudes,
    common practice) and colours B-V from 0.3 to 1.3.

    Parameters
    ----------
    center : `~astropy.coordinates.SkyCoord`
        Centre of the field.
    radius : `~astropy.units.Quantity` ['angle']
        Radius of the cone.
    n_stars : int, optional
        Number of stars.
    mag_range : tuple of float, optional
        Faintest and brightest R magnitudes (Vega).
    rng : `numpy.random.Generator`, optional
        Random generator.

    Returns
    -------
    stars : `~astropy.table.QTable`
        Columns ``id, ra, dec`` (deg) and ``B, V, R`` (mag, Vega) and ``B-V`` (mag).

    Examples
    --------
    >>> from astropy.coordinates import SkyCoord
    >>> import astropy.units as u, numpy as np
    >>> t = make_star_field(SkyCoord(10 * u.deg, 20 * u.deg), 0.2 * u.deg, n_stars=5,
    ...                     rng=np.random.default_rng(1))
    >>> len(t), t.colnames[:3]
    (5, ['id', 'ra', 'dec'])
    """
    rng = np.random.default_rng(rng)
    r_max = as_positive_value(radius, u.rad, "radius")
    if n_stars < 0:
        msg = f"'n_stars' must be >= 0, got {n_stars}"
        raise ValueError(msg)
    # uniform in solid angle within the cone
    cos_r = rng.uniform(np.cos(r_max), 1.0, n_stars)
    sep = np.arccos(cos_r) * u.rad
    pa = rng.uniform(0, 2 * np.pi, n_stars) * u.rad
    pos = center.directional_offset_by(pa, sep)
    lo, hi = min(mag_range), max(mag_range)
    # inverse-CDF draw of N(<m) ∝ 10^(0.3 m)
    a = 0.3 * np.log(10)
    uu = rng.uniform(0, 1, n_stars)
    r_mag = np.log(np.exp(a * lo) + uu * (np.exp(a * hi) - np.exp(a * lo))) / a
    bv = rng.uniform(0.3, 1.3, n_stars)
    # V-R of ordinary dwarfs runs at roughly 0.55 (B-V) (common practice, from memory)
    v_mag = r_mag + 0.55 * bv
    b_mag = v_mag + bv
    table = QTable()
    table["id"] = np.arange(1, n_stars + 1)
    table["ra"] = pos.ra.to(u.deg)
    table["dec"] = pos.dec.to(u.deg)
    table["B"] = b_mag * u.mag
    table["V"] = v_mag * u.mag
    table["R"] = r_mag * u.mag
    table["B-V"] = bv * u.mag
    return table
