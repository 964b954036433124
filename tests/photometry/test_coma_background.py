"""The comet's ring-median light, taken out before the field stars are measured."""

import numpy as np
import pytest

from photpipe.models.coma import coma_image
from photpipe.photometry import azimuthal_median_model, measure_star_fluxes
from photpipe.scenario import moffat_stamp

_SHAPE = (160, 160)
_COMET = (80.3, 79.6)
_K = 4.0e4           # coma strength, e- per pixel at ρ = 1 pixel (Σ = K/ρ)
_SKY = 1700.0
_FWHM = 2.6           # pixels
#: Stars on the coma at 30-60 pixels from the nucleus: (x, y, total flux in electrons).
_STARS = [(120.2, 81.1, 2.0e4), (79.7, 35.4, 1.5e4), (32.6, 110.3, 2.5e4), (118.1, 128.9, 1.0e4),
          (45.4, 44.8, 2.0e4), (126.5, 40.2, 1.2e4)]


def _frame():
    """Sky, the exact pixel-integrated K/ρ coma and Moffat stars, without noise."""
    img = _SKY + coma_image(_SHAPE, *_COMET, _K)
    for x, y, flux in _STARS:
        ix, iy = int(round(x)), int(round(y))
        img[iy - 12:iy + 13, ix - 12:ix + 13] += flux * moffat_stamp(25, x - ix, y - iy, _FWHM, 3.0)
    return img


def test_median_of_a_ring_across_a_coma():
    # the cause: a ring of radius a about a point at distance d from the nucleus has distances
    # ρ² = d² + a² + 2ad cos θ, monotonic in cos θ, whose median over θ is 0, so the ring's
    # median of K/ρ is exactly K/√(d² + a²), below the K/d at the point (derivation)
    d, a = 40.0, 17.0
    theta = np.linspace(0.0, 2.0 * np.pi, 200001)
    rho = np.sqrt(d**2 + a**2 + 2.0 * a * d * np.cos(theta))
    assert np.median(_K / rho) == pytest.approx(_K / np.hypot(d, a), rel=1e-6)
    assert _K / np.hypot(d, a) == pytest.approx(0.920 * _K / d, abs=1e-3 * _K / d)


def test_model_follows_a_noise_free_coma():
    # truth: the exact pixel integral of K/ρ (photpipe.models.coma.coma_image) on a flat sky
    img = _SKY + coma_image(_SHAPE, *_COMET, _K)
    model = azimuthal_median_model(img, np.ones(_SHAPE, bool), *_COMET, width=1.0)
    yy, xx = np.mgrid[:_SHAPE[0], :_SHAPE[1]]
    far = np.hypot(xx - _COMET[0], yy - _COMET[1]) > 20
    # measured: at most 1.4 % of the coma light (a ring mixes pixels of slightly different ρ)
    assert np.max((np.abs(img - model) / (img - _SKY))[far]) < 0.02


def test_stars_on_the_coma_are_measured_at_their_rendered_flux():
    # truth: the fluxes the stars were rendered with (photpipe.scenario.moffat_stamp, unit sum);
    # 4 FWHM aperture, annulus 5-8 FWHM as the zero point uses. Measured: the plain annulus
    # median gives +44 % to +154 %, the ring-median model taken out first -1.3 % to -0.3 %.
    img = _frame()
    good = np.ones(_SHAPE, bool)
    x, y, flux = (np.array(c) for c in zip(*_STARS, strict=True))
    kw = dict(radii=[4.0 * _FWHM], annulus=(5.0 * _FWHM, 8.0 * _FWHM))
    var = np.ones(_SHAPE)
    raw = measure_star_fluxes(img, var, ~good, x, y, **kw)["flux_0"] / flux
    cleaned = img - azimuthal_median_model(img, good, *_COMET)
    fixed = measure_star_fluxes(cleaned, var, ~good, x, y, **kw)["flux_0"] / flux
    assert np.all(raw > 1.3)
    np.testing.assert_allclose(fixed, 1.0, atol=0.02)


def test_masked_pixels_and_bad_width():
    img = _frame()
    good = np.ones(_SHAPE, bool)
    good[:, :40] = False
    model = azimuthal_median_model(img, good, *_COMET)
    assert np.all(np.isfinite(model))
    with pytest.raises(ValueError, match="width"):
        azimuthal_median_model(img, good, *_COMET, width=0.0)
    with pytest.raises(ValueError, match="no ring"):
        azimuthal_median_model(img, np.zeros(_SHAPE, bool), *_COMET)
