import numpy as np
import pytest

from photpipe.rotation.fourier_model import (
    design_and_derivative,
    design_matrix,
    fourier_series,
    frequency_derivative,
)


def _columns_by_trig(t, f, order, t0):
    """Obviously correct columns 1, cos kθ, sin kθ (Harris et al. 1989 eq. 1), one call each."""
    theta = 2 * np.pi * f * (t - t0)
    cols = [np.ones_like(theta)]
    for k in range(1, order + 1):
        cols += [np.cos(k * theta), np.sin(k * theta)]
    return np.column_stack(cols)


@pytest.mark.parametrize("order", [pytest.param(0, id="order0"), pytest.param(1, id="order1"),
                                   pytest.param(8, id="order8")])
def test_recurrence_columns_match_trig_calls(order):
    rng = np.random.default_rng(4)
    t = np.sort(rng.uniform(61000, 61090, 500))  # MJD-like epochs, 90 d
    t0 = float(np.mean(t))
    ref = _columns_by_trig(t, 7.7, order, t0)
    np.testing.assert_allclose(design_matrix(t, 7.7, order, t0=t0), ref, rtol=0, atol=1e-12)


def test_joint_derivative_matches_finite_difference_and_separate_call():
    rng = np.random.default_rng(5)
    t = np.sort(rng.uniform(0, 20, 200))
    coef = np.array([15.0, 0.1, -0.05, 0.2, 0.03, -0.02, 0.01])
    f, t0, h = 3.21, 10.0, 1e-6
    a, deriv = design_and_derivative(t, f, coef, t0=t0)
    np.testing.assert_allclose(a, design_matrix(t, f, 3, t0=t0), atol=1e-14)
    np.testing.assert_allclose(deriv, frequency_derivative(t, f, coef, t0=t0), atol=1e-10)
    # central difference of V(t; f) (common practice), error O(h²)
    numeric = (fourier_series(t, f + h, coef, t0=t0)
               - fourier_series(t, f - h, coef, t0=t0)) / (2 * h)
    np.testing.assert_allclose(deriv, numeric, atol=1e-5)
