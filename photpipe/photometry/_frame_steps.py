"""Steps of a frame's photometry before the stars are measured: inputs, detection, WCS, layout."""

from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.wcs.utils import proj_plane_pixel_scales

from photpipe._quantity import as_positive_value, as_value
from photpipe.frames.types import CalibratedFrame, Quality

from ._inputs import angle_or_pixels, geometry_values
from .astrometry import apply_to_wcs, match_stars
from .detection import detect_sources, measure_fwhm, sky_statistics
from .errors import PhotometryError

__all__ = ["fail", "Prepared", "prepare", "Detections", "detect", "Match", "match",
           "Layout", "layout"]


def fail(frame_name, reason):
    """Raise the frame's `PhotometryError`: ``"<frame>: <reason>"``."""
    msg = f"{frame_name}: {reason}"
    raise PhotometryError(msg)


@dataclass(frozen=True)
class References:
    """Reference stars as plain arrays (deg, mag)."""

    ids: np.ndarray
    ra: np.ndarray
    dec: np.ndarray
    mag: np.ndarray
    mag_err: np.ndarray
    colour: np.ndarray


def _reference_arrays(reference_stars, band, colour, need_colour, name):
    for col in ("ra", "dec", band) + ((colour,) if need_colour else ()):
        if col not in reference_stars.colnames:
            fail(name, f"reference stars have no column {col!r} "
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
    return References(ids, ra, dec, mag, mag_err, col)


@dataclass(frozen=True)
class Prepared:
    """The frame's checked inputs as plain values."""

    name: str
    geo: dict
    exptime: float
    km_radii: np.ndarray
    arcsec_radii: np.ndarray
    slope_range: np.ndarray   # km
    half_width: float         # deg
    refs: References
    wcs0: object
    scale: float            # arcsec per pixel
    delta_km: float
    data: np.ndarray
    variance: np.ndarray
    good: np.ndarray
    bad: np.ndarray

    def pix(self, value, label):
        """A length at the comet (km), an angle or pixels, in pixels."""
        return angle_or_pixels(value, label, scale_arcsec=self.scale, delta_km=self.delta_km)


def prepare(frame, reference_stars, geometry_row, opts):
    """Check the inputs and turn them into plain values (`Prepared`)."""
    if not isinstance(frame, CalibratedFrame):
        msg = f"'frame' must be a CalibratedFrame, got {type(frame).__name__}"
        raise TypeError(msg)
    name = frame.name
    if frame.wcs is None or not frame.wcs.has_celestial:
        fail(name, "frame has no celestial WCS")
    if not hasattr(reference_stars, "colnames"):
        msg = f"'reference_stars' must be a Table, got {type(reference_stars).__name__}"
        raise TypeError(msg)
    geo = geometry_values(geometry_row, name)
    exptime = as_positive_value(frame.info.exptime, u.s, "exptime")
    ap = opts.apertures
    km_radii = np.atleast_1d(as_positive_value(ap.apertures_km, u.km, "apertures_km"))
    arcsec_radii = np.atleast_1d(as_positive_value(ap.apertures_arcsec, u.arcsec,
                                                   "apertures_arcsec")) \
        if ap.apertures_arcsec is not None and np.size(ap.apertures_arcsec) else np.zeros(0)
    slope_range = as_positive_value(opts.profile.profile_slope_range_km, u.km,
                                    "profile_slope_range_km")
    half_width = as_value(opts.profile.sector_half_width, u.deg, "sector_half_width")
    cal = opts.calibration
    refs = _reference_arrays(reference_stars, cal.band, cal.colour, cal.fit_colour_term, name)
    wcs0 = frame.wcs.celestial
    scale = float(np.mean(proj_plane_pixel_scales(wcs0)) * 3600.0)
    data = np.asarray(frame.data)
    variance = np.asarray(frame.variance)
    if not (np.issubdtype(data.dtype, np.floating) and np.issubdtype(variance.dtype, np.floating)):
        data, variance = data.astype(np.float32), variance.astype(np.float32)
    good = frame.good & np.isfinite(variance)
    return Prepared(name=name, geo=geo, exptime=exptime, km_radii=km_radii,
                    arcsec_radii=arcsec_radii, slope_range=slope_range,
                    half_width=half_width, refs=refs, wcs0=wcs0, scale=scale,
                    delta_km=geo["delta"] * u.au.to(u.km), data=data, variance=variance,
                    good=good, bad=~good)


@dataclass(frozen=True)
class Detections:
    """Sources found on the frame, the sky statistics and the first FWHM."""

    sources: object
    sx: np.ndarray
    sy: np.ndarray
    near_sat: np.ndarray
    sky: float
    sigma: float
    fwhm: float


def detect(prep, frame, opts, notes):
    """Sky statistics, source detection and a first FWHM from the detections."""
    data, good = prep.data, prep.good
    ny, nx = data.shape
    try:
        sky0, sigma0 = sky_statistics(data, good)
    except ValueError as exc:
        fail(prep.name, str(exc))
    sources = detect_sources(data, prep.variance, good, sky=sky0,
                             threshold=opts.stars.detect_threshold,
                             binning=opts.stars.detect_binning)
    sx, sy = np.asarray(sources["x"]), np.asarray(sources["y"])
    satmask = (frame.quality & np.uint16(Quality.SATURATED)) != 0
    near_sat = np.zeros(len(sx), bool)
    if satmask.any() and len(sx):
        ix = np.clip(np.round(sx).astype(int), 0, nx - 1)
        iy = np.clip(np.round(sy).astype(int), 0, ny - 1)
        near_sat = satmask[iy, ix]
    notes.lap("detection")
    fwhm = measure_fwhm(data, sx[~near_sat], sy[~near_sat], sky=sky0)
    if not np.isfinite(fwhm):
        fail(prep.name, "no star could be fitted to measure the FWHM")
    notes.details["fwhm_pix"] = fwhm
    notes.details["sky_level"], notes.details["sky_sigma"] = sky0, sigma0
    notes.lap("fwhm")
    return Detections(sources, sx, sy, near_sat, sky0, sigma0, fwhm)


@dataclass(frozen=True)
class Match:
    """Detections matched to reference stars and the refined WCS."""

    wcs: object
    det_xy: np.ndarray      # detections considered, brightest first
    i_det: np.ndarray       # matched rows of det_xy
    matched_ref: np.ndarray  # matched reference-star indices


def match(prep, det, opts, notes):
    """Match the brightest detections to the projected reference stars; refine the WCS."""
    refs, wcs0 = prep.refs, prep.wcs0
    ny, nx = prep.data.shape
    inside_ref = np.isfinite(refs.ra) & np.isfinite(refs.dec) & np.isfinite(refs.mag)
    rx, ry = wcs0.world_to_pixel_values(refs.ra, refs.dec)
    rx, ry = np.asarray(rx, float), np.asarray(ry, float)
    max_off = prep.pix(opts.stars.max_wcs_offset, "max_wcs_offset")
    inside_ref &= (rx > -max_off) & (rx < nx + max_off) & (ry > -max_off) & (ry < ny + max_off)
    ref_idx = np.flatnonzero(inside_ref)
    ref_idx = ref_idx[np.argsort(refs.mag[ref_idx])][:600]
    n_det = min(len(det.sx), max(3 * len(ref_idx), 200))
    det_xy = np.column_stack([det.sx, det.sy])[:n_det]
    i_det, i_ref, transform = match_stars(
        det_xy, np.column_stack([rx[ref_idx], ry[ref_idx]]), center=((nx - 1) / 2, (ny - 1) / 2),
        max_offset=max_off, tolerance=max(1.5, 0.5 * det.fwhm))
    if len(i_det) == 0:
        fail(prep.name, f"no reference star matched among {len(ref_idx)} projected and "
                        f"{len(det.sx)} detected (WCS missing or wrong by more than "
                        f"{max_off:.0f} pix?)")
    wcs = apply_to_wcs(wcs0, transform)
    shift = transform.max_displacement(nx, ny)
    notes.details["wcs_correction"] = transform.to_dict()
    if shift > prep.pix(opts.stars.wcs_shift_limit, "wcs_shift_limit"):
        notes.flag("wcs_refined_large", f"{shift:.1f} pix")
    notes.lap("matching")
    return Match(wcs, det_xy, i_det, ref_idx[i_ref])


@dataclass(frozen=True)
class Layout:
    """Where the comet is predicted and the radii of its apertures and sky annulus (pixels)."""

    x_pred: float
    y_pred: float
    r_km: np.ndarray
    radii: np.ndarray
    ann_in: float
    ann_out: float


def layout(prep, wcs, opts):
    """The comet's predicted pixel and its aperture and annulus radii in pixels."""
    ny, nx = prep.data.shape
    x_pred, y_pred = (float(v) for v in wcs.world_to_pixel_values(prep.geo["ra"],
                                                                  prep.geo["dec"]))
    if not (np.isfinite(x_pred) and np.isfinite(y_pred)
            and -0.5 <= x_pred <= nx - 0.5 and -0.5 <= y_pred <= ny - 0.5):
        fail(prep.name, f"comet predicted at pixel ({x_pred:.1f}, {y_pred:.1f}), outside the "
                        f"{nx} x {ny} frame")
    r_km = np.degrees(prep.km_radii / prep.delta_km) * 3600.0 / prep.scale
    r_as = prep.arcsec_radii / prep.scale
    radii = np.concatenate([r_km, r_as])
    r_max = float(radii.max())
    corner = float(np.hypot(max(x_pred, nx - 1 - x_pred), max(y_pred, ny - 1 - y_pred)))
    if r_max > corner:
        fail(prep.name, f"the largest aperture ({r_max:.0f} px) holds the whole {nx} x {ny} "
                        f"frame around the comet (farthest corner {corner:.0f} px): choose "
                        "smaller apertures")
    annulus = opts.apertures.annulus
    if annulus is None:
        ann_in, ann_out = 4.0 * r_max, 8.0 * r_max
    else:
        ann_in, ann_out = prep.pix(annulus[0], "annulus[0]"), prep.pix(annulus[1], "annulus[1]")
        if not 0 < ann_in < ann_out:
            msg = f"'annulus' must be (inner, outer) with 0 < inner < outer, got {annulus}"
            raise ValueError(msg)
    if ann_in < r_max:
        msg = f"sky annulus inner radius {ann_in:.1f} pix is inside the largest aperture"
        raise ValueError(msg)
    return Layout(x_pred, y_pred, r_km, radii, ann_in, ann_out)
