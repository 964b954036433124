"""A 160x160 frame on which every field star stands on the coma, against the scenario's truth.

The settings follow the small campaign test nights (``tests/campaign/_nights.py``): 1.5"/pix,
seeing 2.6", zero point 23.8, Afρ 235 cm at r_h 1.35 AU and Δ 0.55 AU, stars of 15-19 mag at
about the nights' density. Before the stars were measured with the comet's symmetric light taken
out, these five frames gave zero points 0.06-2.9 mag above the truth (curve-of-growth corrections
of 1.1-4.9) and coma corrections of -1.8 to +0.46 mag against a truth of 0.02-0.14 mag.
"""

import numpy as np
import pytest
from astropy import units as u
from astropy.time import Time
from photutils.aperture import CircularAperture, aperture_photometry

from photpipe.scenario import CometSpec, DetectorSpec, Instrument, SceneSpec, Seeing, render_frame

from ._synthetic import POINTING, make_synthetic, measure_recording

_SMALL = dict(shape=(160, 160), pixel_scale=1.5 * u.arcsec, afrho=235 * u.cm, r_h=1.35 * u.au,
              delta=0.55 * u.au, n_stars=75, mag_range=(15.0, 19.0), zero_point=23.8,
              exptime=40 * u.s, sky_rate=43 * u.electron / u.s, fwhm=2.6 * u.arcsec)
_APERTURES = dict(apertures_km=[2000, 4000] * u.km, apertures_arcsec=[4.0] * u.arcsec,
                  min_stars=3)


def _true_coma_correction(radii_pix):
    """2πKρ over the aperture sum of the scenario's noise-free coma (no nucleus, no sky)."""
    inst = Instrument(shape=_SMALL["shape"], pixel_scale=_SMALL["pixel_scale"],
                      hot_pixel_fraction=0.0, dead_pixel_fraction=0.0)
    comet = CometSpec(ra=POINTING.ra, dec=POINTING.dec, afrho=_SMALL["afrho"],
                      r_h=_SMALL["r_h"], delta=_SMALL["delta"], m_sun=-27.15)
    scene = SceneSpec(pointing=POINTING, comet=comet, zero_point=_SMALL["zero_point"],
                      sky_rate=0 * u.electron / u.s, seeing=Seeing(fwhm=_SMALL["fwhm"]))
    _, truth = render_frame("science", inst, time=Time("2026-11-30T04:00:00"),
                            exptime=_SMALL["exptime"], scene=scene,
                            detector=DetectorSpec(cosmic_rays=False), rng=1)
    apertures = [CircularAperture((truth.comet_x, truth.comet_y), r=float(r)) for r in radii_pix]
    sums = aperture_photometry(truth.signal, apertures, method="exact")
    seen = np.array([float(sums[f"aperture_sum_{k}"][0]) for k in range(len(radii_pix))])
    return 2.5 * np.log10(2.0 * np.pi * truth.coma_k_e * np.asarray(radii_pix) / seen)


@pytest.fixture(scope="module")
def small_frames():
    out = []
    for seed in (1, 2, 3, 4, 6):
        s = make_synthetic(seed=seed, **_SMALL)
        result, _ = measure_recording(s.frame, s.stars, s.geometry, **_APERTURES)
        out.append((s, result))
    return out


def test_zero_point_agrees_with_the_truth_within_its_error(small_frames):
    # truth: the zero point the scenario rendered (23.8). Measured after the fix: deviations
    # -0.025 to +0.050 mag against errors of 0.016-0.109 (|dev| / err ≤ 0.6); before it,
    # +0.06 to +2.9 mag, 4-56 times the stated error, on 1-14 stars.
    for s, r in small_frames:
        zp = r.zero_point
        assert zp.n_stars >= 5, s.truth.time
        assert abs(zp.zp - s.truth.zero_point) < 2.5 * zp.zp_err
        assert abs(zp.zp - s.truth.zero_point) < 0.08
        # a Moffat star gains light with radius: the curve-of-growth factor is at least 1
        assert zp.aperture_correction > 0.98


def test_aperture_correction_error_is_part_of_the_zero_point_error(small_frames):
    for _, r in small_frames:
        zp = r.zero_point
        assert zp.aperture_correction_err > 0
        assert zp.zp_err >= 2.5 / np.log(10) * zp.aperture_correction_err - 1e-12


def test_coma_correction_matches_the_rendered_coma(small_frames):
    # truth: the scenario's coma (exact pixel integral of K/ρ convolved with the Moffat PSF),
    # summed in the same apertures: 0.087, 0.021, 0.141 mag. Measured after the fix: within
    # 0.023 mag of it for every frame and aperture; before it, -1.8 to +0.46 mag.
    s0, r0 = small_frames[0]
    radii = r0.comet["rho_arcsec"].to_value(u.arcsec) / _SMALL["pixel_scale"].to_value(u.arcsec)
    truth = _true_coma_correction(radii)
    assert np.all(truth > 0.01)
    for _, r in small_frames:
        measured = r.comet["coma_apcorr_mag"].to_value(u.mag)
        assert np.all(measured >= 0.0)
        np.testing.assert_allclose(measured, truth, atol=0.04)


def test_fwhm_is_measured_on_stars_clear_of_the_comet(small_frames):
    # truth: the scenario's seeing, 2.6" = 1.733 pix. measure_fwhm reports a Gaussian fit, about
    # 20 % above a Moffat β = 3 star's FWHM at this sampling (see its Notes); measured 1.24-1.36
    # times the truth. Before the fix the brightest detections, many of them coma structure or
    # stars on it, gave up to 2.2 times the truth (seed 4).
    for s, r in small_frames:
        ratio = r.details["fwhm_pix"] / s.truth.fwhm_pix
        assert 1.1 < ratio < 1.45


def test_fallback_psf_is_stated_and_close_to_the_truth(small_frames):
    # seeds 3, 4 and 6: the curve of growth does not fix both Moffat parameters
    fallback = [(s, r) for s, r in small_frames if "psf_fallback" in r.flags]
    assert len(fallback) >= 2
    s0, r0 = small_frames[0]
    radii = r0.comet["rho_arcsec"].to_value(u.arcsec) / _SMALL["pixel_scale"].to_value(u.arcsec)
    truth = _true_coma_correction(radii)
    for _, r in fallback:
        assert r.details["psf_moffat"]["beta"] == 3.0
        measured = r.comet["coma_apcorr_mag"].to_value(u.mag)
        # measured after the fix: within 0.017 mag of the rendered coma's correction
        np.testing.assert_allclose(measured, truth, atol=0.03)
    s, _ = fallback[0]
    _, messages = measure_recording(s.frame, s.stars, s.geometry, **_APERTURES)
    text = "; ".join(messages)
    assert "psf_fallback: " in text and "beta = 3" in text and "measured FWHM" in text
