"""The comet's position on one frame as an ADES record: RA/Dec with errors, time, site."""

import numpy as np
from astropy.time import Time

__all__ = ["comet_astrometry_record"]


def _sky_jacobian(wcs, x, y, step=0.5):
    # ∂(α cos δ, δ)/∂(x, y) in arcsec per pixel, by central differences on the WCS
    def sky(px, py):
        ra, dec = wcs.pixel_to_world_values(px, py)
        return float(ra), float(dec)
    _, dec0 = sky(x, y)
    jac = np.empty((2, 2))
    for j, (dx, dy) in enumerate(((step, 0.0), (0.0, step))):
        ra_p, dec_p = sky(x + dx, y + dy)
        ra_m, dec_m = sky(x - dx, y - dy)
        d_ra = (ra_p - ra_m + 180.0) % 360.0 - 180.0
        jac[0, j] = d_ra * np.cos(np.radians(dec0)) * 3600.0 / (2 * step)
        jac[1, j] = (dec_p - dec_m) * 3600.0 / (2 * step)
    return jac


def comet_astrometry_record(x, y, *, xy_err, wcs, wcs_rms_arcsec, time_mid, station,
                            object_id, catalogue, mode="CCD"):
    """An ADES optical record of the comet's measured centre on one frame.

    Parameters
    ----------
    x, y : float
        Measured centre (optocentre or fitted nucleus), zero-based pixels.
    xy_err : (float, float)
        1σ errors of ``x`` and ``y`` (pixels), from the centroid or the nucleus fit.
    wcs : `~astropy.wcs.WCS`
        The frame's refined WCS, tied to catalogue positions at the frame's epoch (proper
        motions applied by the refinement).
    wcs_rms_arcsec : float
        Per-axis rms of the WCS fit's star residuals (arcsec), the plate solution's error
        at one point (common practice: added in quadrature to the centroid error).
    time_mid : `~astropy.time.Time`
        Mid-exposure time.
    station : str
        Station code written to ``stn``.
    object_id : str
        Written to ``provID`` (or ``trkSub`` when it has no space: an observer's own label).
    catalogue : str
        Astrometric catalogue of the reference stars (``astCat``).
    mode : str, optional
        ADES ``mode`` (default "CCD").

    Returns
    -------
    record : dict
        ADES fields: ``provID``/``trkSub``, ``mode``, ``stn``, ``obsTime``, ``ra``, ``dec``
        (deg), ``rmsRA`` (arcsec, of α cos δ), ``rmsDec``, ``rmsCorr``, ``astCat``.

    Notes
    -----
    Σ_sky = J diag(σx², σy²) Jᵀ + σ_wcs² I with J = ∂(α cos δ, δ)/∂(x, y) from the WCS
    (first-order error propagation; e.g. Bevington & Robinson 2003, Eq. 3.13).

    Examples
    --------
    >>> from astropy.wcs import WCS
    >>> from astropy.time import Time
    >>> w = WCS(naxis=2)
    >>> w.wcs.ctype = ["RA---TAN", "DEC--TAN"]; w.wcs.crval = [150.0, 20.0]
    >>> w.wcs.crpix = [51, 51]; w.wcs.cdelt = [-1 / 3600, 1 / 3600]
    >>> rec = comet_astrometry_record(50.0, 50.0, xy_err=(0.3, 0.4), wcs=w, wcs_rms_arcsec=0.2,
    ...                               time_mid=Time("2026-02-01T03:00:00", scale="utc"),
    ...                               station="Z01", object_id="C/2026 Z1", catalogue="Gaia3")
    >>> round(rec["ra"], 6), round(rec["dec"], 6), round(rec["rmsRA"], 3), round(rec["rmsDec"], 3)
    (150.0, 20.0, 0.361, 0.447)
    """
    if not isinstance(time_mid, Time):
        msg = f"'time_mid' must be an astropy Time, got {type(time_mid).__name__}"
        raise TypeError(msg)
    sx, sy = (float(e) for e in xy_err)
    if not (sx > 0 and sy > 0 and np.isfinite(sx) and np.isfinite(sy)):
        msg = f"'xy_err' must be two positive pixel errors, got {xy_err}"
        raise ValueError(msg)
    if not (np.isfinite(x) and np.isfinite(y)):
        msg = f"the comet's centre must be finite, got ({x}, {y})"
        raise ValueError(msg)
    ra, dec = (float(v) for v in wcs.pixel_to_world_values(x, y))
    jac = _sky_jacobian(wcs, x, y)
    cov = jac @ np.diag([sx**2, sy**2]) @ jac.T + float(wcs_rms_arcsec) ** 2 * np.eye(2)
    s_ra, s_dec = np.sqrt(np.diag(cov))
    ident = "provID" if " " in object_id else "trkSub"
    return {ident: object_id, "mode": mode, "stn": station, "obsTime": time_mid.utc,
            "ra": ra % 360.0, "dec": dec, "rmsRA": float(s_ra), "rmsDec": float(s_dec),
            "rmsCorr": float(cov[0, 1] / (s_ra * s_dec)), "astCat": catalogue}
