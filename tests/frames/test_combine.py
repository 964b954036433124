import numpy as np
import pytest

from photpipe.frames import COMBINE_METHODS, clipped_mean, median_combine
from photpipe.frames.combine import MAD_TO_SIGMA


def slow_clipped_mean(values, sigma, maxiters, noise_sigma):
    """Obviously correct per-pixel clipping, the oracle for the vectorised version."""
    v = np.asarray([x for x in values if np.isfinite(x)], float)
    if v.size == 0:
        return np.nan, 0
    center = np.median(v)
    robust = MAD_TO_SIGMA * np.median(np.abs(v - center))
    kept = v
    for _ in range(maxiters):
        scale = max(robust, noise_sigma)
        new = v[np.abs(v - center) <= sigma * scale]
        if new.size == 0 or new.size == kept.size and np.all(np.sort(new) == np.sort(kept)):
            break
        kept = new
        center = np.median(kept)
    return kept.mean(), kept.size


@pytest.mark.parametrize("n", [pytest.param(3, id="3-frames"), pytest.param(8, id="8-frames"),
                               pytest.param(25, id="25-frames")])
def test_matches_slow_oracle(n):
    rng = np.random.default_rng(n)
    stack = rng.normal(100.0, 5.0, (6, 7, n)).astype(np.float32)
    outliers = rng.random(stack.shape) < 0.1
    stack[outliers] += rng.uniform(50, 5000, outliers.sum()).astype(np.float32)
    stack[0, 0, 0] = np.nan
    stack[1, 1, :] = np.nan
    out = clipped_mean(stack, sigma=3.0, maxiters=5, noise_var=lambda c: np.full_like(c, 25.0))
    for j in range(stack.shape[0]):
        for i in range(stack.shape[1]):
            mean, used = slow_clipped_mean(stack[j, i], 3.0, 5, 5.0)
            if used == 0:
                assert np.isnan(out.value[j, i]) and out.n_used[j, i] == 0
            else:
                assert out.n_used[j, i] == used
                assert out.value[j, i] == pytest.approx(mean, rel=1e-6)


def test_gaussian_noise_of_clipped_mean():
    # a 3-sigma clip of Gaussian data keeps 99.73% of values (normal distribution table)
    rng = np.random.default_rng(2)
    stack = rng.normal(0.0, 1.0, (200, 200, 20)).astype(np.float32)
    out = clipped_mean(stack, noise_var=lambda c: np.ones_like(c))
    assert out.n_rejected / stack.size == pytest.approx(0.0027, abs=0.0008)
    # the mean of 20 values has standard deviation 1/sqrt(20); clipping costs little
    assert out.value.std() == pytest.approx(1 / np.sqrt(20), rel=0.03)


def test_few_frames_still_reject_a_cosmic_ray():
    stack = np.array([[[1000.0, 1003.0, 998.0, 9000.0]]], np.float32)
    out = clipped_mean(stack, noise_var=lambda c: np.full_like(c, 9.0))
    assert out.n_used[0, 0] == 3 and out.value[0, 0] == pytest.approx(1000.333, rel=1e-5)


def test_without_noise_model_uses_robust_scale():
    stack = np.array([[[10.0, 11.0, 9.0, 10.5, 9.5, 60.0]]], np.float32)
    out = clipped_mean(stack)
    assert out.n_used[0, 0] == 5 and out.value[0, 0] == pytest.approx(10.0)


def test_median():
    stack = np.array([[[1.0, 5.0, 3.0, np.nan]]], np.float32)
    out = median_combine(stack)
    assert out.value[0, 0] == 3.0 and out.n_used[0, 0] == 3
    # variance of a median: pi/2 sigma^2/n for large n (common practice)
    assert out.variance_factor == pytest.approx(np.pi / 2)


def test_methods_table_and_bad_sigma():
    assert set(COMBINE_METHODS) == {"clipped_mean", "median"}
    with pytest.raises(ValueError, match="'sigma' must be positive, got 0"):
        clipped_mean(np.zeros((1, 1, 3)), sigma=0)
