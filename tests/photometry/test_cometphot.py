import numpy as np
import pytest
from photutils.aperture import CircularAperture, aperture_photometry

from photpipe.models.coma import coma_image
from photpipe.photometry import comet_aperture_fluxes, fill_from_rings


def test_fill_restores_coma_light_under_a_mask():
    shape = (201, 201)
    img = coma_image(shape, 100.0, 100.0, 300.0)
    yy, xx = np.mgrid[: shape[0], : shape[1]]
    rho = np.hypot(xx - 100.0, yy - 100.0)
    mask = np.hypot(xx - 120.0, yy - 95.0) < 6.0  # where a star was
    damaged = np.where(mask, 1e5, img)
    filled, _ = fill_from_rings(damaged, np.ones(shape), mask, rho)
    f_true, _ = comet_aperture_fluxes(img, np.ones(shape), 100.0, 100.0, [40.0])
    f_fill, _ = comet_aperture_fluxes(filled, np.ones(shape), 100.0, 100.0, [40.0])
    # 2πKρ inside ρ for a K/ρ coma; the fill brings the sum back within 0.2 %
    assert f_fill[0] == pytest.approx(f_true[0], rel=2e-3)
    assert f_true[0] == pytest.approx(2 * np.pi * 300.0 * 40.0, rel=2e-3)


def test_sums_are_photutils_sums():
    rng = np.random.default_rng(51)
    img = rng.normal(5, 1, (60, 60))
    var = rng.uniform(1, 2, (60, 60))
    f, e = comet_aperture_fluxes(img, var, 30.2, 29.6, [5.0, 10.0], sky_error=0.01)
    ref = aperture_photometry(img, [CircularAperture((30.2, 29.6), r) for r in (5.0, 10.0)],
                              error=np.sqrt(var), method="exact")
    assert f[0] == pytest.approx(float(ref["aperture_sum_0"][0]), rel=1e-12)
    assert f[1] == pytest.approx(float(ref["aperture_sum_1"][0]), rel=1e-12)
    # plus the sky term (π r² σ_sky)² (Merline & Howell 1995)
    assert e[1] == pytest.approx(np.hypot(float(ref["aperture_sum_err_1"][0]),
                                          np.pi * 100 * 0.01), rel=1e-12)
