"""What a frame keeps for the report to show: its coma profile and its nucleus-fit images.

The profile (Σ(ρ) of all azimuths and of the sunward and tailward sectors, ρ in km) goes into the
store's ``profiles`` table, a few rows per frame. The nucleus fit's data, model and residual are
cut to a small square around the nucleus and written by the campaign (never by a stage) as one
small FITS file per frame, ``<results>/<night>/nucleus_images/<frame>.fits``; the report shows
those of the best-seeing and the median-seeing frame of each night.
"""

from pathlib import Path

import numpy as np
from astropy import units as u

__all__ = ["profile_rows", "nucleus_cutouts", "write_nucleus_images", "read_nucleus_images",
           "nucleus_images_path", "PROFILE_NAMES", "CUTOUT_HALF_SIZE"]

#: Profile column of the photometry stage -> stored column (the unit at the end of the name).
PROFILE_NAMES = {"rho_km": "rho_km", "rho_arcsec": "rho_arcsec", "sb": "sb_e_s_arcsec2",
                 "sb_err": "sb_err_e_s_arcsec2", "sb_sun": "sb_sun_e_s_arcsec2",
                 "sb_sun_err": "sb_sun_err_e_s_arcsec2", "sb_tail": "sb_tail_e_s_arcsec2",
                 "sb_tail_err": "sb_tail_err_e_s_arcsec2", "n_pix": "n_pix"}

#: Half-width (pixels) of the nucleus-fit images kept: 41 x 41 pixels, float32, ~20 kB a frame.
CUTOUT_HALF_SIZE = 20


def profile_rows(profile):
    """The photometry's profile as store rows (list of dicts), or None without one."""
    if profile is None or len(profile) == 0:
        return None
    names = [n for n in PROFILE_NAMES if n in profile.colnames]
    return [{PROFILE_NAMES[n]: row[n] for n in names} for row in profile]


def nucleus_cutouts(fit, *, half_size=CUTOUT_HALF_SIZE):
    """Data, model and residual of a nucleus fit, cut to a square around the nucleus.

    Returns
    -------
    images : dict or None
        ``data, model, residual`` (float32 arrays, NaN where masked), ``x_origin, y_origin``
        (frame pixel of [0, 0]) and ``fwhm_arcsec``; None when the fit kept no images.
    """
    if fit.data is None or fit.model is None:
        return None
    ny, nx = fit.data.shape
    cx, cy = fit.x - fit.x_origin, fit.y - fit.y_origin
    if not (np.isfinite(cx) and np.isfinite(cy)):
        return None
    x0 = int(np.clip(round(cx) - half_size, 0, max(nx - 1, 0)))
    y0 = int(np.clip(round(cy) - half_size, 0, max(ny - 1, 0)))
    box = (slice(y0, min(y0 + 2 * half_size + 1, ny)), slice(x0, min(x0 + 2 * half_size + 1, nx)))
    return {"data": np.asarray(fit.data[box], np.float32),
            "model": np.asarray(fit.model[box], np.float32),
            "residual": np.asarray(fit.residual[box], np.float32),
            "x_origin": int(fit.x_origin + x0), "y_origin": int(fit.y_origin + y0),
            "fwhm_arcsec": float(fit.fwhm_arcsec)}


def nucleus_images_path(results, night, frame):
    """Where the campaign keeps one frame's nucleus-fit images."""
    return Path(results) / str(night) / "nucleus_images" / f"{frame}.fits"


def write_nucleus_images(images, path):
    """Write `nucleus_cutouts` output as a small FITS file (atomically); return the path."""
    from astropy.io import fits

    from photpipe._files import replacing

    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    primary = fits.PrimaryHDU()
    primary.header["XORIGIN"] = (images["x_origin"], "frame pixel (0-based) of [0, 0]")
    primary.header["YORIGIN"] = (images["y_origin"], "frame pixel (0-based) of [0, 0]")
    primary.header["FWHM"] = (images["fwhm_arcsec"], "PSF FWHM of the fit, arcsec")
    hdus = [primary] + [fits.ImageHDU(images[k], name=k.upper())
                        for k in ("data", "model", "residual")]
    for hdu in hdus[1:]:
        hdu.header["BUNIT"] = "electron"
    with replacing(path) as tmp:
        fits.HDUList(hdus).writeto(tmp, overwrite=True)
    return path


def read_nucleus_images(path):
    """Read `write_nucleus_images`'s file back into the same dict."""
    from astropy.io import fits

    with fits.open(path, memmap=False) as hdul:
        out = {k: np.asarray(hdul[k.upper()].data, dtype=float)
               for k in ("data", "model", "residual")}
        head = hdul[0].header
        out.update(x_origin=int(head["XORIGIN"]), y_origin=int(head["YORIGIN"]),
                   fwhm_arcsec=float(head["FWHM"]))
    return out


def profile_for_figure(rows):
    """Stored profile rows (one frame) back to the photometry's column names, with units."""
    from astropy.table import QTable

    back = {v: k for k, v in PROFILE_NAMES.items()}
    sb_unit = u.electron / (u.s * u.arcsec**2)
    out = QTable()
    for name in rows.colnames:
        if name not in back:
            continue
        col = u.Quantity(rows[name]).value if hasattr(rows[name], "unit") else rows[name]
        col = np.asarray(col, dtype=float)
        key = back[name]
        out[key] = col * (u.km if key == "rho_km" else u.arcsec if key == "rho_arcsec"
                          else sb_unit if key.startswith("sb") else 1)
    return out
