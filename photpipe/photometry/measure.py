"""The photometry of one calibrated frame: stars, zero point, comet apertures, profile, Afρ.

`measure_frame` reads like a plan: each step (in ``_frame_steps``, ``_star_steps``,
``_comet_steps`` and ``_row_steps``) returns a small result the next ones take.
`measure_comet_frame` is the same with the options as flat keywords.
"""

import warnings

from ._comet_steps import cutout, find_centre, measure_apertures
from ._frame_steps import detect, fail, layout, match, prepare
from ._notes import Notes
from ._row_steps import SOLAR_COLOURS, coma_profile, comet_rows, magnitudes, row_flags
from ._star_steps import calibrate, measure_stars
from ._trail_steps import decide_tracking, follow_trails
from .errors import PhotometryWarning
from .options import MeasureOptions
from .result import FramePhotometry

__all__ = ["SOLAR_COLOURS", "measure_frame", "measure_comet_frame"]


def measure_frame(frame, reference_stars, geometry_row, options=None):
    """Measure the comet in one calibrated frame against the field stars.

    Parameters
    ----------
    frame : `~photpipe.frames.CalibratedFrame`
    reference_stars : `~astropy.table.QTable`
    geometry_row : `~astropy.table.Row` or dict
        As for `measure_comet_frame`.
    options : `~photpipe.photometry.MeasureOptions`, optional
        The options, one group per step (default: every default).

    Returns
    -------
    result : FramePhotometry

    Notes
    -----
    See `measure_comet_frame` for the method, the errors raised and the warning.
    """
    opts = MeasureOptions() if options is None else options
    notes = Notes()
    prep = prepare(frame, reference_stars, geometry_row, opts)
    det = detect(prep, frame, opts, notes)
    tracking = decide_tracking(prep, frame, det, opts, notes)
    det = follow_trails(prep, det, tracking, notes)
    mat = match(prep, det, opts, notes)
    lay = layout(prep, mat.wcs, opts)
    stars = measure_stars(prep, det, mat, lay, opts, notes, fail, trail=tracking.star_trail
                          if tracking.stars_trailed else (0.0, 0.0))
    cal = calibrate(prep, stars, mat.wcs, opts, notes)
    cut = cutout(prep, det, lay, mat, cal.zp, stars.fwhm, opts, trail=stars.trail)
    centre = find_centre(prep, det, lay, cut, stars.fwhm, opts, notes)
    ap = measure_apertures(prep, lay, cut, centre, stars, cal, opts, notes, fail,
                           comet_trail=tracking.comet_trail)
    profile, slope = coma_profile(prep, lay, ap, centre, cal.zp, stars.fwhm, mat.wcs, opts,
                                  notes)
    mags = magnitudes(prep, lay, ap, cal, opts, notes)
    flags = row_flags(prep, frame, lay, ap, cut, centre, opts, notes)
    comet = comet_rows(prep, frame, centre, ap, mags, cal.zp, slope, flags, mat.wcs, opts,
                       notes)
    details = notes.details
    details["timings_s"] = notes.timings()
    details.update({"flux_e": ap.flux, "flux_err_e": ap.flux_err, "radii_pix": lay.radii,
                    "pixel_scale_arcsec": prep.scale, "n_detected": len(det.sx),
                    "n_matched": len(mat.i_det), "n_measured": len(stars.det_m)})
    if notes.flags:
        warnings.warn(f"{prep.name}: {'; '.join(notes.messages)}", PhotometryWarning,
                      stacklevel=3)
    return FramePhotometry(frame=prep.name, comet=comet, stars=cal.stars, zero_point=cal.zp,
                           profile=profile, wcs=mat.wcs, flags=notes.flags,
                           messages=notes.messages, details=details)


def measure_comet_frame(frame, reference_stars, geometry_row, **options):
    """Measure the comet in one calibrated frame against the field stars.

    The options are the fields of the groups of `MeasureOptions`, given by name.

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
    **options
        The fields of the option groups, by name, each described there with its default:
        `StarOptions` (``detect_threshold, detect_binning, max_wcs_offset, wcs_shift_limit,
        tracking, tracking_check``),
        `CalibrationOptions` (``band, colour, fit_colour_term, comet_colour, mag_system,
        min_stars, max_zp_stars, star_aperture_fwhm, coma_correction``), `ApertureOptions`
        (``apertures_km, apertures_arcsec, annulus, sky_method, centroid_box,
        max_centroid_shift``), `ProfileOptions` (``profile_slope_range_km, profile_bins,
        sector_half_width, dust_phase_function, phase_function_table, phase_coefficient``) and
        `SiteOptions` (``site, airmass_formula, min_elongation``).

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
    return measure_frame(frame, reference_stars, geometry_row,
                         MeasureOptions.from_keywords(**options))


def _flat_signature():
    """``measure_comet_frame``'s signature: the data, then every option with its default."""
    import dataclasses
    import inspect

    from .options import _GROUP_TYPES

    data = [inspect.Parameter(name, inspect.Parameter.POSITIONAL_OR_KEYWORD)
            for name in ("frame", "reference_stars", "geometry_row")]
    options = [inspect.Parameter(f.name, inspect.Parameter.KEYWORD_ONLY,
                                 default=f.default if f.default is not dataclasses.MISSING
                                 else f.default_factory())
               for kind in _GROUP_TYPES.values() for f in dataclasses.fields(kind)]
    return inspect.Signature(data + options)


# introspection (help, editors, the configuration's check of defaults) sees every keyword
measure_comet_frame.__signature__ = _flat_signature()
