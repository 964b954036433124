"""Sums and annulus values in many circles against photutils (reference library) itself."""

import numpy as np
import pytest
from photutils.aperture import CircularAnnulus, CircularAperture, aperture_photometry

from photpipe.photometry._circles import circle_sums, masked_in_circles, ring_values


@pytest.fixture(name="frame")
def _frame():
    rng = np.random.default_rng(8)
    data = rng.normal(100.0, 10.0, (60, 75)).astype(np.float32)
    variance = np.abs(rng.normal(100.0, 30.0, data.shape)).astype(np.float32)
    variance[5, 5] = -1.0                             # clipped to 0 as the error plane
    mask = rng.uniform(size=data.shape) < 0.05
    # inside, on every edge, past the edges and off the frame entirely
    xy = np.column_stack([rng.uniform(-6, 81, 60), rng.uniform(-6, 66, 60)])
    xy = np.vstack([xy, [[-20.0, 30.0], [30.0, 90.0], [0.5, 0.5], [74.4, 59.6]]])
    return data, variance, mask, xy


def test_circle_sums_are_photutils_exact_sums(frame):
    data, variance, mask, xy = frame
    radii = (0.7, 2.5, 6.3)
    sums, errors = circle_sums(data, variance, mask, xy, radii)
    for k, radius in enumerate(radii):
        with np.errstate(invalid="ignore"):
            want = aperture_photometry(data, CircularAperture(xy, r=radius),
                                       error=np.sqrt(np.clip(variance, 0, None)), mask=mask,
                                       method="exact")
        # the largest circle's box: pixel edges, hence weights, equal to rounding
        np.testing.assert_allclose(sums[k], np.asarray(want["aperture_sum"], float),
                                   rtol=1e-12, atol=0)
        np.testing.assert_allclose(errors[k], np.asarray(want["aperture_sum_err"], float),
                                   rtol=1e-12, atol=0)
        assert np.array_equal(np.isnan(sums[k]), np.isnan(want["aperture_sum"]))


def test_ring_values_and_masked_counts_are_photutils_centre_masks(frame):
    data, _, mask, xy = frame
    rings = ring_values(data, mask, xy, 3.5, 8.0)
    annuli = CircularAnnulus(xy, r_in=3.5, r_out=8.0).to_mask(method="center")
    for got, m in zip(rings, annuli, strict=True):
        want = np.where(m.get_values(mask) > 0, np.nan, m.get_values(data))
        np.testing.assert_array_equal(got, want)
    circles = CircularAperture(xy, r=4.2).to_mask(method="center")
    np.testing.assert_array_equal(masked_in_circles(mask, xy, 4.2),
                                  [m.get_values(mask).sum() for m in circles])
