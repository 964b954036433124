"""The comet's sky position on one frame with its error, and ADES records of a campaign's frames.

The position is the photometry stage's centre of light through the frame's refined WCS. Its
error adds two parts in quadrature: the centroid's, from the pixel noise
(`~photpipe.orbit.centroid.centre_of_light_covariance`), and the refined WCS's at that point,
from the scatter of the reference stars about it.
"""

import numpy as np
from astropy import units as u
from astropy.time import Time

from .astrometry import comet_astrometry_record

__all__ = ["plate_error_arcsec", "comet_position_row", "ades_records"]


def plate_error_arcsec(rms_pix, n_stars, pixel_scale_arcsec):
    """Per-axis error (arcsec) of a shift-and-rotation plate solution at a point among its stars.

    Parameters
    ----------
    rms_pix : float
        RMS of the matched stars' residuals after the fit, both axes together (pixels), as the
        photometry stage's WCS refinement reports it.
    n_stars : int
        Stars in the fit.
    pixel_scale_arcsec : float

    Returns
    -------
    sigma : float
        NaN when fewer than 3 stars were fitted or the rms is unknown.

    Notes
    -----
    A per-axis scatter s = rms / √2 of N stars gives the fitted shift an error s / √N; the
    rotation adds s d / √(Σ d_i²) at a distance d from the stars' centre, at most about as much
    again for a point inside their spread (least-squares parameter errors, e.g. Bevington &
    Robinson 2003, Eq. 6.21-6.22). The bound s √(2 / N) is used.

    Examples
    --------
    >>> round(plate_error_arcsec(0.2, 50, 1.0), 4)  # 0.2/√2 · √(2/50) = 0.02828
    0.0283
    """
    if not (np.isfinite(rms_pix) and n_stars >= 3):
        return float("nan")
    return float(rms_pix / np.sqrt(2.0) * np.sqrt(2.0 / n_stars) * pixel_scale_arcsec)


def comet_position_row(x, y, cov_xy, *, wcs, star_rms_pix, n_stars, time_mid, station,
                       object_id, catalogue, location=None):
    """One frame's comet position, as a row of the store's ``astrometry`` table.

    Parameters
    ----------
    x, y : float
        The comet's centre (0-based pixels).
    cov_xy : ndarray, shape (2, 2)
        Its covariance from the pixel noise (pixels²).
    wcs : `~astropy.wcs.WCS`
        The frame's refined WCS.
    star_rms_pix : float
        RMS of the reference stars' residuals about the refined WCS (pixels, both axes).
    n_stars : int
        Reference stars in the WCS fit.
    time_mid : `~astropy.time.Time`
        Mid-exposure time.
    station, object_id, catalogue : str
        ADES ``stn``, the object's designation and the reference catalogue (``astCat``).
    location : `~astropy.coordinates.EarthLocation`, optional
        The site, written as WGS84 longitude, latitude and height.

    Returns
    -------
    row : dict
        ``x_pix, y_pix, x_err_pix, y_err_pix, ra_deg, dec_deg, ra_err_arcsec`` (of α cos δ),
        ``dec_err_arcsec, radec_corr, centroid_err_arcsec, plate_err_arcsec,
        star_rms_arcsec, n_ref_stars, stn, object, ast_cat, lon_deg, lat_deg, height_m,
        mjd_utc_mid``.

    Raises
    ------
    ValueError
        When the centre or its error is not finite, or the plate error cannot be formed.
    """
    from astropy.wcs.utils import proj_plane_pixel_scales

    scale = float(np.mean(proj_plane_pixel_scales(wcs.celestial)) * 3600.0)
    plate = plate_error_arcsec(star_rms_pix, n_stars, scale)
    if not np.isfinite(plate):
        msg = (f"no astrometric error: the WCS fit has {n_stars} stars and rms "
               f"{star_rms_pix} pix")
        raise ValueError(msg)
    sx, sy = np.sqrt(np.diag(np.asarray(cov_xy, dtype=float)))
    rec = comet_astrometry_record(x, y, xy_err=(sx, sy), wcs=wcs, wcs_rms_arcsec=plate,
                                  time_mid=time_mid, station=station, object_id=object_id,
                                  catalogue=catalogue)
    row = {"mjd_utc_mid": float(time_mid.utc.mjd), "x_pix": float(x), "y_pix": float(y),
           "x_err_pix": float(sx), "y_err_pix": float(sy), "ra_deg": rec["ra"],
           "dec_deg": rec["dec"], "ra_err_arcsec": rec["rmsRA"],
           "dec_err_arcsec": rec["rmsDec"], "radec_corr": rec["rmsCorr"],
           "centroid_err_arcsec": float(np.hypot(sx, sy) / np.sqrt(2.0) * scale),
           "plate_err_arcsec": plate,
           "star_rms_arcsec": float(star_rms_pix / np.sqrt(2.0) * scale),
           "n_ref_stars": int(n_stars), "stn": station, "object": object_id,
           "ast_cat": catalogue}
    if location is not None:
        row.update(lon_deg=float(location.lon.to_value(u.deg)),
                   lat_deg=float(location.lat.to_value(u.deg)),
                   height_m=float(location.height.to_value(u.m)))
    return row


def ades_records(table):
    """ADES records (dicts of `~photpipe.orbit.ADES_FIELDS`) from ``astrometry`` table rows.

    Parameters
    ----------
    table : `~astropy.table.Table`
        The store's ``astrometry`` table (exported, with units or plain numbers).

    Returns
    -------
    records : list of dict
        One per row with a position and its errors; a site with a longitude and latitude is
        written as ``sys`` WGS84 with ``pos1``-``pos3`` (the ADES description's form for an
        observer's own coordinates), so the file needs no station list.
    """
    def plain(row, name):
        if name not in row.colnames:
            return np.nan
        value = row[name]
        value = getattr(value, "value", value)
        return np.nan if np.ma.is_masked(value) else float(value)

    records = []
    for row in table:
        values = {k: plain(row, k) for k in ("mjd_utc_mid", "ra_deg", "dec_deg",
                                              "ra_err_arcsec", "dec_err_arcsec", "radec_corr",
                                              "lon_deg", "lat_deg", "height_m")}
        if not all(np.isfinite(values[k]) for k in ("mjd_utc_mid", "ra_deg", "dec_deg",
                                                     "ra_err_arcsec", "dec_err_arcsec")):
            continue
        ident = str(row["object"])
        rec = {"provID" if " " in ident else "trkSub": ident, "mode": "CCD",
               "stn": str(row["stn"]),
               "obsTime": Time(values["mjd_utc_mid"], format="mjd", scale="utc"),
               "ra": values["ra_deg"], "dec": values["dec_deg"],
               "rmsRA": values["ra_err_arcsec"], "rmsDec": values["dec_err_arcsec"],
               "rmsCorr": values["radec_corr"] if np.isfinite(values["radec_corr"]) else 0.0,
               "astCat": str(row["ast_cat"])}
        if np.isfinite(values["lon_deg"]) and np.isfinite(values["lat_deg"]):
            rec.update(sys="WGS84", pos1=values["lon_deg"] % 360.0, pos2=values["lat_deg"],
                       pos3=values["height_m"] if np.isfinite(values["height_m"]) else 0.0)
        records.append(rec)
    return records
