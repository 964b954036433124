"""Afρ of the coma alone: the fitted nucleus taken out of each aperture's light.

Afρ (A'Hearn et al. 1984) is defined for the dust coma, but an aperture sum also holds the
nucleus. For a bright, weakly active nucleus in a small aperture that share is large, and Afρ
from the total light is biased high by it. With the nucleus flux from the PSF-convolved
nucleus-plus-coma fit, each aperture's coma flux is

    F_coma = F_ap - c · F_nuc · E(ρ),

where E(ρ) is the fraction of the nucleus (PSF) light inside the aperture and c is the coma
aperture correction the photometry stage applied to the whole sum (``coma_apcorr_mag``,
c = 10^(0.4 coma_apcorr_mag); c = 1 when absent). Afρ scales with the flux, so the coma's Afρ and
A(0)fρ are the totals times (1 - s), with the nucleus share s = c F_nuc E(ρ) / F_ap.

A bare nucleus has s = 1 within the noise, so (1 - s) scatters about zero: the coma-only value is
kept with its sign (a negative value is a coma not detected, not a missing one), so averages of
it are not biased by leaving out the negative half. Its error is that of a difference: the
aperture sum's noise stays whole whatever the share (it does not shrink by (1 - s)), and the
nucleus flux's error adds to it; the two are taken as independent, which overstates the error
somewhat where the fit's pixels and the aperture's coincide (a bright bare nucleus).
"""

import numpy as np
from astropy import units as u
from astropy.table import QTable
from photutils.aperture import CircularAperture

from photpipe import schema
from photpipe._quantity import as_positive_value, as_value

__all__ = ["COMA_AFRHO_COLUMNS", "enclosed_fraction", "coma_only_afrho"]

#: Columns added to each measurement row (``afrho_coma_cm`` etc.), in order, from the schema.
COMA_AFRHO_COLUMNS = schema.column_names(schema.MEASUREMENT_COLUMNS, stage="nucleus")

_NEEDED = ("rho_arcsec", "mag", "zp_mag", "afrho_cm", "afrho_err_cm", "a0frho_cm",
           "a0frho_err_cm")


def enclosed_fraction(psf, radius):
    """Fraction of a point source's light inside circles of the given radii (pixels).

    Parameters
    ----------
    psf : `~photpipe.nucleus.PSFModel`
        The frame's PSF; its flux is normalised within its rendering square, so the fraction
        reaches 1 at the square's corner.
    radius : float or array_like
        Aperture radii in pixels (> 0).

    Returns
    -------
    fraction : ndarray
        Same shape as ``radius``.

    Notes
    -----
    The fraction is that of the pixel-integrated PSF, which is what an aperture sum over pixels
    collects; within about a FWHM it is a few per cent below the continuous profile's.

    Examples
    --------
    >>> from photpipe.nucleus import PSFModel
    >>> psf = PSFModel.from_moffat(3.0, beta=3.0)
    >>> round(float(enclosed_fraction(psf, 12.0)), 3)  # Moffat (1969), whole plane: 0.997
    0.998
    """
    radii = np.atleast_1d(np.asarray(radius, float))
    if np.any(~np.isfinite(radii)) or np.any(radii <= 0):
        msg = f"aperture radii must be positive and finite, got {radius!r}"
        raise ValueError(msg)
    h = psf.half_size
    image = psf.render((2 * h + 1, 2 * h + 1), float(h), float(h))
    out = np.ones_like(radii)
    inside = radii < h * np.sqrt(2.0)
    for i in np.flatnonzero(inside):
        aperture = CircularAperture((h, h), r=radii[i])
        out[i] = float(aperture.to_mask(method="exact").get_values(image).sum())
    out = np.minimum(out, 1.0)
    return out.reshape(np.shape(radius))


def coma_only_afrho(comet, nucleus_flux, psf, *, pixel_scale, nucleus_flux_err=None):
    """Afρ and A(0)fρ of the coma with the fitted nucleus taken out, per aperture.

    Parameters
    ----------
    comet : `~astropy.table.QTable`
        Measurement rows of one frame (``measure_comet_frame(...).comet``): at least
        ``rho_arcsec, mag, zp_mag, afrho_cm, afrho_err_cm, a0frho_cm, a0frho_err_cm``, and
        ``coma_apcorr_mag`` when the photometry applied a coma aperture correction.
    nucleus_flux : `~astropy.units.Quantity` [electron / s]
        Nucleus flux from the nucleus fit (same zero point as ``mag``).
    psf : `~photpipe.nucleus.PSFModel`
        The PSF the nucleus was fitted with.
    pixel_scale : `~astropy.units.Quantity` [arcsec / pix]
    nucleus_flux_err : `~astropy.units.Quantity` [electron / s], optional
        Its uncertainty; added to the Afρ error (taken as independent of the aperture sum's).

    Returns
    -------
    table : `~astropy.table.QTable`
        One row per input row with `COMA_AFRHO_COLUMNS`. Where the nucleus takes all the
        aperture's light or more (s >= 1) the coma values are zero or negative, kept so: the
        coma is then not detected, and the error says by how much it could still be there.

    Notes
    -----
    mag = zp - 2.5 log10(F / (electron/s)) gives F_ap; the module notes give the subtraction.
    The error is σ² = σ_Afρ² + (Afρ c E σ_nuc / F_ap)²: the aperture sum's whole error and
    the nucleus term, as independent.

    Examples
    --------
    >>> import astropy.units as u
    >>> from astropy.table import QTable
    >>> from photpipe.nucleus import PSFModel
    >>> rows = QTable({"rho_arcsec": [20.0] * u.arcsec, "mag": [15.0] * u.mag,
    ...                "zp_mag": [25.0] * u.mag, "afrho_cm": [100.0] * u.cm,
    ...                "afrho_err_cm": [2.0] * u.cm, "a0frho_cm": [300.0] * u.cm,
    ...                "a0frho_err_cm": [6.0] * u.cm})
    >>> out = coma_only_afrho(rows, 2500.0 * u.electron / u.s, PSFModel.from_moffat(2.0),
    ...                       pixel_scale=1.0 * u.arcsec / u.pix)
    >>> round(float(out["nucleus_share"][0]), 3), round(float(out["afrho_coma_cm"][0].value), 1)
    (0.25, 75.0)
    """
    missing = [c for c in _NEEDED if c not in comet.colnames]
    if missing:
        msg = f"measurement rows lack column(s) {missing} needed to take the nucleus out"
        raise KeyError(msg)
    f_nuc = as_value(nucleus_flux, u.electron / u.s, "nucleus_flux")
    f_nuc_err = (0.0 if nucleus_flux_err is None
                 else as_value(nucleus_flux_err, u.electron / u.s, "nucleus_flux_err"))
    if not np.isfinite(f_nuc) or f_nuc < 0:
        msg = f"'nucleus_flux' must be finite and >= 0, got {nucleus_flux}"
        raise ValueError(msg)
    scale = as_positive_value(pixel_scale, u.arcsec / u.pix, "pixel_scale")

    def column(name, unit):
        return np.asarray(u.Quantity(comet[name]).to_value(unit), float)

    rho_pix = column("rho_arcsec", u.arcsec) / scale
    f_ap = 10.0 ** (-0.4 * (column("mag", u.mag) - column("zp_mag", u.mag)))
    c = (10.0 ** (0.4 * column("coma_apcorr_mag", u.mag)) if "coma_apcorr_mag" in comet.colnames
         else np.ones(len(comet)))
    taken = c * f_nuc * enclosed_fraction(psf, rho_pix)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = taken / f_ap
    keep = np.where(np.isfinite(share), 1.0 - share, np.nan)
    out = QTable({"nucleus_share": share})
    for name in ("afrho", "a0frho"):
        value = column(f"{name}_cm", u.cm)
        err = column(f"{name}_err_cm", u.cm)
        with np.errstate(invalid="ignore", divide="ignore"):
            err_nuc = value * (taken / f_nuc if f_nuc > 0 else 0.0) * f_nuc_err / f_ap
        out[f"{name}_coma_cm"] = value * keep * u.cm
        out[f"{name}_coma_err_cm"] = np.where(np.isfinite(keep), np.hypot(err, err_nuc),
                                              np.nan) * u.cm
    return out
