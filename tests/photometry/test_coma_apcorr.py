"""The aperture correction of a 1/ρ coma seen through the PSF."""

import numpy as np
import pytest
from astropy import units as u
from scipy import integrate, special

from photpipe.models import moffat_encircled
from photpipe.photometry.coma_apcorr import (
    MoffatGrowth,
    coma_aperture_correction,
    fit_moffat_growth,
)

from ._synthetic import measure_recording


class _Gaussian:
    """A circular Gaussian PSF with the interface `coma_aperture_correction` uses."""

    def __init__(self, sigma):
        self.sigma = sigma
        self.fwhm = 2.0 * np.sqrt(2.0 * np.log(2.0)) * sigma

    def image(self, half, step):
        n = int(np.ceil(half / step))
        c = np.arange(-n, n + 1) * step
        img = np.exp(-(c[np.newaxis, :] ** 2 + c[:, np.newaxis] ** 2) / (2 * self.sigma**2))
        return img / img.sum()

    def measured_fraction(self, r, annulus):
        return 1.0


def _gaussian_blurred_flux(radius, sigma):
    # 1/ρ convolved with a 2-D Gaussian, through the Hankel transform of 1/ρ (2π/k) and
    # ∫ exp(-a k²) J0(k ρ) dk = ½ sqrt(π/a) exp(-ρ²/8a) I0(ρ²/8a) (Gradshteyn & Ryzhik 2007,
    # 6.618.1; from memory): Σ(ρ) = sqrt(π/2)/σ e^(-x) I0(x), x = ρ²/(4σ²). It tends to 1/ρ.
    def sb(rho):
        return np.sqrt(np.pi / 2.0) / sigma * special.ive(0, rho**2 / (4.0 * sigma**2))
    return 2.0 * np.pi * integrate.quad(lambda rho: sb(rho) * rho, 0.0, radius, limit=200)[0]


@pytest.mark.parametrize("radius_fwhm", [1.5, 2.0, 3.0, 4.0, 8.0])
def test_gaussian_psf_matches_the_closed_form_convolution(radius_fwhm):
    psf = _Gaussian(1.3)
    radius = radius_fwhm * psf.fwhm
    factor = coma_aperture_correction([radius], psf, reference_radius=1.0, annulus=(1.0, 2.0))
    expected = 2.0 * np.pi * radius / _gaussian_blurred_flux(radius, psf.sigma)
    assert factor[0] == pytest.approx(expected, rel=2e-4)   # 12 samples per FWHM


def test_second_moment_limit_for_large_apertures():
    # for R >> σ the flux a smooth PSF moves out of a K/ρ coma is π K σ² / R (flux change
    # ∮ (σ²/2) ∇Σ · n dl, second-order expansion; common practice): factor ≈ 1 + σ²/(2R²)
    psf = _Gaussian(1.0)
    radius = 12.0
    factor = coma_aperture_correction([radius], psf, reference_radius=1.0, annulus=(1.0, 2.0))
    assert factor[0] - 1.0 == pytest.approx(1.0 / (2 * radius**2), rel=0.02)


def test_moffat_encircled_energy():
    # EE(r) = 1 - (1 + r²/α²)^(1-β) (Moffat 1969, A&A 3, 455); at r = FWHM/2 and β = 3,
    # 1 + r²/α² = 2^(1/3)
    psf = MoffatGrowth(1.7, 3.0)
    assert moffat_encircled(psf.fwhm / 2, psf.alpha, psf.beta) == pytest.approx(
        1.0 - 2.0 ** (-2.0 / 3.0), rel=1e-12)


def test_curve_of_growth_fit_recovers_the_moffat():
    truth = MoffatGrowth(2.2, 2.7)
    radii = truth.fwhm * np.array([1.0, 1.5, 2.0, 3.0, 4.0])
    annulus = (5 * truth.fwhm, 8 * truth.fwhm)
    rng = np.random.default_rng(3)
    fluxes = truth.measured_fraction(radii, annulus) * (1 + 1e-3 * rng.standard_normal((9, 5)))
    fit = fit_moffat_growth(radii, 1e5 * fluxes, annulus=annulus, fwhm_guess=3.0)
    assert fit.fwhm == pytest.approx(truth.fwhm, rel=0.02)
    assert fit.beta == pytest.approx(truth.beta, rel=0.1)
    assert fit_moffat_growth(radii, fluxes[:2], annulus=annulus, fwhm_guess=3.0) is None


def test_correction_falls_with_radius_to_the_star_scale():
    psf = MoffatGrowth(2.0, 3.0)
    ref, annulus = 4 * psf.fwhm, (5 * psf.fwhm, 8 * psf.fwhm)
    factor = coma_aperture_correction(psf.fwhm * np.array([1.0, 2.0, 4.0, 8.0, 30.0]), psf,
                                      reference_radius=ref, annulus=annulus)
    assert np.all(np.diff(factor) < 0)
    assert factor[-1] == pytest.approx(psf.measured_fraction(ref, annulus), abs=5e-4)


#: Aperture radii in units of the scenario's FWHM (2.5 arcsec), from 2 to 12 FWHM.
_RADII_FWHM = np.array([2.0, 2.5, 3.0, 4.0, 6.0, 8.0, 12.0])


@pytest.fixture(scope="module")
def afrho_by_radius(standard_frame):
    s = standard_frame
    out = {}
    for corrected in (True, False):
        r, _ = measure_recording(s.frame, s.stars, s.geometry, apertures_km=[10000] * u.km,
                                 apertures_arcsec=_RADII_FWHM * 2.5 * u.arcsec,
                                 coma_correction=corrected)
        out[corrected] = r
    return s, out


def test_afrho_is_flat_with_aperture_radius_down_to_two_fwhm(afrho_by_radius):
    # truth: the scenario's coma of known Afρ (photpipe.scenario renders K/ρ through the PSF)
    s, results = afrho_by_radius
    rows = results[True].comet[1:]
    ratio = rows["afrho_cm"].to_value(u.cm) / s.truth.afrho_cm
    np.testing.assert_allclose(ratio, 1.0, atol=0.01)
    assert ratio.max() - ratio.min() < 0.01
    assert np.all(rows["coma_apcorr_mag"].to_value(u.mag)[:3] > 0.02)


def test_without_the_correction_small_apertures_are_low(afrho_by_radius):
    s, results = afrho_by_radius
    rows = results[False].comet[1:]
    ratio = rows["afrho_cm"].to_value(u.cm) / s.truth.afrho_cm
    assert ratio[0] < 0.95 and ratio[-1] > 0.99
    np.testing.assert_array_equal(rows["coma_apcorr_mag"].to_value(u.mag), 0.0)


def test_correction_is_applied_to_the_magnitudes(afrho_by_radius):
    _, results = afrho_by_radius
    on, off = results[True].comet, results[False].comet
    np.testing.assert_allclose((off["mag"] - on["mag"]).to_value(u.mag),
                               on["coma_apcorr_mag"].to_value(u.mag), atol=1e-9)


def test_implausible_curves_of_growth_are_refused():
    # a sky error of 0.5 % of a star's flux per pixel bends the curve as a blend or a coma does
    # on a small frame: unconstrained, the fit runs to β = 1.2 and would give a coma correction of
    # -0.4 mag at the largest aperture (the campaign test nights before the fix)
    truth = MoffatGrowth(1.7, 3.0)
    radii = truth.fwhm * np.array([1.0, 1.5, 2.0, 3.0, 4.0])
    annulus = (5 * truth.fwhm, 8 * truth.fwhm)
    clean = np.tile(truth.measured_fraction(radii, annulus), (6, 1))
    bent = clean + 0.005 * np.pi * radii**2
    assert fit_moffat_growth(radii, clean, annulus=annulus, fwhm_guess=truth.fwhm) is not None
    assert fit_moffat_growth(radii, bent, annulus=annulus, fwhm_guess=truth.fwhm) is None
    loose = fit_moffat_growth(radii, bent, annulus=annulus, fwhm_guess=truth.fwhm,
                              beta_range=(1.0, 50.0), fwhm_range=(0.0, np.inf))
    assert loose.beta < 1.5
    # and a width far from the measured FWHM is refused too
    assert fit_moffat_growth(radii, clean, annulus=annulus, fwhm_guess=2.0 * truth.fwhm) is None


@pytest.mark.parametrize("fwhm", [1.6, 2.0, 3.0])
def test_moffat_from_measured_fwhm_inverts_the_measurement(fwhm):
    # truth: stars rendered by the scenario's own Moffat renderer (photpipe.scenario.moffat_stamp,
    # β = 3), measured with measure_fwhm as the frames are; the Gaussian fit reads 15-24 % wide
    from photpipe.photometry import measure_fwhm, moffat_from_measured_fwhm
    from photpipe.scenario import moffat_stamp

    offsets = [(0.0, 0.0), (0.3, 0.1), (0.5, 0.5), (-0.2, 0.4), (0.1, -0.35)]
    measured = np.median([measure_fwhm(1e5 * moffat_stamp(41, dx, dy, fwhm, 3.0), [20 + dx],
                                       [20 + dy], sky=0.0) for dx, dy in offsets])
    assert measured > 1.1 * fwhm
    psf = moffat_from_measured_fwhm(measured, 3.0)
    assert psf.beta == 3.0
    assert psf.fwhm == pytest.approx(fwhm, rel=0.03)


def test_optical_psf_is_integrated_over_the_pixel():
    # truth: the scenario's coma (exact pixel integral of K/ρ convolved with a 1.733-pixel Moffat,
    # β = 3; tests/photometry/test_small_frame.py) summed in radii 3.34, 6.69 and 2.67 pixels:
    # 0.087, 0.021, 0.141 mag. The optical PSF alone gives 0.077, 0.018, 0.120; with the pixel
    # 0.082, 0.019, 0.129.
    psf = MoffatGrowth(1.733 / (2.0 * np.sqrt(2.0 ** (1.0 / 3.0) - 1.0)), 3.0)
    radii = [3.34, 6.69, 2.67]
    kw = dict(reference_radius=60.0, annulus=(70.0, 80.0))
    truth = np.array([0.087, 0.021, 0.141])
    optical = 2.5 * np.log10(coma_aperture_correction(radii, psf, **kw))
    pixel = 2.5 * np.log10(coma_aperture_correction(radii, psf, pixel=True, **kw))
    assert np.all(np.abs(pixel - truth) < np.abs(optical - truth))
    np.testing.assert_allclose(pixel, truth, atol=0.015)
