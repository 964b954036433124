import numpy as np
import pytest

from photpipe.frames import COSMIC_METHODS, find_cosmic_rays


def _star_field(rng, shape=(80, 80), sky=800.0, fwhm=2.2, n_stars=12):
    y, x = np.mgrid[0:shape[0], 0:shape[1]]
    img = np.full(shape, sky)
    alpha = fwhm / (2 * np.sqrt(2 ** (1 / 3) - 1))   # Moffat beta = 3 (Moffat 1969)
    cores = []
    for _ in range(n_stars):
        x0, y0 = rng.uniform(-1, shape[1]), rng.uniform(-1, shape[0])
        flux = 10 ** rng.uniform(4, 6)
        prof = (1 + ((x - x0) ** 2 + (y - y0) ** 2) / alpha**2) ** -3.0
        img += flux * prof / (np.pi * alpha**2 / 2)   # integral of the beta = 3 profile
        cores.append((int(np.clip(round(y0), 0, shape[0] - 1)),
                      int(np.clip(round(x0), 0, shape[1] - 1))))
    return img, cores


def test_hits_found_and_stars_spared():
    rng = np.random.default_rng(21)
    truth, cores = _star_field(rng)
    data = rng.poisson(truth) + rng.normal(0, 6, truth.shape)
    hits = np.zeros(truth.shape, bool)
    for _ in range(15):
        yy, xx = rng.integers(3, 77, 2)
        data[yy, xx] += rng.uniform(1500, 8000)
        hits[yy, xx] = True
    variance = truth + 36.0
    mask = find_cosmic_rays(data, variance, np.zeros(truth.shape, bool), read_noise=6.0)
    assert (mask & hits).sum() / hits.sum() >= 0.9
    assert not any(mask[c] and not hits[c] for c in cores)
    assert (mask & ~hits).sum() <= 3


def test_ignored_pixels_never_flagged():
    rng = np.random.default_rng(2)
    data = rng.normal(500.0, 23.0, (40, 40))
    data[10, 10] += 5000.0
    ignore = np.zeros(data.shape, bool)
    ignore[10, 10] = True
    mask = find_cosmic_rays(data, np.full(data.shape, 529.0), ignore, read_noise=5.0)
    assert not mask[10, 10]


def test_methods_table():
    assert set(COSMIC_METHODS) == {"lacosmic", "none"}
    data = np.ones((8, 8))
    assert not find_cosmic_rays(data, data, data < 0, read_noise=1.0, method="none").any()
    with pytest.raises(ValueError, match="cosmic-ray method must be one of"):
        find_cosmic_rays(data, data, data < 0, read_noise=1.0, method="median")


def test_saturated_areas_grown_in_boxes_equal_the_whole_frame_dilation():
    # scipy's binary_dilation over the whole frame is the slow, obviously correct oracle
    from scipy import ndimage as ndi

    from photpipe.frames.cosmics import _SATURATED_GROW, _disk, _grown_around

    rng = np.random.default_rng(11)
    mask = np.zeros((90, 120), bool)
    mask[rng.integers(0, 90, 25), rng.integers(0, 120, 25)] = True
    mask[0:4, 50:60] = True                      # touching the frame's edges
    mask[80:90, 110:120] = True
    expected = ndi.binary_dilation(mask, structure=_disk(_SATURATED_GROW))
    np.testing.assert_array_equal(_grown_around(mask, _SATURATED_GROW), expected)


def _star_like_one_group_at_a_time(mask, data, ratio):
    """The rule of `_drop_star_like` group by group with scipy's labels: the oracle."""
    from scipy import ndimage as ndi

    labels, n = ndi.label(mask, structure=np.ones((3, 3), bool))
    keep = np.ones(n + 1, bool)
    for k, box in enumerate(ndi.find_objects(labels), 1):
        values = np.where(labels[box] == k, np.nan_to_num(data[box], nan=-np.inf), -np.inf)
        dy, dx = np.unravel_index(np.argmax(values), values.shape)
        y, x = box[0].start + dy, box[1].start + dx
        background = np.nanmedian(data[max(0, y - 4):y + 5, max(0, x - 4):x + 5])
        ring = data[max(0, y - 1):y + 2, max(0, x - 1):x + 2].ravel().tolist()
        ring.remove(data[y, x])
        excess = data[y, x] - background
        neighbours = np.nanmedian(ring) - background if np.isfinite(ring).any() else 0.0
        keep[k] = not (excess > 0 and neighbours >= ratio * excess)
    keep[0] = False
    return keep[labels]


def test_star_like_groups_released_as_one_group_at_a_time():
    # random masks, stars, bad pixels, ties and frame edges against the per-group loop
    from photpipe.frames.cosmics import _drop_star_like

    rng = np.random.default_rng(5)
    for trial in range(150):
        shape = tuple(rng.integers(5, 50, 2))
        y, x = np.mgrid[0:shape[0], 0:shape[1]]
        data = rng.normal(100.0, 10.0, shape)
        for _ in range(3):
            y0, x0, w = rng.uniform(0, shape[0]), rng.uniform(0, shape[1]), rng.uniform(0.3, 2)
            data += rng.uniform(50, 3000) * np.exp(-((y - y0) ** 2 + (x - x0) ** 2) / (2 * w * w))
        data = (np.round(data / 20) * 20 if trial % 3 == 0 else data).astype(np.float32)
        bad = rng.uniform(size=shape) < 0.05
        mask = (rng.uniform(size=shape) < rng.uniform(0.02, 0.4)) & ~bad
        ratio = rng.uniform(0.05, 0.5)
        expected = _star_like_one_group_at_a_time(mask, np.where(bad, np.nan, data), ratio)
        np.testing.assert_array_equal(_drop_star_like(mask, data, bad, ratio), expected)
