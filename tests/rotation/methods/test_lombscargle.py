import numpy as np
import pytest

from photpipe.rotation.grid import FrequencyGrid
from photpipe.rotation.methods.lombscargle import lomb_scargle_periodogram


@pytest.mark.parametrize("nterms", [pytest.param(1, id="nterms1"), pytest.param(2, id="nterms2")])
def test_trig_sum_engine_matches_astropy_engine(nterms):
    # Reference: astropy.timeseries.LombScargle on the same data and grid ('fast' for one term,
    # 'fastchi2' for more), standard normalisation
    rng = np.random.default_rng(21)
    t = np.sort(rng.uniform(0, 25, 400))
    dy = rng.uniform(0.02, 0.04, 400)
    y = 0.15 * np.cos(2 * np.pi * 2.2 * t) + 0.05 * np.cos(2 * np.pi * 1.1 * t) \
        + rng.normal(0, dy)
    grid = FrequencyGrid(0.3, 0.004, 2000, 25.0)
    ours = lomb_scargle_periodogram(t, y, dy, grid, nterms=nterms)
    ref = lomb_scargle_periodogram(t, y, dy, grid, nterms=nterms, engine="astropy")
    np.testing.assert_allclose(ours.statistic, ref.statistic, atol=5e-4)
    assert ours.best_frequency == ref.best_frequency


def test_fap_of_pure_noise_is_not_small():
    rng = np.random.default_rng(2)
    t = np.sort(rng.uniform(0, 20, 200))
    y = rng.normal(0, 0.05, 200)
    pg = lomb_scargle_periodogram(t, y, np.full(200, 0.05), FrequencyGrid(0.1, 0.005, 2000, 20))
    assert pg.fap[pg.best_index] > 0.01
