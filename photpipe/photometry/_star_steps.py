"""Steps of a frame's photometry on the field stars: fluxes, aperture correction, zero point."""

from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.table import QTable
from scipy.spatial import cKDTree

from .coma_apcorr import MoffatGrowth, fit_moffat_growth, moffat_from_measured_fwhm
from .coma_background import ring_profile, subtract_rings_near
from .detection import measure_fwhm
from .starphot import aperture_correction, aperture_correction_error, measure_star_fluxes
from .trailed import measure_trailed_fluxes
from .trailed_psf import fit_trailed_moffat, measured_fwhm_of_moffat
from .zeropoint import fit_zero_point

__all__ = ["StarPhotometry", "measure_stars", "Calibration", "calibrate"]

#: Moffat β of the fallback PSF: a seeing-limited wing between the β ≈ 2.5 and 4.765 limits
#: discussed by Trujillo et al. (2001, MNRAS 328, 977; from memory); the scenario renders β = 3.
_FALLBACK_BETA = 3.0
_MAG_FACTOR = 2.5 / np.log(10.0)


@dataclass(frozen=True)
class StarPhotometry:
    """Fluxes of the matched stars in a few apertures, which are usable, and the correction."""

    det_m: np.ndarray        # (n, 2) pixel positions of the measured stars
    matched_ref: np.ndarray  # their reference-star indices
    fwhm: float
    radii: np.ndarray        # star aperture radii (pix)
    k_phot: int              # index of the photometry aperture in radii
    phot: object             # table of measure_star_fluxes
    usable: np.ndarray       # bool per star: fit for the zero point
    apcorr: float
    apcorr_err: float
    trail: tuple = (0.0, 0.0)  # the stars' trail (pixels): apertures are stadiums along it
    psf_fit: tuple | None = None  # (alpha, beta) of the untrailed PSF, from trailed stars

    @property
    def annulus(self):
        """The stars' sky annulus (pix)."""
        return (5.0 * self.fwhm, 8.0 * self.fwhm)

    def flux(self, k):
        """Flux and error (electrons) in aperture ``k``."""
        return (np.asarray(self.phot[f"flux_{k}"], float),
                np.asarray(self.phot[f"flux_err_{k}"], float))


def _refined_fwhm(star_data, det_m, near_sat, lay, fwhm, notes):
    # the FWHM again, from catalogue stars clear of the comet: the first estimate takes the
    # brightest detections, and on a small frame many of those are coma structure or stars on it
    clear = (np.hypot(det_m[:, 0] - lay.x_pred, det_m[:, 1] - lay.y_pred) > lay.ann_in) \
        & ~near_sat
    if np.count_nonzero(clear) >= 3:
        refined = measure_fwhm(star_data, det_m[clear, 0], det_m[clear, 1], sky=0.0)
        if np.isfinite(refined):
            notes.details["fwhm_detections_pix"] = fwhm
            fwhm = notes.details["fwhm_pix"] = refined
    return fwhm


def _trailed_fwhm(star_data, prep, det_m, near_sat, lay, trail, fwhm, notes):
    """The untrailed PSF (alpha, beta) and its measured FWHM, from stars clear of the comet."""
    clear = (np.hypot(det_m[:, 0] - lay.x_pred, det_m[:, 1] - lay.y_pred) > lay.ann_in) \
        & ~near_sat
    fit = fit_trailed_moffat(star_data, prep.variance, prep.good, det_m[clear, 0],
                             det_m[clear, 1], trail, fwhm_guess=fwhm)
    if fit is None:
        return None, fwhm
    notes.details["fwhm_detections_pix"] = fwhm
    fwhm = notes.details["fwhm_pix"] = measured_fwhm_of_moffat(*fit)
    return fit, fwhm


def _usable(prep, det, det_m, phot, radii, fwhm, lay, k_phot, trail=(0.0, 0.0)):
    """Stars clear of masks, neighbours, the edge and the comet, with a positive flux."""
    ny, nx = prep.data.shape
    half = 0.5 * float(np.hypot(*trail))
    # isolation: no other detection inside the large aperture plus a FWHM
    counts = np.array([len(v) for v in cKDTree(np.column_stack([det.sx, det.sy]))
                       .query_ball_point(det_m, r=radii[-1] + fwhm + half)]) \
        if len(det_m) else np.zeros(0, int)
    reach = 8 * fwhm + half
    edge_m = ((det_m[:, 0] < reach) | (det_m[:, 0] > nx - 1 - reach)
              | (det_m[:, 1] < reach) | (det_m[:, 1] > ny - 1 - reach))
    far_from_comet = np.hypot(det_m[:, 0] - lay.x_pred, det_m[:, 1] - lay.y_pred) > lay.ann_in
    f_small = np.asarray(phot[f"flux_{k_phot}"], float)
    return ((np.asarray(phot["n_masked"]) == 0) & (counts <= 1) & ~edge_m & far_from_comet
            & np.isfinite(f_small) & (f_small > 0) & np.isfinite(phot["sky"]))


def _reach(fwhm, cal):
    """Half side (pixels) of the square about a star that its photometry reads.

    The sky annulus reaches 8 FWHM, the apertures 4 FWHM or the photometry aperture's, the
    FWHM's own boxes 7 pixels.
    """
    return max(int(np.ceil(max(8.0, cal.star_aperture_fwhm) * fwhm)) + 3, 8)


def _minus_rings(prep, rings, lay, det_m, reach):
    """The frame minus the coma's ring medians, about the stars to be measured.

    ``det_m`` None: over the whole frame (trailed stars' stadiums and fits reach farther).
    """
    return subtract_rings_near(prep.data, rings, lay.x_pred, lay.y_pred, det_m, reach)


def measure_stars(prep, det, mat, lay, opts, notes, fail, trail=(0.0, 0.0)):
    """Aperture photometry of the brightest matched stars on the frame minus the coma's rings.

    The stars are measured with the comet's symmetric light taken out: on a small frame their
    local annuli would otherwise miss the coma under them (see coma_background). Stars
    trailed by ``trail`` (the telescope followed the comet) are measured in stadiums along it,
    and their FWHM is that of the untrailed PSF fitted to them.
    """
    cal = opts.calibration
    # the brightest matched stars are plenty for the zero point; cap the photometry cost
    keep_m = np.argsort(prep.refs.mag[mat.matched_ref], kind="stable")[:cal.max_zp_stars]
    i_det, matched_ref = mat.i_det[keep_m], mat.matched_ref[keep_m]
    det_m = mat.det_xy[i_det]
    rings = ring_profile(prep.data, prep.good, lay.x_pred, lay.y_pred)
    trailed = bool(np.hypot(*trail) > 0)
    psf_fit = None
    if trailed:
        star_data = _minus_rings(prep, rings, lay, None, None)
        psf_fit, fwhm = _trailed_fwhm(star_data, prep, det_m, det.near_sat[i_det], lay, trail,
                                      det.fwhm, notes)
    else:
        star_data = _minus_rings(prep, rings, lay, det_m, _reach(det.fwhm, cal))
        fwhm = _refined_fwhm(star_data, det_m, det.near_sat[i_det], lay, det.fwhm, notes)
        if _reach(fwhm, cal) > _reach(det.fwhm, cal):
            star_data = _minus_rings(prep, rings, lay, det_m, _reach(fwhm, cal))
    radii = np.unique(np.array([1.0, cal.star_aperture_fwhm, 2.0, 3.0, 4.0]) * fwhm)
    k_phot = int(np.flatnonzero(np.isclose(radii, cal.star_aperture_fwhm * fwhm))[0])
    k_big = len(radii) - 1
    if trailed:
        phot = measure_trailed_fluxes(star_data, prep.variance, prep.bad, det_m[:, 0],
                                      det_m[:, 1], trail=trail, radii=radii,
                                      annulus=(5.0 * fwhm, 8.0 * fwhm))
    else:
        phot = measure_star_fluxes(star_data, prep.variance, prep.bad, det_m[:, 0],
                                   det_m[:, 1], radii=radii, annulus=(5.0 * fwhm, 8.0 * fwhm))
    usable = _usable(prep, det, det_m, phot, radii, fwhm, lay, k_phot, trail)
    if not np.any(usable):
        fail(prep.name, f"{len(i_det)} reference stars matched but none is usable for the zero "
                        "point (saturated, blended, masked or at the edge)")
    f_small = np.asarray(phot[f"flux_{k_phot}"], float)
    f_small_err = np.asarray(phot[f"flux_err_{k_phot}"], float)
    f_big = np.asarray(phot[f"flux_{k_big}"], float)
    f_big_err = np.asarray(phot[f"flux_err_{k_big}"], float)
    apcorr, apcorr_scatter, n_apcorr = aperture_correction(f_small[usable], f_big[usable],
                                                           f_small_err[usable])
    if not np.isfinite(apcorr):
        apcorr = 1.0
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio_err = np.hypot(f_small_err / f_small, f_big_err / f_big)[usable]
        snr_u = (f_small / f_small_err)[usable]
    # aperture_correction takes the n_apcorr stars of highest signal-to-noise
    ratio_err = ratio_err[np.argsort(-snr_u, kind="stable")][:n_apcorr]
    apcorr_err = aperture_correction_error(apcorr_scatter, n_apcorr, ratio_err)
    notes.details["aperture_correction_scatter"] = apcorr_scatter
    return StarPhotometry(det_m, matched_ref, fwhm, radii, k_phot, phot, usable, apcorr,
                          apcorr_err, tuple(trail), psf_fit)


def _psf_from_growth(stars, notes):
    """The Moffat fitted to the stars' curve of growth, or the fallback from the FWHM.

    Trailed stars give the Moffat fitted to them with the trail in the model (their curve of
    growth in stadiums mixes the PSF with the trail); it is the optical PSF, which the coma
    correction integrates over the pixel.
    """
    if np.hypot(*stars.trail) > 0:
        return _psf_of_trailed(stars, notes)
    f_small, f_small_err = stars.flux(stars.k_phot)
    growth = np.column_stack([stars.flux(k)[0] for k in range(len(stars.radii))])[stars.usable]
    snr = f_small[stars.usable] / f_small_err[stars.usable]
    best = np.argsort(-snr)[:30]
    psf_model = fit_moffat_growth(stars.radii, growth[best], annulus=stars.annulus,
                                  fwhm_guess=stars.fwhm)
    optical = False
    if psf_model is None:
        # the optical PSF whose stars measure_fwhm would measure as this frame's; the coma
        # correction integrates it over the pixel
        psf_model, optical = moffat_from_measured_fwhm(stars.fwhm, _FALLBACK_BETA), True
        notes.flag("psf_fallback", f"{len(best)} usable star(s); measured FWHM "
                                   f"{stars.fwhm:.2f} pix, Moffat FWHM {psf_model.fwhm:.2f} pix")
    notes.details["psf_moffat"] = {"alpha_pix": psf_model.alpha, "beta": psf_model.beta,
                                   "fwhm_pix": float(psf_model.fwhm), "optical": optical}
    return psf_model, optical


def _psf_of_trailed(stars, notes):
    if stars.psf_fit is not None:
        psf_model, reason = MoffatGrowth(*stars.psf_fit), ""
        if not 1.5 <= psf_model.beta <= 10.0:
            psf_model, reason = None, f"fitted beta {psf_model.beta:.2f}"
    else:
        psf_model, reason = None, "no trailed star could be fitted"
    if psf_model is None:
        psf_model = moffat_from_measured_fwhm(stars.fwhm, _FALLBACK_BETA)
        notes.flag("psf_fallback", f"{reason}; measured FWHM {stars.fwhm:.2f} pix")
    notes.details["psf_moffat"] = {"alpha_pix": psf_model.alpha, "beta": psf_model.beta,
                                   "fwhm_pix": float(psf_model.fwhm), "optical": True,
                                   "trail_pix": tuple(stars.trail)}
    return psf_model, True


@dataclass(frozen=True)
class Calibration:
    """The zero point, the star table, and the PSF model for the coma correction."""

    zp: object
    stars: QTable
    psf_model: object
    psf_optical: bool
    use_colour: bool


def calibrate(prep, stars, wcs, opts, notes):
    """Instrumental magnitudes of the stars, the zero-point fit and the star table."""
    cal, refs, m = opts.calibration, prep.refs, stars.matched_ref
    psf_model, psf_optical = (_psf_from_growth(stars, notes) if cal.coma_correction
                              else (None, False))
    f_small, f_small_err = stars.flux(stars.k_phot)
    flux_s = f_small * stars.apcorr / prep.exptime
    flux_s_err = f_small_err * stars.apcorr / prep.exptime
    with np.errstate(invalid="ignore", divide="ignore"):
        inst = -2.5 * np.log10(flux_s)
        inst_err = _MAG_FACTOR * flux_s_err / flux_s
    usable = stars.usable
    use_colour = cal.fit_colour_term
    if cal.fit_colour_term and np.count_nonzero(usable & np.isfinite(refs.colour[m])) < 3:
        notes.flag("colour_term_dropped")
        use_colour = False
    zp, used_sub, resid_sub = fit_zero_point(
        inst[usable], inst_err[usable], refs.mag[m][usable], refs.mag_err[m][usable],
        refs.colour[m][usable], fit_colour_term=use_colour, band=cal.band,
        colour_name=cal.colour, aperture_correction=stars.apcorr,
        aperture_correction_err=stars.apcorr_err)
    if zp.n_stars < cal.min_stars:
        notes.flag("few_stars", f"{zp.n_stars} < {cal.min_stars}")
    det_m = stars.det_m
    used = np.zeros(len(det_m), bool)
    used[np.flatnonzero(usable)[used_sub]] = True
    residual = np.full(len(det_m), np.nan)
    residual[usable] = resid_sub
    sky_m = wcs.pixel_to_world_values(det_m[:, 0], det_m[:, 1])
    table = QTable({
        "id": refs.ids[m],
        "ra": np.asarray(sky_m[0]) * u.deg, "dec": np.asarray(sky_m[1]) * u.deg,
        "x": det_m[:, 0] * u.pix, "y": det_m[:, 1] * u.pix,
        "flux": flux_s * u.electron / u.s, "flux_err": flux_s_err * u.electron / u.s,
        "inst_mag": inst * u.mag, "inst_mag_err": inst_err * u.mag,
        "cat_mag": refs.mag[m] * u.mag, "cat_mag_err": refs.mag_err[m] * u.mag,
        "colour": refs.colour[m] * u.mag, "residual": residual * u.mag, "used": used,
    })
    notes.lap("zero_point")
    return Calibration(zp, table, psf_model, psf_optical, use_colour)
