"""The nucleus path on the generator's hard nights: trails, limits and bad input.

Truth comes from `photpipe.scenario.render_case`, which renders independently of the fitter
(Moffat averaged on a sub-pixel grid and along the trail, exact pixel integrals of the coma).
"""

import warnings
from dataclasses import replace

import numpy as np
import pytest
from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.nucleus import NUCLEUS_FLAGS, PSFModel, fit_nucleus, measure_psf
from photpipe.scenario import render_case
from photpipe.scenario.recovery import fit_case_frame

SCALE = 1.0 * u.arcsec / u.pix


def _fit(cf, psf=None, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PoorResultWarning)
        if psf is None:
            psf = measure_psf(cf.frame, cf.star_xy, exclude_xy=(cf.x_start, cf.y_start),
                              exclude_radius=20.0, star_trail=cf.star_trail,
                              methods=("moffat",))
        opts = dict(pixel_scale=SCALE, cutout=61, star_xy=cf.star_xy, profile=False,
                    comet_trail=cf.comet_trail, star_trail=cf.star_trail)
        opts.update(kw)
        return fit_nucleus(cf.frame, cf.x_start, cf.y_start, psf, **opts)


def _no_inf(fit):
    return all(not (isinstance(v, float) and np.isinf(v)) for v in fit.to_dict().values())


def test_trailed_psf_keeps_unit_flux_and_centre():
    psf = PSFModel.from_moffat(2.5, beta=3.0).with_trail((3.0, -4.0))
    img = psf.render((61, 61), 30.3, 29.6)
    yy, xx = np.mgrid[0:61, 0:61]
    assert img.sum() == pytest.approx(1.0, abs=1e-3)
    assert np.sum(img * xx) / img.sum() == pytest.approx(30.3, abs=0.01)
    assert np.sum(img * yy) / img.sum() == pytest.approx(29.6, abs=0.01)
    k = psf.kernel(2 * psf.half_size + 1)
    assert k.sum() == pytest.approx(1.0)


def test_trailed_stars_give_the_core_psf():
    # telescope on the comet: the stars trail 4"; the fitted Moffat is the core's (de-trailed)
    cf = render_case("comet_tracked", 11)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PoorResultWarning)
        psf = measure_psf(cf.frame, cf.star_xy, star_trail=cf.star_trail, methods=("moffat",))
    assert psf.trail == (0.0, 0.0) and psf.method == "moffat"
    assert psf.fwhm_major_pix == pytest.approx(cf.fwhm_pix, rel=0.03)
    assert psf.beta == pytest.approx(cf.beta, abs=0.3)


def test_header_wcs_off_by_six_arcsec_still_finds_the_nucleus():
    cf = render_case("wcs_offset", 21)
    assert np.hypot(cf.x_start - cf.x, cf.y_start - cf.y) > 4.0
    fit = _fit(cf)
    assert np.hypot(fit.x - cf.x, fit.y - cf.y) < 0.3
    assert "fit_at_bound" not in fit.flags and not fit.is_upper_limit


def test_bare_nucleus_fits_cleanly_with_coma_consistent_with_zero():
    for seed in range(3):
        fit = _fit(render_case("no_coma", 30 + seed))
        assert np.isfinite(fit.nucleus_flux_err_e) and fit.nucleus_flux_err_e > 0
        assert np.isfinite(fit.coma_k_err_e_s) and fit.coma_k_err_e_s > 0
        assert abs(fit.coma_k_e_s) < 3 * fit.coma_k_err_e_s
        assert not fit.is_upper_limit and _no_inf(fit)


def test_pure_coma_claims_no_nucleus():
    for seed in range(3):
        cf = render_case("no_nucleus", 40 + seed)
        fit = _fit(cf)
        assert fit.is_upper_limit
        assert np.isfinite(fit.upper_limit_e) and fit.upper_limit_e > 0
        assert fit.nucleus_flux_e_s == pytest.approx(fit.upper_limit_e / cf.exptime_s)
        assert np.isfinite(fit.nucleus_mag) or fit.nucleus_mag != fit.nucleus_mag  # no inf


def test_nan_pixels_over_the_core_leave_the_nucleus_out_with_the_reason():
    cf = render_case("nominal", 50)
    ix, iy = int(round(cf.x)), int(round(cf.y))
    data = cf.frame.data.copy()
    data[iy - 2:iy + 3, ix - 2:ix + 3] = np.nan
    frame = replace(cf.frame, data=data)
    fit = _fit(replace(cf, frame=frame))
    assert "core_masked" in fit.flags
    assert np.isnan(fit.nucleus_flux_e_s) and np.isnan(fit.nucleus_mag)
    assert _no_inf(fit)
    assert np.isfinite(fit.coma_k_e_s)  # the coma is still measured from the rest


def test_no_usable_psf_star_makes_an_upper_limit():
    cf = render_case("nominal", 51)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PoorResultWarning)
        psf = measure_psf(cf.frame, np.zeros((0, 2)), fallback_fwhm=2.5)
    fit = _fit(cf, psf=psf)
    assert "psf_fallback" in fit.flags and fit.is_upper_limit
    assert np.isfinite(fit.upper_limit_e) and fit.upper_limit_e > cf.nucleus_flux_e


def test_catalogued_star_on_the_nucleus_makes_an_upper_limit():
    cf = render_case("nominal", 52)
    stars = np.vstack([cf.star_xy, [[cf.x + 1.5, cf.y - 1.0]]])
    fit = _fit(cf, star_xy=stars)
    assert "star_near_nucleus" in fit.flags and fit.is_upper_limit


def test_every_flag_word_is_registered():
    fits = [fit_case_frame(render_case(name, 60), cutout=61)
            for name in ("nominal", "no_nucleus", "no_coma")]
    for fit in fits:
        assert set(fit.flags) <= set(NUCLEUS_FLAGS)


@pytest.mark.parametrize("share", [0.02, 0.2])
def test_catalogued_star_beside_the_nucleus_is_fitted_not_masked(share):
    # A catalogued star 2.7 FWHM from the nucleus: its 3-FWHM mask would cover the nucleus, which
    # was then left out with no value and no limit (core_masked). It is fitted with the nucleus
    # instead; the truth is the rendered flux (Moffat 1969 star added on the pixel grid).
    from photpipe.frames.types import CalibratedFrame
    from photpipe.models.moffat import moffat_pixel_image

    cf = render_case("nominal", 2)
    angle = 0.7
    sx = cf.x + 2.7 * cf.fwhm_pix * np.cos(angle)
    sy = cf.y + 2.7 * cf.fwhm_pix * np.sin(angle)
    star = share * cf.nucleus_flux_e * moffat_pixel_image(
        cf.frame.data.shape, sx, sy, fwhm=cf.fwhm_pix, beta=cf.beta, ellipticity=cf.ellipticity,
        angle=np.deg2rad(cf.angle_deg))
    rng = np.random.default_rng(2)
    var = cf.frame.variance + star
    data = cf.frame.data + star + rng.normal(size=star.shape) * np.sqrt(star)
    frame = CalibratedFrame(cf.frame.info, data, var, cf.frame.quality)
    star_xy = np.vstack([cf.star_xy, [sx, sy]])
    fit = _fit(replace(cf, frame=frame, star_xy=star_xy))
    assert "star_fitted_near_nucleus" in fit.flags
    assert "core_masked" not in fit.flags
    assert np.isfinite(fit.nucleus_flux_e) and fit.nucleus_flux_err_e > 0
    assert abs(fit.nucleus_flux_e - cf.nucleus_flux_e) < 3 * fit.nucleus_flux_err_e
