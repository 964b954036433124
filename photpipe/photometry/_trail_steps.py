"""Steps of a frame's photometry on how the telescope tracked: which of comet and stars trail.

`decide_tracking` runs after the detection: the configured mode, else a ``TRACKING`` header,
else the field stars' shapes (`photpipe.photometry.tracking`), and the trails that follow from
the comet's sky-plane rate and the exposure. On a frame that followed the comet,
`follow_trails` keeps one detection per trailed star, centred on the trail's middle, and the
star photometry (`_star_steps`) measures stadium apertures along the trail and the untrailed
PSF (`trailed_psf`).
"""

from dataclasses import dataclass

import numpy as np
from astropy import units as u

from .detection import measure_fwhm_minor
from .tracking import TrackingVerdict, tracking_from_header, tracking_from_stars
from .trailed import merge_trail_detections, trail_centroids
from .trails import TRACKING_MODES, exposure_trails

__all__ = ["MIN_TRAIL_PIX", "Tracking", "decide_tracking", "follow_trails"]

#: Stars trailed by less than this many pixels are measured in circles (the curve of growth
#: takes up the little light a circle misses).
MIN_TRAIL_PIX = 1.0


@dataclass(frozen=True)
class Tracking:
    """The frame's tracking verdict and the comet's and the stars' trails (pixels)."""

    verdict: TrackingVerdict
    motion: tuple
    comet_trail: tuple
    star_trail: tuple
    fwhm_across: float = float("nan")  # narrow-axis FWHM of the bright stars (pixels)

    @property
    def stars_trailed(self):
        """The stars trailed enough for apertures that follow them."""
        return float(np.hypot(*self.star_trail)) >= MIN_TRAIL_PIX


def _motion(prep):
    """The comet's motion over the exposure in pixels; (0, 0) without a rate."""
    rate = (prep.geo.get("ra_rate", np.nan), prep.geo.get("dec_rate", np.nan))
    if not np.all(np.isfinite(rate)):
        return (0.0, 0.0)
    motion, _ = exposure_trails(prep.wcs0, prep.geo["ra"] * u.deg, prep.geo["dec"] * u.deg,
                                rate[0] * u.arcsec / u.h, rate[1] * u.arcsec / u.h,
                                prep.exptime * u.s, tracking="sidereal")
    return motion


def _field_stars(prep, det, motion, max_stars=40):
    """Bright unsaturated detections clear of the comet, brightest first, and their FWHM.

    The FWHM is that of the narrow axis (a trail does not widen it); the stars are centred by
    their first moment along the comet's motion (the middle of a trail, the centre of a
    round star alike).
    """
    x_c, y_c = (float(v) for v in prep.wcs0.world_to_pixel_values(prep.geo["ra"],
                                                                  prep.geo["dec"]))
    xy = np.column_stack([det.sx, det.sy])[~det.near_sat][:4 * max_stars]
    across = measure_fwhm_minor(prep.data, xy[:, 0], xy[:, 1], sky=det.sky)
    if not np.isfinite(across):
        across = det.fwhm
    xy = xy[np.hypot(xy[:, 0] - x_c, xy[:, 1] - y_c) > 10 * across][:max_stars]
    x, y = trail_centroids(prep.data, prep.good, xy[:, 0], xy[:, 1], motion,
                           radius=1.5 * max(across, 1.0))
    return np.column_stack([x, y]), across


def decide_tracking(prep, frame, det, opts, notes):
    """The tracking mode of this frame and its trails (`Tracking`).

    The configured mode (``StarOptions.tracking``) holds unless ``tracking_check`` lets a
    ``TRACKING`` header value, else the stars' shapes, decide.
    """
    configured, check = opts.stars.tracking, opts.stars.tracking_check
    if configured not in TRACKING_MODES:
        msg = f"'tracking' must be one of {TRACKING_MODES}, got {configured!r}"
        raise ValueError(msg)
    motion = _motion(prep)
    verdict = TrackingVerdict(configured, "configuration")
    across = float("nan")
    if check and configured != "none":
        from_header = tracking_from_header(frame.info.header)
        if from_header is not None:
            verdict = TrackingVerdict(from_header, "header")
        elif np.hypot(*motion) > 0:
            stars, across = _field_stars(prep, det, motion)
            notes.details["fwhm_minor_pix"] = across
            verdict = tracking_from_stars(prep.data, prep.good, stars, motion, fwhm_pix=across,
                                          configured=configured)
    comet_trail, star_trail = (0.0, 0.0), (0.0, 0.0)
    if verdict.mode == "comet":
        star_trail = (-motion[0], -motion[1])
        if not np.isfinite(across):
            xy = np.column_stack([det.sx, det.sy])[~det.near_sat][:60]
            across = measure_fwhm_minor(prep.data, xy[:, 0], xy[:, 1], sky=det.sky)
    elif verdict.mode == "sidereal":
        comet_trail = motion
    notes.details["tracking"] = verdict.to_dict()
    notes.details["tracking_verdict"] = verdict
    notes.details["comet_trail_pix"], notes.details["star_trail_pix"] = comet_trail, star_trail
    notes.lap("tracking")
    return Tracking(verdict, motion, comet_trail, star_trail,
                    across if np.isfinite(across) else det.fwhm)


def follow_trails(prep, det, tracking, notes):
    """The detections with one entry per trailed star, at the trail's middle.

    Unchanged when the stars did not trail. Otherwise the brightest 600 detections (those
    the matching and the photometry use) are centred by their first moment in a stadium
    along the trail, and the fainter peaks of one trail, now at its middle too, are dropped.
    """
    if not tracking.stars_trailed:
        return det
    trail, fwhm = tracking.star_trail, max(tracking.fwhm_across, 1.0)
    n = min(len(det.sx), 600)
    sx, sy = det.sx[:n].copy(), det.sy[:n].copy()
    sx, sy = trail_centroids(prep.data, prep.good, sx, sy, trail, radius=1.5 * fwhm)
    # peaks of one trail now share its middle; the fainter ones go
    keep = merge_trail_detections(sx, sy, trail, radius=fwhm)
    sx, sy, near_sat = sx[keep], sy[keep], det.near_sat[:n][keep]
    sources = det.sources[:n][keep]
    notes.details["n_trail_duplicates"] = int(np.count_nonzero(~keep))
    notes.lap("trails")
    return type(det)(sources, sx, sy, near_sat, det.sky, det.sigma, fwhm)
