"""The in-house L.A.Cosmic against the paper's definitions and a reference implementation."""

import ctypes
import ctypes.util
import gc
import sys

import numpy as np
import pytest
from scipy import ndimage

from photpipe.frames import find_cosmic_rays
from photpipe.frames._lacosmic import _clipped_laplacian, laplacian_cosmics


def _field(rng, shape=(200, 200), sky=600.0, n_stars=40, n_hits=40):
    """Moffat beta = 3 stars (Moffat 1969) on a flat sky, Poisson + read noise, single-pixel and
    two-pixel hits. Returns data, variance, truth mask of hits."""
    y, x = np.mgrid[0:shape[0], 0:shape[1]]
    fwhm = 2.6
    alpha = fwhm / (2 * np.sqrt(2 ** (1 / 3) - 1))
    model = np.full(shape, sky)
    for _ in range(n_stars):
        x0, y0 = rng.uniform(0, shape[1]), rng.uniform(0, shape[0])
        flux = 10 ** rng.uniform(3.5, 5.5)
        model += flux * (1 + ((x - x0) ** 2 + (y - y0) ** 2) / alpha**2) ** -3.0 \
            / (np.pi * alpha**2 / 2)
    data = rng.poisson(model) + rng.normal(0, 5.0, shape)
    hits = np.zeros(shape, bool)
    for _ in range(n_hits):
        yy, xx = rng.integers(4, shape[0] - 4), rng.integers(4, shape[1] - 4)
        data[yy, xx] += rng.uniform(800, 6000)
        hits[yy, xx] = True
        if rng.uniform() < 0.5:
            data[yy, xx + 1] += rng.uniform(400, 3000)
            hits[yy, xx + 1] = True
    return data.astype(np.float32), (model + 25.0).astype(np.float32), hits


def test_clipped_laplacian_is_the_papers_subsample_convolve_rebin():
    # van Dokkum (2001, PASP 113, 1420) eq. 5-6: sub-sample 2x2, convolve with the Laplacian
    # kernel [[0,-1,0],[-1,4,-1],[0,-1,0]], set negatives to zero, block-average 2x2.
    rng = np.random.default_rng(5)
    image = rng.normal(100.0, 10.0, (23, 31))
    sub = np.repeat(np.repeat(image, 2, axis=0), 2, axis=1)
    kernel = np.array([[0, -1, 0], [-1, 4, -1], [0, -1, 0]], float)
    lap = np.clip(ndimage.convolve(sub, kernel, mode="nearest"), 0.0, None)
    want = lap.reshape(23, 2, 31, 2).mean(axis=(1, 3))
    assert np.allclose(_clipped_laplacian(image), want, rtol=0, atol=1e-9)


def test_agrees_with_the_astroscrappy_library():
    # astroscrappy (registry package; an implementation of van Dokkum 2001) as the reference.
    # Same inputs and thresholds; the two differ in details the paper leaves open (exact vs
    # separable fine-structure medians, sizes of those medians, cleaning). Measured here: ours
    # flags 174 of 176 true hit pixels and 0-3 pixels the reference does not; the reference
    # flags all 176 and 18-43 more non-hit pixels per frame (star cores).
    import astroscrappy  # a test dependency (pyproject [test]): never skipped
    rng = np.random.default_rng(11)
    found_ours = found_ref = false_ours = false_ref = n_true = 0
    for _ in range(3):
        data, variance, hits = _field(rng)
        bad = np.zeros(data.shape, bool)
        ours = laplacian_cosmics(data, variance, bad, niter=2)
        ref, _ = astroscrappy.detect_cosmics(data, inmask=bad, invar=variance, gain=1.0,
                                             readnoise=5.0, satlevel=np.inf, sigclip=4.5,
                                             sigfrac=0.3, objlim=5.0, niter=2, verbose=False)
        ref = np.asarray(ref, bool)
        found_ours += (ours & hits).sum()
        found_ref += (ref & hits).sum()
        false_ours += (ours & ~hits).sum()
        false_ref += (ref & ~hits).sum()
        n_true += hits.sum()
        assert (ours & ~ref).sum() <= 0.05 * ours.sum()   # what we flag, the reference flags
    assert found_ours >= found_ref - 3                     # about as many true hits
    assert found_ours / n_true >= 0.95
    assert false_ours <= false_ref


def test_bad_pixels_and_their_edges_are_not_hits():
    rng = np.random.default_rng(3)
    data = rng.normal(500.0, 23.0, (80, 80)).astype(np.float32)
    bad = np.zeros(data.shape, bool)
    bad[:, 40] = True                  # a dead column (set to zero, as the caller does)
    data[:, 40] = 0.0
    bad[10, 10] = True                 # a hot pixel
    data[10, 10] = 60000.0
    data[50, 20] += 4000.0             # one real hit
    mask = laplacian_cosmics(data, np.full(data.shape, 529.0, np.float32), bad)
    assert mask[50, 20]
    assert not (mask & bad).any()
    assert mask.sum() <= 3


def test_unknown_option_named():
    data = np.ones((16, 16))
    with pytest.raises(ValueError, match="unknown L.A.Cosmic option.*'sigma'"):
        find_cosmic_rays(data, data, data < 0, read_noise=1.0, sigma=3.0)


def _resident_mb():
    """Resident memory after freed heap is handed back to the system (glibc), in MB."""
    gc.collect()
    libc = ctypes.util.find_library("c")
    if libc:
        trim = getattr(ctypes.CDLL(libc), "malloc_trim", None)
        if trim is not None:
            trim(0)
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith("VmRSS"):
                return int(line.split()[1]) / 1024
    return float("nan")


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc/self/status")
def test_repeated_calls_do_not_grow_memory():
    # A batch calls this once per frame for a whole night: memory must not grow with the calls
    # (the astroscrappy 1.3.0 library lost one byte per pixel per call, 1 MB per 1024x1024 frame).
    rng = np.random.default_rng(2)
    data, variance, _ = _field(rng, shape=(512, 512), n_stars=60, n_hits=80)
    bad = np.zeros(data.shape, bool)
    for _ in range(5):
        find_cosmic_rays(data, variance, bad, read_noise=5.0)
    before = _resident_mb()
    for _ in range(30):
        find_cosmic_rays(data, variance, bad, read_noise=5.0)
    grown = _resident_mb() - before
    assert grown < 3.0, f"resident memory grew {grown:.1f} MB over 30 calls on 512x512"


@pytest.mark.parametrize("seed", [3, 4, 5])
def test_later_passes_about_the_replaced_pixels_give_the_whole_frame_mask(seed):
    # the whole-frame search of every pass is the oracle for the local one: hits near every
    # edge and corner, clusters, a bad column and bad pixels beside hits, four passes
    rng = np.random.default_rng(seed)
    data, variance, _ = _field(rng, shape=(230, 301), n_stars=60, n_hits=120)
    for y, x in [(0, 5), (1, 150), (229, 40), (228, 300), (100, 0), (50, 300), (0, 0),
                 (229, 300), (120, 1), (7, 299)]:
        data[y, x] += rng.uniform(2000, 6000)
    data[60:64, 90:93] += 4000.0                      # a cluster of hit pixels
    bad = np.zeros(data.shape, bool)
    bad[:, 200] = True
    bad[30, 31] = True
    data[31, 31] += 5000.0
    whole = laplacian_cosmics(data, variance, bad, niter=4, local_passes=False)
    local = laplacian_cosmics(data, variance, bad, niter=4)
    assert whole.sum() > 100
    assert np.array_equal(local, whole)


def test_first_pass_worked_densely_when_the_screen_passes_much_of_the_frame(monkeypatch):
    # past _SCREEN_MAX_SHARE the first pass runs the whole-frame medians: the same mask
    from photpipe.frames import _lacosmic

    rng = np.random.default_rng(6)
    data, variance, _ = _field(rng, shape=(120, 150), n_stars=30, n_hits=50)
    bad = np.zeros(data.shape, bool)
    screened = laplacian_cosmics(data, variance, bad, niter=2)
    monkeypatch.setattr(_lacosmic, "_SCREEN_MAX_SHARE", 0.0)
    assert np.array_equal(laplacian_cosmics(data, variance, bad, niter=2), screened)
    assert screened.sum() > 40


def test_sparse_nonzero_is_numpy_nonzero():
    from photpipe.frames._lacosmic import sparse_nonzero

    rng = np.random.default_rng(9)
    for trial in range(100):
        mask = rng.uniform(size=tuple(rng.integers(1, 40, 2))) < rng.uniform(0.0, 0.5)
        mask = mask[:, ::2] if trial % 3 == 0 else mask        # not contiguous
        want, got = np.nonzero(mask), sparse_nonzero(mask)
        assert np.array_equal(got[0], want[0]) and np.array_equal(got[1], want[1])
