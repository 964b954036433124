import numpy as np
import pytest

from photpipe.models.coma import coma_image
from photpipe.photometry import refine_comet_centre


def _scene(star_flux=5e5):
    shape = (121, 121)
    yy, xx = np.mgrid[: shape[0], : shape[1]]
    comet = coma_image(shape, 60.4, 59.7, 200.0)
    star = star_flux / (2 * np.pi * 1.5**2) * np.exp(-((xx - 71.0) ** 2 + (yy - 60.0) ** 2)
                                                    / (2 * 1.5**2))
    return 100.0 + comet + star, np.hypot(xx - 71.0, yy - 60.0) <= 7.0


def test_symmetric_coma_centre_unbiased():
    # a 1/ρ coma's heavy wings bias a fixed box toward the box centre; the moving circular
    # window converges on the true centre
    img = 100.0 + coma_image((121, 121), 60.4, 59.7, 200.0)
    x, y, status = refine_comet_centre(img, np.zeros(img.shape, bool), 61.0, 59.0, sky=100.0,
                                       box=11, max_shift=5.0)
    assert status == "ok"
    assert (x, y) == pytest.approx((60.4, 59.7), abs=0.02)


def test_masked_star_does_not_pull():
    img, star_mask = _scene()
    x, y, status = refine_comet_centre(img, star_mask, 61.5, 59.0, sky=100.0, box=11,
                                       max_shift=5.0)
    assert np.hypot(x - 60.4, y - 59.7) < 0.3


def test_bound_holds_without_mask():
    # unmasked, a star ten times brighter would pull the centroid; the bound stops it
    img, _ = _scene(star_flux=5e6)
    x, y, status = refine_comet_centre(img, np.zeros(img.shape, bool), 61.0, 59.7, sky=100.0,
                                       box=11, max_shift=2.0)
    assert np.hypot(x - 61.0, y - 59.7) <= 2.0
    assert status == "at_limit"


def test_no_light():
    img = np.full((50, 50), 10.0)
    x, y, status = refine_comet_centre(img, np.zeros(img.shape, bool), 25.0, 25.0, sky=10.0,
                                       box=7, max_shift=3.0)
    assert status == "failed" and (x, y) == (25.0, 25.0)
