import warnings

import numpy as np
import pytest
from photutils.psf import fit_fwhm

from photpipe.models.coma import coma_image
from photpipe.photometry import detect_sources, measure_fwhm, sky_statistics


def _gaussian_field(rng, shape=(256, 256), n=30, sigma=1.3, sky=200.0):
    yy, xx = np.mgrid[: shape[0], : shape[1]]
    x = rng.uniform(15, shape[1] - 15, n)
    y = rng.uniform(15, shape[0] - 15, n)
    flux = rng.uniform(3e3, 3e4, n)
    img = np.full(shape, sky)
    for xi, yi, fi in zip(x, y, flux, strict=True):
        img += fi / (2 * np.pi * sigma**2) * np.exp(-((xx - xi) ** 2 + (yy - yi) ** 2)
                                                  / (2 * sigma**2))
    var = img + 25.0
    noisy = img + rng.normal(0, 1, shape) * np.sqrt(var)
    return noisy.astype(np.float32), var.astype(np.float32), x, y


def test_sky_statistics():
    rng = np.random.default_rng(1)
    img = rng.normal(500.0, 10.0, (400, 400))
    level, sigma = sky_statistics(img, np.ones(img.shape, bool))
    # the mean of 10⁴ N(500, 10) draws is within 4 σ/√n = 0.4 of 500 (common practice)
    assert level == pytest.approx(500.0, abs=0.4)
    assert sigma == pytest.approx(10.0, rel=0.05)


def test_detects_the_stars():
    rng = np.random.default_rng(3)
    img, var, x, y = _gaussian_field(rng)
    src = detect_sources(img, var, np.ones(img.shape, bool), sky=200.0)
    # every injected star with no neighbour closer than 8 pixels (two 4 x 4 detection blocks) is
    # found within 0.5 pixel; closer pairs may merge; nothing spurious is found
    sep = np.hypot(x[:, None] - x, y[:, None] - y) + np.eye(len(x)) * 1e9
    isolated = sep.min(axis=1) > 8.0
    assert np.count_nonzero(isolated) >= 25
    d = np.hypot(np.asarray(src["x"])[:, None] - x, np.asarray(src["y"])[:, None] - y)
    assert np.all(d.min(axis=0)[isolated] < 0.5)
    assert np.all(d.min(axis=1) < 6.0)
    assert len(src) <= len(x)


def test_no_false_peaks_on_a_coma():
    # a bright smooth 1/ρ coma (exact pixel integral, photpipe.models.coma) with noise gives one
    # detection, the coma's centre
    rng = np.random.default_rng(4)
    shape = (300, 300)
    signal = 300.0 + coma_image(shape, 150.3, 149.6, 3e4)
    var = signal + 64.0
    img = (signal + rng.normal(0, 1, shape) * np.sqrt(var)).astype(np.float32)
    src = detect_sources(img, var.astype(np.float32), np.ones(shape, bool), sky=300.0)
    assert len(src) == 1
    assert np.hypot(src["x"][0] - 150.3, src["y"][0] - 149.6) < 1.0


def test_fwhm_agrees_with_photutils():
    # oracle: photutils.psf.fit_fwhm (full least-squares Gaussian fit) on the same stars
    rng = np.random.default_rng(5)
    img, var, x, y = _gaussian_field(rng, sigma=1.5)
    ours = measure_fwhm(img, x, y, sky=200.0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = np.median(fit_fwhm(img - 200.0, xypos=np.column_stack([x, y]), fit_shape=7))
    assert ours == pytest.approx(ref, rel=0.03)
    # and the truth, FWHM = 2 sqrt(2 ln 2) σ
    assert ours == pytest.approx(2 * np.sqrt(2 * np.log(2)) * 1.5, rel=0.03)


def test_bad_pixels_are_not_detected():
    rng = np.random.default_rng(6)
    img = rng.normal(100, 5, (128, 128)).astype(np.float32)
    good = np.ones(img.shape, bool)
    img[60:62, 40:42] = 1e6  # a hot spot flagged bad
    good[60:62, 40:42] = False
    src = detect_sources(img, np.full(img.shape, 25.0, np.float32), good, sky=100.0)
    assert len(src) == 0


def test_too_few_sky_pixels():
    with pytest.raises(ValueError, match="usable pixels to estimate the sky"):
        sky_statistics(np.zeros((8, 8)), np.zeros((8, 8), bool))


def test_fwhm_of_stars_on_a_coma_uses_their_own_sky():
    # oracle: the same stars on a flat sky. On a K/ρ coma (photpipe.models.coma.coma_image) at
    # 25-60 pixels from the nucleus the frame's sky misses a pedestal of 170-400 e-, which
    # widens a Gaussian fit to the log-core: measured +67 % with the frame's sky, +0.9 % with
    # each star's ring sky (the coma's gradient across the box is left).
    rng = np.random.default_rng(8)
    img, var, x, y = _gaussian_field(rng, shape=(160, 160), n=12, sigma=1.0)
    keep = np.hypot(x - 80.0, y - 80.0) > 25
    x, y = x[keep], y[keep]
    flat = measure_fwhm(img, x, y, sky=200.0)
    on_coma = img + coma_image(img.shape, 80.0, 80.0, 1.0e4).astype(np.float32)
    assert measure_fwhm(on_coma, x, y, sky=200.0) == pytest.approx(flat, rel=0.03)
    assert measure_fwhm(on_coma, x, y, sky=200.0, local_sky=False) > 1.3 * flat


def test_peaks_of_3x3_boxes_are_those_photutils_finds():
    # photutils.detection.find_peaks (reference library) on noise, with ties and tiny frames
    from photutils.detection import find_peaks

    from photpipe.photometry.detection import _peaks_3x3

    rng = np.random.default_rng(4)
    for trial in range(60):
        image = rng.normal(0.0, 3.0, tuple(rng.integers(3, 40, 2)))
        image = np.round(image) if trial % 2 else image
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            want = find_peaks(image, 2.0, box_size=3, border_width=1)
        ys, xs = _peaks_3x3(image, 2.0)
        if want is None:
            assert len(ys) == 0
        else:
            np.testing.assert_array_equal(ys, want["y_peak"])
            np.testing.assert_array_equal(xs, want["x_peak"])


def test_quadratic_centroids_are_photutils_centroid_sources():
    # photutils.centroids (reference library) on stars, noise, boxes cut by the frame's edge
    from photutils.centroids import centroid_quadratic, centroid_sources

    from photpipe.photometry._centroids import quadratic_centroids

    rng = np.random.default_rng(3)
    image = rng.normal(0.0, 5.0, (120, 150))
    yy, xx = np.mgrid[:120, :150]
    xs, ys = rng.uniform(0, 149, 300), rng.uniform(0, 119, 300)
    for x0, y0 in zip(xs[:80], ys[:80], strict=True):
        image += rng.uniform(50, 2000) * np.exp(-((xx - x0) ** 2 + (yy - y0) ** 2)
                                                / (2 * rng.uniform(0.8, 2.5) ** 2))
    x = np.round(xs) + 0.5 * ((rng.uniform(size=300) < 0.5) & (xs < 148))
    y = np.round(ys)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        want_x, want_y = centroid_sources(image, x, y, box_size=9,
                                          centroid_func=centroid_quadratic)
    got_x, got_y = quadratic_centroids(image, x, y, 9)
    assert np.isfinite(want_x).sum() > 200
    np.testing.assert_array_equal(np.isfinite(got_x), np.isfinite(want_x))
    np.testing.assert_allclose(got_x, want_x, rtol=0, atol=1e-9)   # least squares, two ways
    np.testing.assert_allclose(got_y, want_y, rtol=0, atol=1e-9)
