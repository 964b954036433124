import numpy as np
import pytest

from photpipe.rotation.grid import FrequencyGrid
from photpipe.rotation.methods.fourier import choose_order, fourier_periodogram


@pytest.mark.parametrize("criterion", [pytest.param("bic", id="bic"),
                                       pytest.param("f-test", id="f-test")])
def test_order_recovers_the_number_of_harmonics(criterion):
    rng = np.random.default_rng(8)
    t = np.sort(rng.uniform(0, 15, 500))
    f = 1.37
    y = (0.25 * np.cos(4 * np.pi * f * t) + 0.08 * np.sin(2 * np.pi * f * t)
         + 0.05 * np.cos(6 * np.pi * f * t + 0.3) + rng.normal(0, 0.01, 500))
    grid = FrequencyGrid(1.0, 0.005, 200, 15.0)
    pg = fourier_periodogram(t, y, np.full(500, 0.01), grid, max_order=6, criterion=criterion)
    assert pg.info["order"] == 3
    assert pg.best_frequency == pytest.approx(f, abs=0.005)


def test_choose_order_bic_hand_case():
    # BIC = N ln(χ²/N) + (2m + 2) ln N with N = 100 (Schwarz 1978, Ann. Stat. 6, 461):
    # m=1: 100 ln 4 + 4 ln 100 = 157.050; m=2: 0 + 6 ln 100 = 27.631; m=3: 100 ln .99 + 8 ln 100
    # = 35.836 -> order 2
    chi2 = np.array([[400.0], [100.0], [99.0]])
    order, details = choose_order(chi2, 100, criterion="bic")
    assert order == 2
    np.testing.assert_allclose(details["bic"], [157.0501, 27.6310, 35.8363], atol=1e-3)


def test_shared_harmonic_chi2_gives_the_same_periodograms():
    # the search computes the χ² of every order once for both periodograms
    from photpipe.rotation.harmonic_sums import harmonic_chi2
    from photpipe.rotation.methods.lombscargle import lomb_scargle_periodogram

    rng = np.random.default_rng(9)
    t = np.sort(rng.uniform(0, 15, 400))
    dy = np.full(400, 0.02)
    y = 0.2 * np.cos(4 * np.pi * 1.7 * t) + rng.normal(0, 0.02, 400)
    grid = FrequencyGrid(0.5, 0.004, 700, 15.0)
    shared = harmonic_chi2(t, y, dy, grid.f0, grid.df, grid.n, max_order=4)
    for alone, reused in (
            (fourier_periodogram(t, y, dy, grid, max_order=3),
             fourier_periodogram(t, y, dy, grid, max_order=3, harmonics=shared)),
            (lomb_scargle_periodogram(t, y, dy, grid, nterms=2),
             lomb_scargle_periodogram(t, y, dy, grid, nterms=2, harmonics=shared))):
        np.testing.assert_allclose(reused.statistic, alone.statistic, rtol=0, atol=1e-10)
        assert reused.info.get("order") == alone.info.get("order")
