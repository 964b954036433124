"""How far the comet and the stars move on the detector during one exposure.

Used by the photometry (the stars' apertures follow their trail on frames that followed the
comet) and by the nucleus fit (the PSF re-trailed by the comet's motion).
"""

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord

from photpipe._quantity import as_value

__all__ = ["TRACKING_MODES", "exposure_trails"]

#: How the telescope tracked: on the stars (the comet trails), on the comet (the stars trail),
#: or "none": the motion is not modelled (exposures too short for it to matter, or synthetic
#: frames rendered without it).
TRACKING_MODES = ("sidereal", "comet", "none")


def exposure_trails(wcs, ra, dec, ra_rate, dec_rate, exptime, *, tracking="sidereal"):
    """The comet's and the stars' motion (dx, dy) in pixels during an exposure.

    Parameters
    ----------
    wcs : `~astropy.wcs.WCS`
        The frame's celestial WCS.
    ra, dec : `~astropy.units.Quantity` ['angle']
        The comet's position.
    ra_rate, dec_rate : `~astropy.units.Quantity` [angle / time]
        Its sky-plane rate (the RA rate including cos δ, as `photpipe.geometry` gives it).
    exptime : `~astropy.units.Quantity` ['time']
    tracking : {"sidereal", "comet", "none"}, optional
        Sidereal: the stars are points and the comet moves by rate × exptime; comet: the
        comet is a point and the stars move by the opposite amount; none: both are points.

    Returns
    -------
    comet_trail, star_trail : tuple of float
        (dx, dy) in pixels, centred on the mid-exposure position.

    Examples
    --------
    >>> from photpipe.scenario.render import make_wcs
    >>> w = make_wcs((100, 100), SkyCoord(30 * u.deg, 0 * u.deg), 1.0 * u.arcsec)
    >>> comet, stars = exposure_trails(w, 30 * u.deg, 0 * u.deg, 36 * u.arcsec / u.h,
    ...                                0 * u.arcsec / u.h, 300 * u.s)
    >>> [round(v, 3) for v in comet], stars
    ([-3.0, 0.0], (0.0, 0.0))
    """
    if tracking not in TRACKING_MODES:
        msg = f"'tracking' must be one of {TRACKING_MODES}, got {tracking!r}"
        raise ValueError(msg)
    t = as_value(exptime, u.s, "exptime")
    dra = as_value(ra_rate, u.arcsec / u.s, "ra_rate") * t
    ddec = as_value(dec_rate, u.arcsec / u.s, "dec_rate") * t
    if not (np.isfinite(dra) and np.isfinite(ddec) and np.isfinite(t)):
        msg = f"comet rate and exposure must be finite, got {ra_rate}, {dec_rate}, {exptime}"
        raise ValueError(msg)
    centre = SkyCoord(ra, dec)
    ends = [centre.spherical_offsets_by(s * 0.5 * dra * u.arcsec, s * 0.5 * ddec * u.arcsec)
            for s in (-1.0, 1.0)]
    (x0, x1), (y0, y1) = (np.asarray(v, float) for v in wcs.celestial.world_to_pixel(
        SkyCoord([e.ra for e in ends], [e.dec for e in ends])))
    motion = (float(x1 - x0), float(y1 - y0))
    if tracking == "none":
        return (0.0, 0.0), (0.0, 0.0)
    if tracking == "comet":
        return (0.0, 0.0), (-motion[0], -motion[1])
    return motion, (0.0, 0.0)
