import re

import numpy as np
import pytest
from astropy.modeling.functional_models import Moffat2D
from scipy import integrate

from photpipe.models.moffat import (
    moffat_alpha,
    moffat_fwhm,
    moffat_kernel,
    moffat_pixel_image,
    moffat_surface,
)


def test_round_moffat_matches_astropy_moffat2d():
    # reference library: astropy Moffat2D(amplitude, x_0, y_0, gamma=α, alpha=β) and its fwhm
    fwhm, beta = 3.4, 2.7
    alpha = moffat_alpha(fwhm, beta)
    ref = Moffat2D(amplitude=(beta - 1) / (np.pi * alpha**2), x_0=0, y_0=0, gamma=alpha,
                   alpha=beta)
    assert ref.fwhm == pytest.approx(fwhm, rel=1e-12)
    x = np.linspace(-10, 10, 41)
    np.testing.assert_allclose(moffat_surface(x[None, :], x[:, None], fwhm=fwhm, beta=beta),
                               ref(x[None, :], x[:, None]), rtol=1e-12)
    assert moffat_fwhm(alpha, beta) == pytest.approx(fwhm, rel=1e-14)


def test_elliptical_moffat_has_unit_integral_and_half_maximum_at_half_fwhm():
    kw = {"fwhm": 3.0, "beta": 3.5, "ellipticity": 0.3, "angle": 0.6}
    # unit integral over the plane (Moffat 1969 normalisation), checked by quadrature
    tot, _ = integrate.dblquad(lambda y, x: moffat_surface(x, y, **kw), -60, 60, -60, 60,
                               epsabs=1e-9)
    # (β - 1)/(π α_a α_b) normalises over the whole plane; the box misses (1 + 60²/α²)^(1-β) ≈ 1e-6
    assert tot == pytest.approx(1.0, abs=2e-5)
    peak = moffat_surface(0.0, 0.0, **kw)
    c, s = np.cos(0.6), np.sin(0.6)
    # half maximum at FWHM/2 along the major axis, (1-e) FWHM/2 along the minor (definition)
    assert moffat_surface(1.5 * c, 1.5 * s, **kw) == pytest.approx(peak / 2, rel=1e-12)
    assert moffat_surface(-1.05 * s, 1.05 * c, **kw) == pytest.approx(peak / 2, rel=1e-12)


def test_pixel_image_converges_to_fine_sampling():
    a = moffat_pixel_image((31, 31), 15.3, 14.6, fwhm=2.5, beta=3.0)
    # oracle: 40 x 40 midpoint samples per pixel
    n = 40
    sub = (np.arange(31 * n) + 0.5) / n - 0.5
    fine = moffat_surface(sub[None, :] - 15.3, sub[:, None] - 14.6, fwhm=2.5, beta=3.0)
    ref = fine.reshape(31, n, 31, n).mean(axis=(1, 3))
    np.testing.assert_allclose(a, ref, rtol=2e-4, atol=1e-8)


def test_kernel_is_centred_and_normalised():
    k = moffat_kernel(21, fwhm=3.0, beta=3.0, oversample=3)
    assert k.shape == (63, 63)
    assert k.sum() == pytest.approx(1.0, rel=1e-12)
    assert np.unravel_index(np.argmax(k), k.shape) == (31, 31)
    with pytest.raises(ValueError, match="kernel 'size' must be odd"):
        moffat_kernel(20, fwhm=3.0, beta=3.0)


def test_bad_shape_parameters_raise():
    with pytest.raises(ValueError, match="Moffat 'beta' must exceed 1"):
        moffat_surface(0.0, 0.0, fwhm=3.0, beta=1.0)
    with pytest.raises(ValueError, match=re.escape("'ellipticity' must lie in [0, 1)")):
        moffat_surface(0.0, 0.0, fwhm=3.0, beta=3.0, ellipticity=1.0)
