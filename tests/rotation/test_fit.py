import numpy as np
import pytest

from photpipe.rotation.fit import bootstrap_fourier_fit, fit_fourier_series
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


def test_model_helpers():
    a = design_matrix(np.array([0.0]), 1.0, 2)
    np.testing.assert_allclose(a, [[1, 1, 0, 1, 0]], atol=1e-12)
    assert peak_to_peak(np.array([0.0, 0.0, 0.0, 0.25, 0.0])) == pytest.approx(0.5, abs=1e-9)
