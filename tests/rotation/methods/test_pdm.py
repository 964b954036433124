import numpy as np
import pytest

from photpipe.rotation.grid import FrequencyGrid
from photpipe.rotation.methods.pdm import pdm_periodogram, pdm_theta


def _theta_slow(t, y, dy, f, n_bins, n_covers, weighted=True):
    """Obviously correct Θ of Stellingwerf (1978, ApJ 224, 953, eqs. 1-3), one loop per bin."""
    w = 1 / dy**2 if weighted else np.ones_like(y)
    w = w / w.mean()
    phase = np.mod(f * (t - t.min()), 1.0)
    ybar = np.sum(w * y) / np.sum(w)
    sigma2 = np.sum(w * (y - ybar) ** 2) / (len(y) - 1)
    ss, dof = 0.0, 0
    for c in range(n_covers):
        shifted = np.mod(phase - c / (n_bins * n_covers), 1.0)
        b = np.floor(shifted * n_bins).astype(int)
        for j in range(n_bins):
            sel = b == j
            if sel.sum() == 0:
                continue
            mj = np.sum(w[sel] * y[sel]) / np.sum(w[sel])
            ss += np.sum(w[sel] * (y[sel] - mj) ** 2)
            dof += sel.sum() - 1
    return (ss / dof) / sigma2


def test_hand_computed_case_with_covers():
    # Hand computation (Stellingwerf 1978 eqs. 1-3): t = 0, 1/4, 1/2, 3/4 d, y = 0, 1, 2, 3,
    # f = 1/d, 2 bins, 2 covers. Bins {0,1}, {2,3} (cover 1) and {1,2}, {3,0} (cover 2) have
    # sums of squares 0.5, 0.5, 0.5, 4.5 -> s² = 6 / (8 - 4) = 1.5; σ² = 5 / 3; Θ = 0.9.
    t = np.array([0.0, 0.25, 0.5, 0.75])
    y = np.array([0.0, 1.0, 2.0, 3.0])
    theta = pdm_theta(t, y, np.ones(4), 1.0, 1.0, 1, n_bins=2, n_covers=2)
    assert theta[0] == pytest.approx(0.9, rel=1e-12)


def test_hand_computed_case_one_cover():
    # Hand computation: 8 points at t = k/8, y = 0,0,1,1,0,0,1,1. At f = 1/d with 2 bins each
    # bin holds 0,0,1,1: s² = (1 + 1)/(8 - 2) = 1/3, σ² = 2/7, Θ = 7/6. At f = 2/d each bin is
    # constant: Θ = 0.
    t = np.arange(8) / 8.0
    y = np.array([0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 1.0, 1.0])
    theta = pdm_theta(t, y, np.ones(8), 1.0, 1.0, 2, n_bins=2, n_covers=1)
    np.testing.assert_allclose(theta, [7 / 6, 0.0], atol=1e-12)


@pytest.mark.parametrize("n_bins, n_covers, weighted", [
    pytest.param(10, 2, True, id="10x2-weighted"),
    pytest.param(5, 3, False, id="5x3-unweighted"),
    pytest.param(8, 1, True, id="8x1-weighted"),
])
def test_vectorised_matches_slow_oracle(n_bins, n_covers, weighted):
    rng = np.random.default_rng(3)
    t = np.sort(rng.uniform(0, 12, 150))
    dy = rng.uniform(0.02, 0.06, 150)
    y = 0.3 * np.cos(2 * np.pi * 2.3 * t) + rng.normal(0, dy)
    f0, df, nf = 0.7, 0.0137, 300
    fast = pdm_theta(t, y, dy, f0, df, nf, n_bins=n_bins, n_covers=n_covers, weighted=weighted,
                     chunk_elements=4000)
    slow = [_theta_slow(t, y, dy, f0 + k * df, n_bins, n_covers, weighted) for k in range(nf)]
    # fixed-point phases can move a point lying within 2**-32 of a bin edge; none does here
    np.testing.assert_allclose(fast, slow, rtol=1e-9)


@pytest.mark.parametrize("n_bins, n_covers, weighted", [
    pytest.param(10, 2, True, id="10x2-weighted"),
    pytest.param(5, 3, False, id="5x3-unweighted"),
    pytest.param(3, 1, True, id="3x1-weighted"),
])
@pytest.mark.parametrize("chunk", [pytest.param(300, id="small-blocks"),
                                   pytest.param(2**19, id="one-block")])
def test_crossing_binning_matches_slow_oracle(n_bins, n_covers, weighted, chunk):
    # A fine grid (several trial frequencies per bin-edge crossing), where the crossings are
    # binned instead of every (point, frequency) pair; points jump several narrow bins per step
    # at the coarse end (df t n_bins n_covers > 1 for the late points when n_bins = 10).
    rng = np.random.default_rng(8)
    t = np.sort(rng.uniform(3, 15, 120))
    dy = rng.uniform(0.02, 0.06, 120)
    y = 0.3 * np.cos(2 * np.pi * 1.9 * t) + rng.normal(0, dy)
    for f0, df, nf in ((0.5, 0.0004, 900), (1.0, 0.009, 200)):
        fast = pdm_theta(t, y, dy, f0, df, nf, n_bins=n_bins, n_covers=n_covers,
                         weighted=weighted, binning="crossings", chunk_elements=chunk)
        pairs = pdm_theta(t, y, dy, f0, df, nf, n_bins=n_bins, n_covers=n_covers,
                          weighted=weighted, binning="pairs")
        slow = [_theta_slow(t, y, dy, f0 + k * df, n_bins, n_covers, weighted)
                for k in range(nf)]
        np.testing.assert_allclose(fast, slow, rtol=1e-9)
        np.testing.assert_allclose(fast, pairs, rtol=1e-9)


@pytest.mark.parametrize("binning", ["pairs", "crossings"])
def test_hand_computed_cases_by_either_binning(binning):
    # the two hand computations above (Stellingwerf 1978 eqs. 1-3), through each binning
    t = np.array([0.0, 0.25, 0.5, 0.75])
    y = np.array([0.0, 1.0, 2.0, 3.0])
    theta = pdm_theta(t, y, np.ones(4), 1.0, 1.0, 1, n_bins=2, n_covers=2, binning=binning)
    assert theta[0] == pytest.approx(0.9, rel=1e-12)
    t = np.arange(8) / 8.0
    y = np.array([0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 1.0, 1.0])
    theta = pdm_theta(t, y, np.ones(8), 1.0, 1.0, 2, n_bins=2, n_covers=1, binning=binning)
    np.testing.assert_allclose(theta, [7 / 6, 0.0], atol=1e-12)


def test_unknown_binning():
    with pytest.raises(ValueError, match="'binning' must be 'auto' or one of"):
        pdm_theta(np.arange(5.0), np.zeros(5), np.ones(5), 1.0, 0.1, 3, binning="sorted")


def test_periodogram_finds_signal_and_its_fap_is_small():
    rng = np.random.default_rng(5)
    t = np.sort(rng.uniform(0, 10, 300))
    y = 0.3 * np.cos(2 * np.pi * 1.7 * t) + rng.normal(0, 0.03, 300)
    pg = pdm_periodogram(t, y, np.full(300, 0.03), FrequencyGrid(0.5, 0.01, 300, 10.0))
    assert pg.best_frequency == pytest.approx(1.7, abs=0.01)
    assert pg.lower_is_better
    assert pg.fap[pg.best_index] < 1e-10
