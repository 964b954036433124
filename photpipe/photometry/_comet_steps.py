"""Steps of a frame's photometry on the comet: star mask, centre, sky and aperture sums."""

from dataclasses import dataclass

import numpy as np

from .coma_apcorr import coma_aperture_correction
from .cometphot import comet_aperture_fluxes, fill_from_rings
from .locate import refine_comet_centre
from .sky import estimate_sky

__all__ = ["Cutout", "cutout", "Centre", "find_centre", "Apertures", "measure_apertures"]


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


@dataclass(frozen=True)
class Cutout:
    """The box around the comet that holds its sky annulus, and the field stars masked in it."""

    y0: int
    y1: int
    x0: int
    x1: int
    star_mask: np.ndarray
    max_shift: float        # pixels

    @property
    def box(self):
        """The cutout's slices into the frame."""
        return np.s_[self.y0:self.y1, self.x0:self.x1]


def _paint_trails(mask, x, y, radius, x0, y0, trail, fwhm):
    """Discs along each star's trail (one disc when there is none)."""
    n = max(1, int(np.ceil(np.hypot(*trail) / max(fwhm, 1.0))) + 1)
    for t in np.linspace(-0.5, 0.5, n) if n > 1 else (0.0,):
        _paint_discs(mask, x + t * trail[0], y + t * trail[1], radius, x0, y0)


def cutout(prep, det, lay, mat, zp, fwhm, opts, trail=(0.0, 0.0)):
    """The comet's cutout with the detected and catalogue stars near the comet masked.

    Stars trailed by ``trail`` are masked along it (discs at steps of at most one FWHM).
    """
    ny, nx = prep.data.shape
    x_pred, y_pred = lay.x_pred, lay.y_pred
    half = int(np.ceil(lay.ann_out)) + 2
    x0c, x1c = max(int(x_pred) - half, 0), min(int(x_pred) + half + 2, nx)
    y0c, y1c = max(int(y_pred) - half, 0), min(int(y_pred) + half + 2, ny)
    star_mask = np.zeros((y1c - y0c, x1c - x0c), bool)
    max_shift = prep.pix(opts.apertures.max_centroid_shift, "max_centroid_shift")
    sx, sy = det.sx, det.sy
    # detections other than the comet itself
    d_comet = np.hypot(sx - x_pred, sy - y_pred)
    in_cut = (sx >= x0c - 20) & (sx < x1c + 20) & (sy >= y0c - 20) & (sy < y1c + 20)
    others = in_cut.copy()
    others[np.flatnonzero(d_comet <= max(max_shift, 2.0 * fwhm))] = False
    peak_flux = np.asarray(det.sources["peak"], float) * 1.133 * fwhm**2

    def capped(radius, x, y):
        # a star's mask never reaches within 2 FWHM of the comet's predicted centre
        room = np.hypot(x - x_pred, y - y_pred) - 2.0 * fwhm
        return np.maximum(np.minimum(radius, room), 1.0 * fwhm)

    _paint_trails(star_mask, sx[others], sy[others],
                  capped(_star_mask_radius(peak_flux[others], fwhm, det.sigma), sx[others],
                         sy[others]), x0c, y0c, trail, fwhm)
    # catalogue stars near the comet that detection may have missed under the coma
    refs = prep.refs
    cx_ref, cy_ref = mat.wcs.world_to_pixel_values(refs.ra, refs.dec)
    cx_ref, cy_ref = np.asarray(cx_ref, float), np.asarray(cy_ref, float)
    near = (np.isfinite(cx_ref) & np.isfinite(refs.mag) & (cx_ref >= x0c) & (cx_ref < x1c)
            & (cy_ref >= y0c) & (cy_ref < y1c)
            & (np.hypot(cx_ref - x_pred, cy_ref - y_pred) > max(max_shift, 2.0 * fwhm)))
    ref_flux = prep.exptime * 10.0 ** (-0.4 * (refs.mag - zp.zp))
    bright = near & (ref_flux > 3.0 * det.sigma * fwhm)
    _paint_trails(star_mask, cx_ref[bright], cy_ref[bright],
                  capped(_star_mask_radius(ref_flux[bright], fwhm, det.sigma), cx_ref[bright],
                         cy_ref[bright]), x0c, y0c, trail, fwhm)
    return Cutout(y0c, y1c, x0c, x1c, star_mask, max_shift)


@dataclass(frozen=True)
class Centre:
    """The comet's measured centre (pixels) and how the centroid ended."""

    x: float
    y: float
    status: str


def find_centre(prep, det, lay, cut, fwhm, opts, notes):
    """Centroid of the comet near its predicted pixel, field stars and bad pixels masked."""
    full_mask = prep.bad.copy()
    full_mask[cut.box] |= cut.star_mask
    box = opts.apertures.centroid_box
    box = (int(round(prep.pix(box, "centroid_box"))) if box is not None
           else int(round(4 * fwhm))) | 1
    box = max(box, 5)
    xc, yc, status = refine_comet_centre(prep.data, full_mask, lay.x_pred, lay.y_pred,
                                         sky=det.sky, box=box, max_shift=cut.max_shift)
    notes.details["centroid_status"] = status
    # what the centroid saw, for its error (photpipe.orbit.centre_of_light_covariance)
    notes.details["centroid_box_pix"], notes.details["centroid_mask"] = box, full_mask
    notes.details["centroid_sky"] = det.sky
    notes.details["predicted_xy"] = (lay.x_pred, lay.y_pred)
    if status == "at_limit":
        notes.flag("centroid_at_limit")
    elif status == "failed":
        notes.flag("centroid_failed")
    notes.lap("comet_centroid")
    return Centre(xc, yc, status)


@dataclass(frozen=True)
class Apertures:
    """The comet's sky, its aperture sums (coma-corrected) and the cutout's pixel radii."""

    sky: object
    flux: np.ndarray
    flux_err: np.ndarray
    coma_factor: np.ndarray
    rho: np.ndarray          # distance of each cutout pixel from the centre
    sub: np.ndarray          # cutout minus sky
    var: np.ndarray          # cutout variance
    masked: np.ndarray       # bad or star pixels of the cutout
    xx: np.ndarray
    yy: np.ndarray


def measure_apertures(prep, lay, cut, centre, stars, cal, opts, notes, fail,
                      comet_trail=(0.0, 0.0)):
    """Sky in the annulus, the comet's sums with masked pixels filled from their rings.

    The coma correction blurs the coma with the PSF trailed by the comet's own motion
    (``comet_trail``, pixels) on frames that followed the stars.
    """
    ny, nx = prep.data.shape
    xc, yc, ann_in, ann_out = centre.x, centre.y, lay.ann_in, lay.ann_out
    data, var = prep.data[cut.box], prep.variance[cut.box]
    yy, xx = np.mgrid[cut.y0:cut.y1, cut.x0:cut.x1]
    rho = np.hypot(xx - xc, yy - yc)
    mask_all = prep.bad[cut.box] | cut.star_mask
    in_ann = (rho >= ann_in) & (rho <= ann_out) & ~mask_all
    sky = estimate_sky(data[in_ann], rho[in_ann], method=opts.apertures.sky_method,
                       inner=ann_in, outer=ann_out)
    notes.details["sky"] = sky.to_dict()
    full_ann_area = np.pi * (ann_out**2 - ann_in**2)
    if (xc - ann_out < -0.5 or xc + ann_out > nx - 0.5 or yc - ann_out < -0.5
            or yc + ann_out > ny - 0.5) and sky.n_pixels < 0.5 * full_ann_area:
        notes.flag("edge", "sky annulus")
    if not np.isfinite(sky.level):
        fail(prep.name, f"sky annulus ({ann_in:.0f}-{ann_out:.0f} pix) has no usable pixels")
    sub = data - sky.level
    inner = rho <= ann_in
    filled, filled_var = fill_from_rings(np.where(inner, sub, 0.0), np.where(inner, var, 0),
                                         mask_all | ~inner, rho)
    flux, flux_err = comet_aperture_fluxes(filled, filled_var, xc - cut.x0, yc - cut.y0,
                                           lay.radii, sky_error=sky.error)
    notes.details["flux_uncorrected_e"] = flux
    if cal.psf_model is not None:
        coma_factor = coma_aperture_correction(lay.radii, cal.psf_model,
                                               reference_radius=stars.radii[-1],
                                               annulus=stars.annulus, pixel=cal.psf_optical,
                                               trail=comet_trail)
        flux, flux_err = flux * coma_factor, flux_err * coma_factor
    else:
        coma_factor = np.ones(len(lay.radii))
    notes.lap("comet_apertures")
    return Apertures(sky, flux, flux_err, coma_factor, rho, sub, var, mask_all, xx, yy)
