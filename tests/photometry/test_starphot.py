import numpy as np
import pytest
from photutils.aperture import CircularAnnulus, CircularAperture, aperture_photometry

from photpipe.photometry import aperture_correction, measure_star_fluxes


@pytest.fixture(scope="module")
def field():
    rng = np.random.default_rng(12)
    shape = (200, 200)
    yy, xx = np.mgrid[: shape[0], : shape[1]]
    x = np.array([40.3, 120.7, 160.2, 70.9])
    y = np.array([50.6, 60.1, 150.4, 140.8])
    flux = np.array([2e4, 8e3, 5e4, 1.2e4])
    sigma = 1.4
    img = np.full(shape, 150.0)
    for xi, yi, fi in zip(x, y, flux, strict=True):
        img += fi / (2 * np.pi * sigma**2) * np.exp(-((xx - xi) ** 2 + (yy - yi) ** 2)
                                                  / (2 * sigma**2))
    var = img + 49.0
    noisy = img + rng.normal(0, 1, shape) * np.sqrt(var)
    return noisy, var, x, y, flux


def test_sums_agree_with_photutils(field):
    # the reference: photutils aperture_photometry on the same apertures, sky from the median of
    # the same annulus (photutils ApertureStats would give the same; here the plain median of the
    # unclipped annulus is close enough for a field with no neighbours)
    img, var, x, y, flux = field
    mask = np.zeros(img.shape, bool)
    t = measure_star_fluxes(img, var, mask, x, y, radii=[3.0, 6.0], annulus=(10.0, 15.0))
    xy = np.column_stack([x, y])
    ref = aperture_photometry(img, CircularAperture(xy, r=3.0), error=np.sqrt(var),
                              method="exact")
    sky = np.array([np.median(m.get_values(img)) for m in
                    CircularAnnulus(xy, 10.0, 15.0).to_mask(method="center")])
    expected = np.asarray(ref["aperture_sum"]) - sky * np.pi * 9.0
    np.testing.assert_allclose(t["flux_0"], expected, rtol=2e-3)
    # the sky-free part is the identical photutils sum
    np.testing.assert_allclose(np.asarray(t["flux_0"]) + np.asarray(t["sky"]) * np.pi * 9.0,
                               ref["aperture_sum"], rtol=1e-12)


def test_error_is_ccd_equation(field):
    # σ² = Σ var + (A σ_sky)² / n_sky (Merline & Howell 1995, Exp. Astron. 6, 163)
    img, var, x, y, _ = field
    t = measure_star_fluxes(img, var, np.zeros(img.shape, bool), x, y, radii=[4.0],
                            annulus=(10.0, 15.0))
    ref = aperture_photometry(img, CircularAperture(np.column_stack([x, y]), r=4.0),
                              error=np.sqrt(var), method="exact")
    area = np.pi * 16.0
    expected = np.sqrt(np.asarray(ref["aperture_sum_err"]) ** 2
                       + (area * np.asarray(t["sky_err"])) ** 2)
    np.testing.assert_allclose(t["flux_err_0"], expected, rtol=1e-12)


def test_large_aperture_recovers_total_flux(field):
    # a Gaussian puts 1 - exp(-r²/2σ²) of its light inside r: at r = 6 px, σ = 1.4 px that is
    # 1 - 1e-4, so the large aperture gives the injected flux within the noise
    img, var, x, y, flux = field
    t = measure_star_fluxes(img, var, np.zeros(img.shape, bool), x, y, radii=[6.0],
                            annulus=(10.0, 15.0))
    np.testing.assert_allclose(t["flux_0"], flux, rtol=0.03)


def test_aperture_correction_gaussian(field):
    # ratio large/small for a Gaussian: (1 - e^(-36/2σ²)) / (1 - e^(-4/2σ²)), r = 2 and 6 px, with
    # σ² = 1.4² + 1/12 for a profile sampled on unit pixels (Sheppard's correction, common
    # practice)
    img, var, x, y, _ = field
    t = measure_star_fluxes(img, var, np.zeros(img.shape, bool), x, y, radii=[2.0, 6.0],
                            annulus=(10.0, 15.0))
    corr, scatter, n = aperture_correction(t["flux_0"], t["flux_1"], t["flux_err_0"], min_snr=20)
    s2 = 2 * (1.4**2 + 1 / 12)
    expected = (1 - np.exp(-36 / s2)) / (1 - np.exp(-4 / s2))
    assert corr == pytest.approx(expected, rel=0.01)
    assert n == 4


def test_masked_pixels_are_counted(field):
    img, var, x, y, _ = field
    mask = np.zeros(img.shape, bool)
    mask[int(round(y[0])), int(round(x[0]))] = True
    t = measure_star_fluxes(img, var, mask, x, y, radii=[3.0], annulus=(10.0, 15.0))
    assert list(t["n_masked"]) == [1, 0, 0, 0]


def test_empty():
    t = measure_star_fluxes(np.zeros((10, 10)), np.ones((10, 10)), np.zeros((10, 10), bool),
                            [], [], radii=[2.0], annulus=(3.0, 4.0))
    assert len(t) == 0 and "flux_0" in t.colnames


def test_aperture_correction_error_is_the_error_of_a_median():
    # oracle: simulation. The median of n normal values scatters by sqrt(π/2) σ / √n for large n
    # (asymptotic variance of the sample median, 1 / (4 n f(m)²); common practice)
    from photpipe.photometry import aperture_correction_error

    rng = np.random.default_rng(2)
    n, sigma = 25, 0.04
    medians = np.median(1.05 + sigma * rng.standard_normal((20000, n)), axis=1)
    assert aperture_correction_error(sigma / 1.05, n) == pytest.approx(np.std(medians) / 1.05,
                                                                rel=0.06)
    # one or two stars: their own errors, not a scatter of nothing
    assert aperture_correction_error(0.0, 1, [0.03]) == pytest.approx(np.sqrt(np.pi / 2) * 0.03)
    assert np.isnan(aperture_correction_error(0.01, 0))


def test_errors_and_masks_at_frame_edges_agree_with_photutils(field):
    # the reference: photutils aperture_photometry on full-frame arrays (error = sqrt(variance),
    # negative variance clipped to 0, masked pixels left out), for stars cut by the frame's edges
    # and a negative variance pixel; the step itself builds these only in the stars' stamps
    img, var, _, _, _ = field
    var = var.copy()
    var[100, 100] = -5.0
    mask = np.zeros(img.shape, bool)
    mask[[1, 99, 100, 198], [2, 100, 101, 197]] = True
    x = np.array([1.5, 100.2, 198.7, -2.0])
    y = np.array([2.2, 99.6, 197.4, 100.0])
    t = measure_star_fluxes(img, var, mask, x, y, radii=[2.5, 5.0], annulus=(8.0, 12.0))
    xy = np.column_stack([x, y])
    aps = [CircularAperture(xy, r=r) for r in (2.5, 5.0)]
    ref = aperture_photometry(img, aps, error=np.sqrt(np.clip(var, 0, None)), mask=mask)
    counted = aperture_photometry(mask.astype(float), aps[1], method="center")["aperture_sum"]
    sky = np.asarray(t["sky"])
    for k, r in enumerate((2.5, 5.0)):
        want = np.asarray(ref[f"aperture_sum_{k}"]) - sky * np.pi * r * r
        np.testing.assert_allclose(t[f"flux_{k}"], want, rtol=1e-12)
        err = np.hypot(np.asarray(ref[f"aperture_sum_err_{k}"]),
                       np.pi * r * r * np.asarray(t["sky_err"]))
        np.testing.assert_allclose(t[f"flux_err_{k}"], err, rtol=1e-12)
    assert list(t["n_masked"]) == [int(round(c)) for c in np.asarray(counted)]
    assert list(t["n_masked"])[:3] == [1, 2, 1]
