import itertools

import numpy as np
import pytest
from scipy import ndimage

from photpipe.frames._medians import _NETWORKS, _network_median, running_median, separable_median


@pytest.mark.parametrize("size", sorted(_NETWORKS))
def test_networks_give_the_median_of_every_zero_one_input(size):
    # The 0-1 principle (Knuth 1998, TAOCP vol. 3, sect. 5.3.4; from memory): a comparator
    # network right on all 2**size inputs of 0s and 1s is right on every input.
    inputs = np.array(list(itertools.product((0, 1), repeat=size)), dtype=float).T
    got = _network_median(list(inputs), size)
    assert np.array_equal(got, np.median(inputs, axis=0))


@pytest.mark.parametrize("size", sorted(_NETWORKS))
def test_running_median_matches_scipy(size):
    # scipy.ndimage.median_filter (reference library) with mode "nearest" = edge extension
    rng = np.random.default_rng(size)
    image = rng.normal(size=(31, 40)).astype(np.float32)
    for axis, shape in ((0, (size, 1)), (1, (1, size))):
        want = ndimage.median_filter(image, size=shape, mode="nearest")
        got = running_median(image, size, axis=axis)
        assert got.dtype == image.dtype
        assert np.array_equal(got, want)


def test_separable_median_removes_an_isolated_outlier():
    image = np.full((9, 9), 10.0)
    image[4, 4] = 1e6
    assert np.array_equal(separable_median(image, 5), np.full((9, 9), 10.0))


def test_bad_size_named():
    with pytest.raises(ValueError, match="running median size must be one of"):
        running_median(np.zeros(5), 4, axis=0)
