"""The photometry of one calibrated frame: stars, zero point, comet apertures, profile, Afρ."""

import time
import warnings

import numpy as np
from astropy import units as u
from astropy.table import QTable
from astropy.wcs.utils import proj_plane_pixel_scales
from scipy.spatial import cKDTree

from photpipe._quantity import as_positive_value, as_value
from photpipe.frames.types import CalibratedFrame, Quality

from ._inputs import angle_or_pixels, geometry_values
from .afrho import afrho as afrho_of
from .afrho import afrho_uncertainty
from .airmass import frame_airmass, header_airmass
from .astrometry import apply_to_wcs, match_stars
from .coma_apcorr import coma_aperture_correction, fit_moffat_growth, moffat_from_measured_fwhm
from .coma_background import azimuthal_median_model
from .cometphot import comet_aperture_fluxes, fill_from_rings
from .detection import detect_sources, measure_fwhm, sky_statistics
from .dust_phase import PHASE_FLAG, dust_phase, phase_beyond_checked
from .errors import PhotometryError, PhotometryWarning
from .locate import refine_comet_centre
from .profile import annulus_means, profile_slope, sector_selection
from .result import MEASUREMENT_COLUMNS, FramePhotometry
from .sky import estimate_sky
from .solar import solar_magnitude
from .starphot import aperture_correction, aperture_correction_error, measure_star_fluxes
from .zeropoint import fit_zero_point

__all__ = ["SOLAR_COLOURS", "measure_comet_frame"]

#: Colours of the Sun used for the comet when a colour term is fitted and no comet colour is
#: given (dust reflects sunlight nearly neutrally). B-V = 0.65 and V-R = 0.36 (Vega; Ramírez et
#: al. 2012, ApJ 752, 5, and Holmberg et al. 2006, MNRAS 367, 449; from memory).
SOLAR_COLOURS = {"B-V": 0.65, "V-R": 0.36}

_ARCSEC_PER_RAD = 180.0 / np.pi * 3600.0
#: Moffat β of the fallback PSF: a seeing-limited wing between the β ≈ 2.5 and 4.765 limits
#: discussed by Trujillo et al. (2001, MNRAS 328, 977; from memory); the scenario renders β = 3.
_FALLBACK_BETA = 3.0
_MAG_FACTOR = 2.5 / np.log(10.0)

#: flag -> sentence for the messages list.
_FLAG_TEXT = {
    "few_stars": "fewer reference stars than 'min_stars' in the zero-point fit",
    "colour_term_dropped": "too few stars to fit a colour term; constant zero point used",
    "wcs_refined_large": "header WCS was off by more than the refinement limit",
    "edge": "an aperture or the sky annulus runs off the frame",
    "saturated": "saturated comet pixels inside an aperture",
    "star_in_aperture": "a field star inside an aperture was masked and filled from the coma",
    "nan_pixels": "non-finite or bad pixels inside an aperture were filled from the coma",
    "centroid_at_limit": "comet centroid reached 'max_centroid_shift'; position is bounded",
    "centroid_failed": "no comet light found for a centroid; predicted position used",
    "nonpositive_flux": "flux in an aperture is not positive; magnitude undefined",
    "profile_short": "too few profile annuli in the slope range",
    "no_sun_pa": "no pa_sun in the geometry row; sector profiles not made",
    "no_solar_magnitude": "no solar magnitude for the band; Afρ not computed",
    "psf_fallback": ("too few field stars, or a curve of growth that does not fix both Moffat "
                     "parameters; the coma aperture correction uses a Moffat PSF with beta = 3 "
                     "and the measured FWHM"),
    PHASE_FLAG: ("phase angle outside the range where the dust phase function is checked; "
                 "A(0)fρ uses its value at the edge of that range"),
    "low_elongation": ("small solar elongation: pointing optics near the Sun can blind and damage "
                       "them; follow local rules and experienced practice"),
}


def _flag(flags, messages, name, detail=""):
    if name not in flags:
        flags.append(name)
        extra = f" ({detail})" if detail else ""
        messages.append(f"{name}: {_FLAG_TEXT.get(name, name)}{extra}")


def _fail(frame_name, reason):
    msg = f"{frame_name}: {reason}"
    raise PhotometryError(msg)


def _reference_arrays(reference_stars, band, colour, need_colour, name):
    for col in ("ra", "dec", band) + ((colour,) if need_colour else ()):
        if col not in reference_stars.colnames:
            _fail(name, f"reference stars have no column {col!r} "
                        f"(columns: {', '.join(reference_stars.colnames)})")

    def values(col, unit):
        c = reference_stars[col]
        if isinstance(c, u.Quantity):
            return np.asarray(c.to_value(unit), dtype=float)
        return np.asarray(c.filled(np.nan) if hasattr(c, "filled") else c, dtype=float)

    ra, dec = values("ra", u.deg), values("dec", u.deg)
    mag = values(band, u.mag)
    err_name = next((c for c in (f"{band}_err", f"e_{band}", f"{band}err")
                     if c in reference_stars.colnames), None)
    mag_err = values(err_name, u.mag) if err_name else np.zeros(len(ra))
    col = values(colour, u.mag) if colour in reference_stars.colnames else np.full(len(ra), np.nan)
    ids = (np.asarray(reference_stars["id"]).astype(str) if "id" in reference_stars.colnames
           else np.array([f"ref{i}" for i in range(len(ra))]))
    return ids, ra, dec, mag, mag_err, col


def _star_mask_radius(flux, fwhm, sigma_pix):
    # radius where a Moffat (β = 3) wing of total flux F falls to 0.3 σ of the sky per pixel:
    # I(r) ≈ F (β - 1) / (π α²) (r/α)^(-2β) (Moffat 1969, A&A 3, 455), clipped to 1.5-15 FWHM
    alpha = fwhm / 1.02
    with np.errstate(invalid="ignore", divide="ignore"):
        r = alpha * (np.clip(flux, 0, None) * 2.0 / (np.pi * alpha**2 * 0.3 * sigma_pix)) ** (1 / 6)
    return np.clip(np.nan_to_num(r, nan=1.5 * fwhm), 1.5 * fwhm, 15.0 * fwhm)


def _paint_discs(mask, x, y, radii, x0=0, y0=0):
    ny, nx = mask.shape
    for xi, yi, ri in zip(x, y, radii, strict=True):
        xi, yi = xi - x0, yi - y0
        lo_x, hi_x = max(int(xi - ri), 0), min(int(xi + ri) + 2, nx)
        lo_y, hi_y = max(int(yi - ri), 0), min(int(yi + ri) + 2, ny)
        if hi_x <= lo_x or hi_y <= lo_y:
            continue
        yy, xx = np.ogrid[lo_y:hi_y, lo_x:hi_x]
        mask[lo_y:hi_y, lo_x:hi_x] |= (xx - xi) ** 2 + (yy - yi) ** 2 <= ri * ri


def _sky_axes(wcs, x, y):
    """Pixel displacement per arcsec toward north and toward east at (x, y)."""
    c = wcs.pixel_to_world(x, y)
    n = c.directional_offset_by(0 * u.deg, 1 * u.arcsec)
    e = c.directional_offset_by(90 * u.deg, 1 * u.arcsec)
    xn, yn = wcs.world_to_pixel(n)
    xe, ye = wcs.world_to_pixel(e)
    return np.array([[float(xn) - x, float(xe) - x], [float(yn) - y, float(ye) - y]])


def measure_comet_frame(frame, reference_stars, geometry_row, *, band="R", colour="B-V",
                        fit_colour_term=False, comet_colour=None, mag_system="Vega",
                        apertures_km=(5000, 10000, 20000) * u.km,
                        apertures_arcsec=(5, 10) * u.arcsec, annulus=None,
                        sky_method="coma-fit", dust_phase_function="schleicher-marcus",
                        phase_function_table=None, phase_coefficient=None,
                        profile_slope_range_km=(2000, 20000) * u.km, profile_bins=24,
                        sector_half_width=45 * u.deg, min_stars=5, centroid_box=None,
                        max_centroid_shift=5 * u.arcsec, max_wcs_offset=30 * u.arcsec,
                        wcs_shift_limit=3 * u.pix, detect_threshold=5.0, detect_binning=2,
                        star_aperture_fwhm=1.5, max_zp_stars=150, min_elongation=45 * u.deg,
                        coma_correction=True, site=None, airmass_formula="kasten-young",
                        solar_band=None):
    """Measure the comet in one calibrated frame against the field stars.

    Parameters
    ----------
    frame : `~photpipe.frames.CalibratedFrame`
        Calibrated frame with a celestial WCS (data in electrons over the exposure).
    reference_stars : `~astropy.table.QTable`
        Reference stars around the frame: ``ra``, ``dec`` (deg), the ``band`` magnitude column
        (optional ``<band>_err``), the ``colour`` column, optional ``id``.
    geometry_row : `~astropy.table.Row` or dict
        ``r_h`` (AU), ``delta`` (AU), ``phase`` (deg), ``ra``, ``dec`` (deg, predicted comet
        position); optional ``elong``, ``pa_sun``, ``pa_neg_velocity`` (deg). Bare numbers are read
        in those units.
    band : str, optional
        Catalogue band the frame is calibrated to (also selects the solar magnitude).
    solar_band : str, optional
        Band of the solar magnitude, when it differs from ``band`` (``[filters.NAME]``).
    colour : str, optional
        Catalogue colour column for the colour term and the star table.
    fit_colour_term : bool, optional
        Fit a colour term in the zero point.
    comet_colour : float, optional
        The comet's colour in ``colour`` (mag) for the colour term; default the Sun's
        (``SOLAR_COLOURS``).
    mag_system : {"Vega", "AB"}, optional
        System of the catalogue magnitudes (for the solar magnitude).
    apertures_km : `~astropy.units.Quantity` ['length'], optional
        Aperture radii at the comet.
    apertures_arcsec : `~astropy.units.Quantity` ['angle'], optional
        Aperture radii on the sky.
    annulus : tuple of `~astropy.units.Quantity`, optional
        (inner, outer) sky-annulus radii in km, arcsec or pix; default 4 and 8 times the largest
        aperture.
    sky_method : {"coma-fit", "median"}, optional
        Sky estimator in the annulus (see :mod:`photpipe.photometry.sky`).
    dust_phase_function : {"schleicher-marcus", "linear", "table"}, optional
        Phase function for A(0°)fρ.
    phase_function_table : tuple of array-like, optional
        ``(phase_deg, value)`` replacing the named function.
    phase_coefficient : `~astropy.units.Quantity` [mag / deg], optional
        Coefficient of the ``"linear"`` phase law.
    profile_slope_range_km : `~astropy.units.Quantity` ['length'], optional
        (min, max) ρ of the log-log slope fit.
    profile_bins : int, optional
        Number of log-spaced profile annuli.
    sector_half_width : `~astropy.units.Quantity` ['angle'], optional
        Half opening of the sunward and tailward sectors.
    min_stars : int, optional
        Fewer stars in the zero point than this flags the frame ``few_stars``.
    centroid_box : `~astropy.units.Quantity`, optional
        Comet centroid box (arcsec or pix); default 4 FWHM.
    max_centroid_shift : `~astropy.units.Quantity`, optional
        Largest centroid move from the predicted position (arcsec or pix).
    max_wcs_offset : `~astropy.units.Quantity`, optional
        Largest header-WCS error searched when matching stars (arcsec or pix).
    wcs_shift_limit : `~astropy.units.Quantity`, optional
        WCS corrections larger than this (at the frame corners) flag ``wcs_refined_large``.
    detect_threshold : float, optional
        Detection threshold, signal-to-noise of the binned image.
    detect_binning : int, optional
        Binning factor for detection.
    star_aperture_fwhm : float, optional
        Star photometry radius in units of the FWHM (corrected to total by the curve of growth).
    max_zp_stars : int, optional
        Measure at most this many matched stars (brightest catalogue magnitudes first, which
        includes saturated ones that are then rejected).
    min_elongation : `~astropy.units.Quantity` ['angle'], optional
        Below this solar elongation the rows carry ``low_elongation`` and a caution.
    coma_correction : bool, optional
        Correct the comet's aperture sums for the coma light the PSF spreads out of them
        (column ``coma_apcorr_mag``; see :mod:`photpipe.photometry.coma_apcorr`).
    site : `~astropy.coordinates.EarthLocation`, optional
        The observing site; used to compute the airmass when the header has no AIRMASS.
    airmass_formula : str, optional
        Key of `~photpipe.photometry.airmass.AIRMASS_FORMULAS` for a computed airmass.

    Returns
    -------
    result : FramePhotometry

    Raises
    ------
    PhotometryError
        If no row can be made: no WCS, comet off the frame, no reference star matched or usable,
        unusable geometry (the message names the frame).
    TypeError
        If ``frame`` is not a CalibratedFrame.

    Warns
    -----
    PhotometryWarning
        Once per frame when flags are raised (few stars, edge, saturated, star in aperture, bad
        pixels, large WCS correction, ...).

    Notes
    -----
    Magnitudes follow mag = zp - 2.5 log10(F / (electron/s)) (+ colour term); Afρ after A'Hearn et
    al. (1984, AJ 89, 579) with the solar magnitude of Willmer (2018, ApJS 236, 47); A(0°)fρ =
    Afρ / Φ(α) with the chosen dust phase function. The comet flux error is the CCD equation with
    the variance plane plus the sky error; the magnitude error adds the zero-point error in
    quadrature. The comet's aperture sums are multiplied by the aperture correction of a 1/ρ coma
    seen through the PSF fitted to the stars' curve of growth (`coma_aperture_correction`), so
    that Afρ does not fall in small apertures; when that fit is missing or implausible, a Moffat
    β = 3 of the measured FWHM stands in (flag ``psf_fallback``). The field stars are measured
    after the median in rings about the comet is taken out (`azimuthal_median_model`), so that
    on a small frame their annuli do not miss the coma under them; the zero point's error holds
    the aperture correction's. Airmass is the header's AIRMASS when present;
    otherwise, given ``site``, it is computed from the mid-exposure time and the comet's position
    (`frame_airmass`) and the rows carry ``airmass_computed``; otherwise NaN.

    Examples
    --------
    >>> measure_comet_frame(None, None, {})
    Traceback (most recent call last):
    ...
    TypeError: 'frame' must be a CalibratedFrame, got NoneType
    """
    clock = [("start", time.perf_counter())]

    def lap(label):
        clock.append((label, time.perf_counter()))

    if not isinstance(frame, CalibratedFrame):
        msg = f"'frame' must be a CalibratedFrame, got {type(frame).__name__}"
        raise TypeError(msg)
    name = frame.name
    if frame.wcs is None or not frame.wcs.has_celestial:
        _fail(name, "frame has no celestial WCS")
    if not hasattr(reference_stars, "colnames"):
        msg = f"'reference_stars' must be a Table, got {type(reference_stars).__name__}"
        raise TypeError(msg)
    geo = geometry_values(geometry_row, name)
    exptime = as_positive_value(frame.info.exptime, u.s, "exptime")
    km_radii = np.atleast_1d(as_positive_value(apertures_km, u.km, "apertures_km"))
    arcsec_radii = np.atleast_1d(as_positive_value(apertures_arcsec, u.arcsec,
                                                   "apertures_arcsec")) \
        if apertures_arcsec is not None and np.size(apertures_arcsec) else np.zeros(0)
    slope_range = as_positive_value(profile_slope_range_km, u.km, "profile_slope_range_km")
    half_width = as_value(sector_half_width, u.deg, "sector_half_width")
    flags, messages = [], []
    details = {}
    ids, ref_ra, ref_dec, ref_mag, ref_mag_err, ref_col = _reference_arrays(
        reference_stars, band, colour, fit_colour_term, name)

    wcs0 = frame.wcs.celestial
    scale = float(np.mean(proj_plane_pixel_scales(wcs0)) * 3600.0)  # arcsec / pixel
    delta_km = geo["delta"] * u.au.to(u.km)

    def pix(q, label):
        return angle_or_pixels(q, label, scale_arcsec=scale, delta_km=delta_km)

    # --- sky statistics, detection, FWHM -------------------------------------------------
    data = np.asarray(frame.data)
    variance = np.asarray(frame.variance)
    if not (np.issubdtype(data.dtype, np.floating) and np.issubdtype(variance.dtype, np.floating)):
        data, variance = data.astype(np.float32), variance.astype(np.float32)
    good = frame.good & np.isfinite(variance)
    bad = ~good
    ny, nx = data.shape
    try:
        sky0, sigma0 = sky_statistics(data, good)
    except ValueError as exc:
        _fail(name, str(exc))
    sources = detect_sources(data, variance, good, sky=sky0, threshold=detect_threshold,
                             binning=detect_binning)
    sx, sy = np.asarray(sources["x"]), np.asarray(sources["y"])
    satmask = (frame.quality & np.uint16(Quality.SATURATED)) != 0
    near_sat = np.zeros(len(sx), bool)
    if satmask.any() and len(sx):
        ix = np.clip(np.round(sx).astype(int), 0, nx - 1)
        iy = np.clip(np.round(sy).astype(int), 0, ny - 1)
        near_sat = satmask[iy, ix]
    lap("detection")
    fwhm = measure_fwhm(data, sx[~near_sat], sy[~near_sat], sky=sky0)
    if not np.isfinite(fwhm):
        _fail(name, "no star could be fitted to measure the FWHM")
    details["fwhm_pix"] = fwhm
    details["sky_level"], details["sky_sigma"] = sky0, sigma0

    lap("fwhm")
    # --- match reference stars and refine the WCS ---------------------------------------
    inside_ref = np.isfinite(ref_ra) & np.isfinite(ref_dec) & np.isfinite(ref_mag)
    rx, ry = wcs0.world_to_pixel_values(ref_ra, ref_dec)
    rx, ry = np.asarray(rx, float), np.asarray(ry, float)
    max_off = pix(max_wcs_offset, "max_wcs_offset")
    inside_ref &= (rx > -max_off) & (rx < nx + max_off) & (ry > -max_off) & (ry < ny + max_off)
    ref_idx = np.flatnonzero(inside_ref)
    ref_idx = ref_idx[np.argsort(ref_mag[ref_idx])][:600]
    n_det = min(len(sx), max(3 * len(ref_idx), 200))
    det_xy = np.column_stack([sx, sy])[:n_det]
    i_det, i_ref, transform = match_stars(
        det_xy, np.column_stack([rx[ref_idx], ry[ref_idx]]), center=((nx - 1) / 2, (ny - 1) / 2),
        max_offset=max_off, tolerance=max(1.5, 0.5 * fwhm))
    if len(i_det) == 0:
        _fail(name, f"no reference star matched among {len(ref_idx)} projected and "
                    f"{len(sx)} detected (WCS missing or wrong by more than {max_off:.0f} pix?)")
    wcs = apply_to_wcs(wcs0, transform)
    shift = transform.max_displacement(nx, ny)
    details["wcs_correction"] = transform.to_dict()
    if shift > pix(wcs_shift_limit, "wcs_shift_limit"):
        _flag(flags, messages, "wcs_refined_large", f"{shift:.1f} pix")
    matched_ref = ref_idx[i_ref]

    lap("matching")
    # --- comet position ------------------------------------------------------------------
    x_pred, y_pred = (float(v) for v in wcs.world_to_pixel_values(geo["ra"], geo["dec"]))
    if not (np.isfinite(x_pred) and np.isfinite(y_pred)
            and -0.5 <= x_pred <= nx - 0.5 and -0.5 <= y_pred <= ny - 0.5):
        _fail(name, f"comet predicted at pixel ({x_pred:.1f}, {y_pred:.1f}), outside the "
                    f"{nx} x {ny} frame")
    r_km = np.degrees(km_radii / delta_km) * 3600.0 / scale
    r_as = arcsec_radii / scale
    radii = np.concatenate([r_km, r_as])
    r_max = float(radii.max())
    if annulus is None:
        ann_in, ann_out = 4.0 * r_max, 8.0 * r_max
    else:
        ann_in, ann_out = pix(annulus[0], "annulus[0]"), pix(annulus[1], "annulus[1]")
        if not 0 < ann_in < ann_out:
            msg = f"'annulus' must be (inner, outer) with 0 < inner < outer, got {annulus}"
            raise ValueError(msg)
    if ann_in < r_max:
        msg = f"sky annulus inner radius {ann_in:.1f} pix is inside the largest aperture"
        raise ValueError(msg)

    # --- field stars: photometry, aperture correction, zero point ------------------------
    n_matched_all = len(i_det)
    # the brightest matched stars are plenty for the zero point; cap the photometry cost
    keep_m = np.argsort(ref_mag[matched_ref], kind="stable")[:max_zp_stars]
    i_det, matched_ref = i_det[keep_m], matched_ref[keep_m]
    det_m = det_xy[i_det]
    tree_xy = np.column_stack([sx, sy])
    # the stars are measured with the comet's symmetric light taken out: on a small frame their
    # local annuli would otherwise miss the coma under them (see coma_background)
    star_data = data - azimuthal_median_model(data, good, x_pred, y_pred)
    # the FWHM again, from catalogue stars clear of the comet: the first estimate takes the
    # brightest detections, and on a small frame many of those are coma structure or stars on it
    clear = (np.hypot(det_m[:, 0] - x_pred, det_m[:, 1] - y_pred) > ann_in) & ~near_sat[i_det]
    if np.count_nonzero(clear) >= 3:
        refined = measure_fwhm(star_data, det_m[clear, 0], det_m[clear, 1], sky=0.0)
        if np.isfinite(refined):
            details["fwhm_detections_pix"] = fwhm
            fwhm = details["fwhm_pix"] = refined
    star_radii = np.array([1.0, star_aperture_fwhm, 2.0, 3.0, 4.0]) * fwhm
    star_radii = np.unique(star_radii)
    k_phot = int(np.flatnonzero(np.isclose(star_radii, star_aperture_fwhm * fwhm))[0])
    k_big = len(star_radii) - 1
    phot = measure_star_fluxes(star_data, variance, bad, det_m[:, 0], det_m[:, 1],
                               radii=star_radii, annulus=(5.0 * fwhm, 8.0 * fwhm))
    # isolation: no other detection inside the large aperture plus a FWHM
    counts = np.array([len(v) for v in cKDTree(tree_xy).query_ball_point(
        det_m, r=star_radii[-1] + fwhm)]) if len(det_m) else np.zeros(0, int)
    edge_m = ((det_m[:, 0] < 8 * fwhm) | (det_m[:, 0] > nx - 1 - 8 * fwhm)
              | (det_m[:, 1] < 8 * fwhm) | (det_m[:, 1] > ny - 1 - 8 * fwhm))
    far_from_comet = np.hypot(det_m[:, 0] - x_pred, det_m[:, 1] - y_pred) > ann_in
    f_small = np.asarray(phot[f"flux_{k_phot}"], float)
    f_small_err = np.asarray(phot[f"flux_err_{k_phot}"], float)
    f_big = np.asarray(phot[f"flux_{k_big}"], float)
    usable = ((np.asarray(phot["n_masked"]) == 0) & (counts <= 1) & ~edge_m & far_from_comet
              & np.isfinite(f_small) & (f_small > 0) & np.isfinite(phot["sky"]))
    if not np.any(usable):
        _fail(name, f"{len(i_det)} reference stars matched but none is usable for the zero point "
                    "(saturated, blended, masked or at the edge)")
    apcorr, apcorr_scatter, n_apcorr = aperture_correction(f_small[usable], f_big[usable],
                                                           f_small_err[usable])
    if not np.isfinite(apcorr):
        apcorr = 1.0
    f_big_err = np.asarray(phot[f"flux_err_{k_big}"], float)
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio_err = np.hypot(f_small_err / f_small, f_big_err / f_big)[usable]
        snr_u = (f_small / f_small_err)[usable]
    # aperture_correction takes the n_apcorr stars of highest signal-to-noise
    ratio_err = ratio_err[np.argsort(-snr_u, kind="stable")][:n_apcorr]
    apcorr_err = aperture_correction_error(apcorr_scatter, n_apcorr, ratio_err)
    details["aperture_correction_scatter"] = apcorr_scatter
    star_annulus = (5.0 * fwhm, 8.0 * fwhm)
    psf_model, psf_optical = None, False
    if coma_correction:
        growth = np.column_stack([np.asarray(phot[f"flux_{k}"], float)
                                  for k in range(len(star_radii))])[usable]
        snr = f_small[usable] / f_small_err[usable]
        best = np.argsort(-snr)[:30]
        psf_model = fit_moffat_growth(star_radii, growth[best], annulus=star_annulus,
                                      fwhm_guess=fwhm)
        if psf_model is None:
            # the optical PSF whose stars measure_fwhm would measure as this frame's; the coma
            # correction integrates it over the pixel
            psf_model, psf_optical = moffat_from_measured_fwhm(fwhm, _FALLBACK_BETA), True
            _flag(flags, messages, "psf_fallback",
                  f"{len(best)} usable star(s); measured FWHM {fwhm:.2f} pix, Moffat FWHM "
                  f"{psf_model.fwhm:.2f} pix")
        details["psf_moffat"] = {"alpha_pix": psf_model.alpha, "beta": psf_model.beta,
                                 "fwhm_pix": float(psf_model.fwhm), "optical": psf_optical}
    flux_s = f_small * apcorr / exptime
    flux_s_err = f_small_err * apcorr / exptime
    with np.errstate(invalid="ignore", divide="ignore"):
        inst = -2.5 * np.log10(flux_s)
        inst_err = _MAG_FACTOR * flux_s_err / flux_s
    use_colour = fit_colour_term
    if fit_colour_term and np.count_nonzero(usable & np.isfinite(ref_col[matched_ref])) < 3:
        _flag(flags, messages, "colour_term_dropped")
        use_colour = False
    zp, used_sub, resid_sub = fit_zero_point(
        inst[usable], inst_err[usable], ref_mag[matched_ref][usable],
        ref_mag_err[matched_ref][usable], ref_col[matched_ref][usable],
        fit_colour_term=use_colour, band=band, colour_name=colour, aperture_correction=apcorr,
        aperture_correction_err=apcorr_err)
    if zp.n_stars < min_stars:
        _flag(flags, messages, "few_stars", f"{zp.n_stars} < {min_stars}")
    used = np.zeros(len(det_m), bool)
    used[np.flatnonzero(usable)[used_sub]] = True
    residual = np.full(len(det_m), np.nan)
    residual[usable] = resid_sub
    sky_m = wcs.pixel_to_world_values(det_m[:, 0], det_m[:, 1])
    stars = QTable({
        "id": ids[matched_ref],
        "ra": np.asarray(sky_m[0]) * u.deg, "dec": np.asarray(sky_m[1]) * u.deg,
        "x": det_m[:, 0] * u.pix, "y": det_m[:, 1] * u.pix,
        "flux": flux_s * u.electron / u.s, "flux_err": flux_s_err * u.electron / u.s,
        "inst_mag": inst * u.mag, "inst_mag_err": inst_err * u.mag,
        "cat_mag": ref_mag[matched_ref] * u.mag, "cat_mag_err": ref_mag_err[matched_ref] * u.mag,
        "colour": ref_col[matched_ref] * u.mag, "residual": residual * u.mag, "used": used,
    })

    lap("zero_point")
    # --- comet: mask, centroid, sky, apertures --------------------------------------------
    half = int(np.ceil(ann_out)) + 2
    x0c, x1c = max(int(x_pred) - half, 0), min(int(x_pred) + half + 2, nx)
    y0c, y1c = max(int(y_pred) - half, 0), min(int(y_pred) + half + 2, ny)
    cut = data[y0c:y1c, x0c:x1c]
    cut_var = variance[y0c:y1c, x0c:x1c]
    cut_bad = bad[y0c:y1c, x0c:x1c]
    star_mask = np.zeros(cut.shape, bool)
    max_shift = pix(max_centroid_shift, "max_centroid_shift")
    # detections other than the comet itself
    d_comet = np.hypot(sx - x_pred, sy - y_pred)
    in_cut = (sx >= x0c - 20) & (sx < x1c + 20) & (sy >= y0c - 20) & (sy < y1c + 20)
    comet_det = np.flatnonzero(d_comet <= max(max_shift, 2.0 * fwhm))
    others = in_cut.copy()
    others[comet_det] = False
    peak_flux = np.asarray(sources["peak"], float) * 1.133 * fwhm**2
    def capped(radius, x, y):
        # a star's mask never reaches within 2 FWHM of the comet's predicted centre
        room = np.hypot(x - x_pred, y - y_pred) - 2.0 * fwhm
        return np.maximum(np.minimum(radius, room), 1.0 * fwhm)

    _paint_discs(star_mask, sx[others], sy[others],
                 capped(_star_mask_radius(peak_flux[others], fwhm, sigma0), sx[others],
                        sy[others]), x0c, y0c)
    # catalogue stars near the comet that detection may have missed under the coma
    cx_ref, cy_ref = wcs.world_to_pixel_values(ref_ra, ref_dec)
    cx_ref, cy_ref = np.asarray(cx_ref, float), np.asarray(cy_ref, float)
    near = (np.isfinite(cx_ref) & np.isfinite(ref_mag) & (cx_ref >= x0c) & (cx_ref < x1c)
            & (cy_ref >= y0c) & (cy_ref < y1c)
            & (np.hypot(cx_ref - x_pred, cy_ref - y_pred) > max(max_shift, 2.0 * fwhm)))
    ref_flux = exptime * 10.0 ** (-0.4 * (ref_mag - zp.zp))
    bright = near & (ref_flux > 3.0 * sigma0 * fwhm)
    _paint_discs(star_mask, cx_ref[bright], cy_ref[bright],
                 capped(_star_mask_radius(ref_flux[bright], fwhm, sigma0), cx_ref[bright],
                        cy_ref[bright]), x0c, y0c)
    full_mask = bad.copy()
    full_mask[y0c:y1c, x0c:x1c] |= star_mask
    box = (int(round(pix(centroid_box, "centroid_box"))) if centroid_box is not None
           else int(round(4 * fwhm))) | 1
    box = max(box, 5)
    xc, yc, status = refine_comet_centre(data, full_mask, x_pred, y_pred, sky=sky0,
                                         box=box, max_shift=max_shift)
    details["centroid_status"] = status
    details["predicted_xy"] = (x_pred, y_pred)
    if status == "at_limit":
        _flag(flags, messages, "centroid_at_limit")
    elif status == "failed":
        _flag(flags, messages, "centroid_failed")
    lap("comet_centroid")
    yy, xx = np.mgrid[y0c:y1c, x0c:x1c]
    rho = np.hypot(xx - xc, yy - yc)
    mask_all = cut_bad | star_mask
    in_ann = (rho >= ann_in) & (rho <= ann_out) & ~mask_all
    sky = estimate_sky(cut[in_ann], rho[in_ann], method=sky_method, inner=ann_in, outer=ann_out)
    details["sky"] = sky.to_dict()
    full_ann_area = np.pi * (ann_out**2 - ann_in**2)
    if (xc - ann_out < -0.5 or xc + ann_out > nx - 0.5 or yc - ann_out < -0.5
            or yc + ann_out > ny - 0.5) and sky.n_pixels < 0.5 * full_ann_area:
        _flag(flags, messages, "edge", "sky annulus")
    if not np.isfinite(sky.level):
        _fail(name, f"sky annulus ({ann_in:.0f}-{ann_out:.0f} pix) has no usable pixels")
    sub = cut - sky.level
    inner = rho <= ann_in
    filled, filled_var = fill_from_rings(np.where(inner, sub, 0.0), np.where(inner, cut_var, 0),
                                         mask_all | ~inner, rho)
    flux, flux_err = comet_aperture_fluxes(filled, filled_var, xc - x0c, yc - y0c, radii,
                                           sky_error=sky.error)
    details["flux_uncorrected_e"] = flux
    if psf_model is not None:
        coma_factor = coma_aperture_correction(radii, psf_model, reference_radius=star_radii[-1],
                                               annulus=star_annulus, pixel=psf_optical)
        flux, flux_err = flux * coma_factor, flux_err * coma_factor
    else:
        coma_factor = np.ones(len(radii))
    quality = frame.quality[y0c:y1c, x0c:x1c]

    lap("comet_apertures")
    # --- profile -------------------------------------------------------------------------
    km_per_pix = scale / _ARCSEC_PER_RAD * delta_km
    r_lo = max(0.5, 0.5 * fwhm)
    edges = np.geomspace(r_lo, ann_in, int(profile_bins) + 1)
    area_as2 = scale**2
    keep = ~mask_all
    prof_cols = {}
    rho_mean, sb, sb_err, count = annulus_means(sub[keep], cut_var[keep], rho[keep], edges,
                                                sky_error=sky.error)
    conv = 1.0 / (exptime * area_as2)
    prof_cols["rho_km"] = rho_mean * km_per_pix * u.km
    prof_cols["rho_arcsec"] = rho_mean * scale * u.arcsec
    prof_cols["rho_pix"] = rho_mean * u.pix
    sb_unit = u.electron / (u.s * u.arcsec**2)
    prof_cols["sb"] = sb * conv * sb_unit
    prof_cols["sb_err"] = sb_err * conv * sb_unit
    prof_cols["n_pix"] = count
    with np.errstate(invalid="ignore", divide="ignore"):
        prof_cols["sb_mag"] = np.where(sb > 0, zp.zp - 2.5 * np.log10(sb * conv), np.nan) \
            * u.mag / u.arcsec**2
    if np.isfinite(geo["pa_sun"]):
        axes = _sky_axes(wcs, xc, yc)
        ne = np.linalg.solve(axes, np.vstack([(xx - xc).ravel(), (yy - yc).ravel()]))
        pa = np.degrees(np.arctan2(ne[1], ne[0])).reshape(rho.shape) % 360.0
        for label, centre in (("sun", geo["pa_sun"]), ("tail", geo["pa_sun"] + 180.0)):
            sel = sector_selection(pa[keep], centre, half_width)
            _, s_sb, s_err, s_n = annulus_means(sub[keep], cut_var[keep], rho[keep], edges,
                                                select=sel, sky_error=sky.error)
            prof_cols[f"sb_{label}"] = s_sb * conv * sb_unit
            prof_cols[f"sb_{label}_err"] = s_err * conv * sb_unit
            prof_cols[f"n_pix_{label}"] = s_n
    else:
        _flag(flags, messages, "no_sun_pa")
        for label in ("sun", "tail"):
            prof_cols[f"sb_{label}"] = np.full(len(sb), np.nan) * sb_unit
            prof_cols[f"sb_{label}_err"] = np.full(len(sb), np.nan) * sb_unit
            prof_cols[f"n_pix_{label}"] = np.zeros(len(sb), int)
    profile = QTable(prof_cols)
    slope, slope_err, n_slope = profile_slope(rho_mean * km_per_pix, sb, sb_err,
                                              rho_range=tuple(slope_range))
    details["coma_slope_err"] = slope_err
    if n_slope < 3:
        _flag(flags, messages, "profile_short", f"{n_slope} annuli")

    lap("profile")
    # --- magnitudes, Afρ ----------------------------------------------------------------
    if comet_colour is None:
        comet_colour = SOLAR_COLOURS.get(colour, 0.0)
    ct_mag = zp.colour_term * comet_colour if use_colour else 0.0
    ct_err = (zp.colour_term_err * comet_colour) if use_colour else 0.0
    with np.errstate(invalid="ignore", divide="ignore"):
        mag = np.where(flux > 0, zp.zp - 2.5 * np.log10(flux / exptime) + ct_mag, np.nan)
        mag_err = np.sqrt((_MAG_FACTOR * flux_err / flux) ** 2 + zp.zp_err**2 + ct_err**2)
    mag_err = np.where(flux > 0, mag_err, np.nan)
    rho_km_rows = np.concatenate([km_radii, arcsec_radii / _ARCSEC_PER_RAD * delta_km])
    rho_as_rows = np.concatenate([r_km * scale, arcsec_radii])
    try:
        m_sun = solar_magnitude(solar_band or band, mag_system).to_value(u.mag)
    except ValueError:
        m_sun = np.nan
        _flag(flags, messages, "no_solar_magnitude", f"band {band!r}, {mag_system}")
    if np.isfinite(m_sun):
        af = afrho_of(np.where(np.isfinite(mag), mag, 99.0), m_sun, geo["r_h"] * u.au,
                      geo["delta"] * u.au, rho_km_rows * u.km)
        af = np.where(np.isfinite(mag), af.to_value(u.cm), np.nan)
        af_err = afrho_uncertainty(af * u.cm, np.nan_to_num(mag_err, nan=0.0)).to_value(u.cm)
        af_err = np.where(np.isfinite(mag), af_err, np.nan)
        phi = dust_phase(geo["phase"] * u.deg, method=dust_phase_function,
                         table=phase_function_table, coefficient=phase_coefficient)
        if np.any(phase_beyond_checked(geo["phase"] * u.deg, method=dust_phase_function,
                                       table=phase_function_table)):
            _flag(flags, messages, PHASE_FLAG, f"{geo['phase']:.1f} deg")
        a0, a0_err = af / phi, af_err / phi
    else:
        af = af_err = a0 = a0_err = np.full(len(radii), np.nan)

    # --- flags per row --------------------------------------------------------------------
    elong_min = as_value(min_elongation, u.deg, "min_elongation")
    if np.isfinite(geo["elong"]) and geo["elong"] < elong_min:
        _flag(flags, messages, "low_elongation", f"{geo['elong']:.1f} deg")
    row_flags = []
    for k, r in enumerate(radii):
        fl = list(flags)
        if (xc - r < -0.5 or xc + r > nx - 0.5 or yc - r < -0.5 or yc + r > ny - 0.5):
            _flag(fl, messages, "edge", f"aperture {r:.1f} pix")
        inside = rho <= r
        if np.any(star_mask & inside):
            _flag(fl, messages, "star_in_aperture", f"aperture {r:.1f} pix")
        qbits = quality[inside]
        # saturation under a masked field star is that star's, reported as star_in_aperture
        if np.any((quality[inside & ~star_mask] & np.uint16(Quality.SATURATED)) != 0):
            _flag(fl, messages, "saturated", f"aperture {r:.1f} pix")
        if np.any((qbits & np.uint16(Quality.NONFINITE | Quality.BAD)) != 0) or not np.all(
                np.isfinite(cut[inside])):
            _flag(fl, messages, "nan_pixels", f"aperture {r:.1f} pix")
        if not flux[k] > 0:
            _flag(fl, messages, "nonpositive_flux", f"aperture {r:.1f} pix")
        for f in fl:
            if f not in flags:
                flags.append(f)
        row_flags.append(",".join(fl))
    messages = list(dict.fromkeys(messages))

    ra_c, dec_c = (float(v) for v in wcs.pixel_to_world_values(xc, yc))
    n = len(radii)
    airmass = header_airmass(frame.info.header)
    if not np.isfinite(airmass) and site is not None:
        airmass, altitude = frame_airmass(frame.info.time_mid, site, ra_c * u.deg, dec_c * u.deg,
                                          formula=airmass_formula)
        details["altitude_deg"] = float(altitude.to_value(u.deg))
        # a fact about the row, not a problem: recorded in the rows' flags without a warning
        row_flags = [",".join([f for f in fl.split(",") if f] + ["airmass_computed"])
                     for fl in row_flags]
    comet = QTable({
        "frame": [name] * n,
        "mjd_utc_mid": np.full(n, frame.info.time_mid.utc.mjd) * u.d,
        "filter": [str(frame.info.filter or "")] * n,
        "exptime_s": np.full(n, exptime) * u.s,
        "airmass": np.full(n, airmass),
        "zp_mag": np.full(n, zp.zp) * u.mag,
        "zp_err_mag": np.full(n, zp.zp_err) * u.mag,
        "n_stars": np.full(n, zp.n_stars),
        "x_pix": np.full(n, xc) * u.pix,
        "y_pix": np.full(n, yc) * u.pix,
        "ra_deg": np.full(n, ra_c) * u.deg,
        "dec_deg": np.full(n, dec_c) * u.deg,
        "r_h_au": np.full(n, geo["r_h"]) * u.au,
        "delta_au": np.full(n, geo["delta"]) * u.au,
        "phase_deg": np.full(n, geo["phase"]) * u.deg,
        "elong_deg": np.full(n, geo["elong"]) * u.deg,
        "rho_km": rho_km_rows * u.km,
        "rho_arcsec": rho_as_rows * u.arcsec,
        "mag": mag * u.mag,
        "mag_err": mag_err * u.mag,
        "afrho_cm": np.asarray(af) * u.cm,
        "afrho_err_cm": np.asarray(af_err) * u.cm,
        "a0frho_cm": np.asarray(a0) * u.cm,
        "a0frho_err_cm": np.asarray(a0_err) * u.cm,
        "coma_slope": np.full(n, slope),
        "coma_apcorr_mag": 2.5 * np.log10(coma_factor) * u.mag,
        "flags": row_flags,
    })
    comet = comet[list(MEASUREMENT_COLUMNS)]
    lap("rows")
    details["timings_s"] = {label: t - clock[i][1] for i, (label, t) in enumerate(clock[1:])}
    details.update({"flux_e": flux, "flux_err_e": flux_err, "radii_pix": radii,
                    "pixel_scale_arcsec": scale, "n_detected": len(sx),
                    "n_matched": n_matched_all, "n_measured": len(i_det)})
    if flags:
        warnings.warn(f"{name}: {'; '.join(messages)}", PhotometryWarning, stacklevel=2)
    return FramePhotometry(frame=name, comet=comet, stars=stars, zero_point=zp, profile=profile,
                           wcs=wcs, flags=flags, messages=messages, details=details)
