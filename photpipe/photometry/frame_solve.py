"""A calibrated frame's WCS from its own stars: when the header has none, or a wrong one.

`solve_frame` detects the frame's stars, takes the first guess of the pointing from the header
WCS, the header's pointing keywords or the comet's predicted place (in that order), solves the
plate against the reference stars (`photpipe.photometry.platesolve.solve_plate`) and returns the
frame with the solved WCS, its quality recorded in the header (``SOLV*`` cards), and how far
the header's own WCS was off.
"""

import dataclasses

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.wcs.utils import proj_plane_pixel_scales

from photpipe.frames.instruments import pixel_scale_from_header
from photpipe.frames.types import CalibratedFrame

from .detection import detect_sources, measure_fwhm_minor, sky_statistics
from .platesolve import PlateSolveError, pointing_from_header, solve_plate

__all__ = ["solve_frame", "solve_frame_from_store", "SOLVE_MODES"]

#: When to solve: ``"never"`` (keep the header WCS), ``"missing"`` (only frames with no
#: celestial WCS), ``"always"`` (every frame; a header WCS is checked and replaced).
SOLVE_MODES = ("never", "missing", "always")


def _guess(frame, comet_position):
    if frame.wcs is not None and frame.wcs.has_celestial:
        ny, nx = frame.data.shape
        ra, dec = frame.wcs.celestial.pixel_to_world_values((nx - 1) / 2.0, (ny - 1) / 2.0)
        if np.isfinite(ra) and np.isfinite(dec):
            return SkyCoord(float(ra) * u.deg, float(dec) * u.deg, frame="icrs"), "header WCS"
    pointing = pointing_from_header(frame.info.header)
    if pointing is not None:
        return pointing, "header pointing"
    if comet_position is not None:
        return comet_position, "comet's predicted position"
    return None, None


def _scale(frame, pixel_scale):
    if pixel_scale is not None:
        return u.Quantity(pixel_scale, u.arcsec)
    if frame.wcs is not None and frame.wcs.has_celestial:
        return float(np.mean(proj_plane_pixel_scales(frame.wcs.celestial))) * u.deg
    return pixel_scale_from_header(frame.info.header)


def solve_frame(frame, reference_stars, *, band, pixel_scale=None, comet_position=None,
                mode="always", max_offset=16 * u.arcmin, detect_binning=4, trail_length=0.0,
                **solve_options):
    """Solve a calibrated frame's plate and return it with the solved WCS.

    Parameters
    ----------
    frame : `~photpipe.frames.CalibratedFrame`
    reference_stars : `~astropy.table.Table`
        Catalogue stars around the frame (``ra``, ``dec`` and the ``band`` magnitude).
    band : str
        Magnitude column used to sort the catalogue, brightest first.
    pixel_scale : `~astropy.units.Quantity` ['angle'], optional
        The instrument's; by default from the header WCS or `pixel_scale_from_header`.
    comet_position : `~astropy.coordinates.SkyCoord`, optional
        Used as the guess when the header has neither a WCS nor pointing keywords.
    mode : {"never", "missing", "always"}, optional
        See `SOLVE_MODES`.
    max_offset : `~astropy.units.Quantity` ['angle'], optional
        Largest guess error searched.
    detect_binning : int, optional
        Binning of the detection image (only the brighter stars are needed).
    trail_length : float, optional
        Length (pixels) of the stars' trails on a frame that followed the comet; the stars
        are then centred on their trails' middles (the direction need not be known).
    **solve_options
        Passed to `~photpipe.photometry.platesolve.solve_plate`.

    Returns
    -------
    frame : `~photpipe.frames.CalibratedFrame`
        A copy carrying the solved WCS and ``SOLV*`` header cards (the input itself when not
        solved).
    solution : `PlateSolution` or None
    details : dict
        ``guess_source``, and ``header_wcs_error_arcsec`` (largest difference between the
        header WCS and the solution over the frame) when the header had a WCS.

    Raises
    ------
    PlateSolveError
        When no guess or no pixel scale is known, or the stars do not match.
    """
    if not isinstance(frame, CalibratedFrame):
        msg = f"'frame' must be a CalibratedFrame, got {type(frame).__name__}"
        raise TypeError(msg)
    if mode not in SOLVE_MODES:
        msg = f"'mode' must be one of {SOLVE_MODES}, got {mode!r}"
        raise ValueError(msg)
    has_wcs = frame.wcs is not None and frame.wcs.has_celestial
    if mode == "never" or (mode == "missing" and has_wcs):
        return frame, None, {}
    guess, source = _guess(frame, comet_position)
    if guess is None:
        msg = ("no WCS, no pointing keywords (RA/DEC, OBJCTRA/OBJCTDEC, ...) and no predicted "
               "comet position to start the plate solution from")
        raise PlateSolveError(msg)
    scale = _scale(frame, pixel_scale)
    if scale is None:
        msg = "no pixel scale known (give the instrument's, or PIXSCALE / XPIXSZ+FOCALLEN)"
        raise PlateSolveError(msg)
    xy = _bright_stars(frame, detect_binning, trail_length=trail_length)
    ra, dec = _catalogue(reference_stars, band)
    solution = solve_plate(xy, ra, dec, guess=guess, pixel_scale=scale,
                           shape=frame.data.shape, max_offset=max_offset, **solve_options)
    details = {"guess_source": source, **solution.to_dict()}
    if has_wcs:
        details["header_wcs_error_arcsec"] = _largest_difference(frame.wcs.celestial,
                                                                 solution.wcs, frame.data.shape)
    return _with_solution(frame, solution), solution, details


def solve_frame_from_store(frame, store, *, band, pixel_scale=None, comet_position=None,
                           mode="missing", max_offset=16 * u.arcmin, **options):
    """`solve_frame` with the catalogue stars taken from a reference-star store.

    The store (`~photpipe.photometry.ReferenceStarStore`) is asked for the cone around the
    first guess that holds the frame wherever the search may put it.

    Returns
    -------
    frame, solution, details
        As `solve_frame`.
    """
    has_wcs = frame.wcs is not None and frame.wcs.has_celestial
    if mode == "never" or (mode == "missing" and has_wcs):
        return frame, None, {}
    guess, _ = _guess(frame, comet_position)
    scale = _scale(frame, pixel_scale)
    if guess is None or scale is None:
        # solve_frame names what is missing
        return solve_frame(frame, store.cone(SkyCoord(0 * u.deg, 0 * u.deg), 1 * u.arcsec),
                           band=band, pixel_scale=scale, comet_position=comet_position,
                           mode=mode, max_offset=max_offset, **options)
    ny, nx = frame.data.shape
    radius = (0.5 * np.hypot(nx, ny) * u.Quantity(scale, u.arcsec)
              + u.Quantity(max_offset, u.arcmin) + 1 * u.arcmin)
    stars = store.cone(guess, radius.to(u.deg))
    return solve_frame(frame, stars, band=band, pixel_scale=scale, comet_position=comet_position,
                       mode=mode, max_offset=max_offset, **options)


def _bright_stars(frame, binning, n_stars=150, trail_length=0.0):
    data = np.asarray(frame.data, dtype=np.float32)
    variance = np.asarray(frame.variance, dtype=np.float32)
    good = frame.good & np.isfinite(variance)
    try:
        # every 8th pixel each way (65 000 on a 2k frame) fixes the level the threshold needs
        sky, _ = sky_statistics(data, good, step=8)
    except ValueError as exc:
        raise PlateSolveError(str(exc)) from exc
    src = detect_sources(data, variance, good, sky=sky, binning=binning, n_centroid=n_stars,
                         max_sources=n_stars)
    # only centroided positions: a peak pixel of the binned image is off by up to a pixel
    src = src[np.asarray(src["centroided"], bool)]
    x, y = np.asarray(src["x"], float), np.asarray(src["y"], float)
    if trail_length >= 1.0 and len(x):
        x, y = _trail_middles(data, good, x, y, float(trail_length), sky)
    return np.column_stack([x, y])


def _trail_middles(data, good, x, y, length, sky):
    """Trailed stars' middles, whatever the trail's direction.

    First moments in a circle reaching half the trail and 1.5 FWHM beyond, then one position
    per trail.
    """
    from .trailed import merge_trail_detections, trail_centroids

    fwhm = measure_fwhm_minor(data, x, y, sky=sky)
    fwhm = fwhm if np.isfinite(fwhm) else 2.0
    x, y = trail_centroids(data, good, x, y, (0.0, 0.0), radius=0.5 * length + 1.5 * fwhm,
                           max_move=0.5 * length + 1.0)
    keep = merge_trail_detections(x, y, (0.0, 0.0), radius=fwhm)
    return x[keep], y[keep]


def _catalogue(stars, band):
    if band not in stars.colnames:
        msg = f"reference stars have no {band!r} magnitude column"
        raise PlateSolveError(msg)
    ra = np.asarray(u.Quantity(stars["ra"], u.deg).value, float)
    dec = np.asarray(u.Quantity(stars["dec"], u.deg).value, float)
    mag = stars[band]
    mag = np.asarray(getattr(mag, "value", mag), float)
    order = np.argsort(np.where(np.isfinite(mag), mag, np.inf), kind="stable")
    ok = np.isfinite(ra[order]) & np.isfinite(dec[order])
    return ra[order][ok], dec[order][ok]


def _largest_difference(wcs_a, wcs_b, shape):
    ny, nx = shape
    xx, yy = np.meshgrid(np.linspace(0, nx - 1, 5), np.linspace(0, ny - 1, 5))
    a = SkyCoord(*wcs_a.pixel_to_world_values(xx.ravel(), yy.ravel()), unit="deg")
    b = SkyCoord(*wcs_b.pixel_to_world_values(xx.ravel(), yy.ravel()), unit="deg")
    return float(np.max(a.separation(b).arcsec))


def _with_solution(frame, solution):
    header = frame.info.header.copy()
    for key, value, comment in solution.header_cards():
        header[key] = (value, comment)
    info = dataclasses.replace(frame.info, header=header)
    history = [*frame.history,
               f"wcs: plate solved, {solution.n_matched} stars, rms "
               f"{solution.rms_arcsec:.3f} arcsec"]
    return dataclasses.replace(frame, info=info, wcs=solution.wcs, history=history)

