"""The Fourier-series lightcurve model: pure functions of time, frequency and coefficients.

Coefficients are ordered ``[c0, a1, b1, a2, b2, ...]`` for
``V(t) = c0 + Σ_k [a_k cos(2πk f (t - t0)) + b_k sin(2πk f (t - t0))]``
(Harris et al. 1989, Icarus 77, 171, eq. 1).
"""

import numpy as np

__all__ = ["design_matrix", "design_and_derivative", "fourier_series", "frequency_derivative",
           "model_extrema", "peak_to_peak"]


def design_matrix(t, frequency, order, *, t0=0.0):
    """Return the columns ``1, cos θ, sin θ, ..., cos mθ, sin mθ`` with θ = 2πf(t - t0).

    Parameters
    ----------
    t : ndarray, shape (n,)
        Epochs (days).
    frequency : float
        Frequency (1/day).
    order : int
        Number of harmonics m.
    t0 : float, optional
        Reference epoch (days).

    Returns
    -------
    matrix : ndarray, shape (n, 2m + 1)

    Examples
    --------
    >>> import numpy as np
    >>> design_matrix(np.array([0.0, 0.25]), 1.0, 1).round(12)
    array([[1., 1., 0.],
           [1., 0., 1.]])
    """
    theta = 2 * np.pi * frequency * (np.asarray(t, dtype=float) - t0)
    return _harmonic_columns(theta, order)


def _harmonic_columns(theta, order):
    """Columns ``1, cos θ, sin θ, ..., cos mθ, sin mθ`` from one complex exponential.

    ``exp(ikθ)`` by repeated multiplication: one trigonometric evaluation per point instead of
    2m, with a rounding error growing only as k ε.
    """
    out = np.empty((theta.size, 2 * order + 1))
    out[:, 0] = 1.0
    if order == 0:
        return out
    z = np.exp(1j * theta)
    zk = z.copy()
    for k in range(1, order + 1):
        out[:, 2 * k - 1] = zk.real
        out[:, 2 * k] = zk.imag
        if k < order:
            zk *= z
    return out


def design_and_derivative(t, frequency, coefficients, *, t0=0.0):
    """Return :func:`design_matrix` and :func:`frequency_derivative` from one evaluation.

    Examples
    --------
    >>> import numpy as np
    >>> a, d = design_and_derivative(np.array([0.5]), 1.0, np.array([0.0, 0.0, 1.0]))
    >>> a.round(12), round(float(d[0]), 6)
    (array([[ 1., -1.,  0.]]), -3.141593)
    """
    coefficients = np.asarray(coefficients, dtype=float)
    order = (coefficients.size - 1) // 2
    dt = np.asarray(t, dtype=float) - t0
    a = _harmonic_columns(2 * np.pi * frequency * dt, order)
    # ∂V/∂f = Σ_k 2πk (t - t0) [-a_k sin kθ + b_k cos kθ]
    k = np.arange(1, order + 1)
    mix = np.empty(2 * order + 1)
    mix[0] = 0.0
    mix[1::2] = 2 * np.pi * k * coefficients[2::2]
    mix[2::2] = -2 * np.pi * k * coefficients[1::2]
    return a, dt * (a @ mix)


def fourier_series(t, frequency, coefficients, *, t0=0.0):
    """Evaluate the Fourier-series lightcurve at epochs ``t``.

    Parameters
    ----------
    t : ndarray
        Epochs (days).
    frequency : float
        Frequency (1/day).
    coefficients : ndarray, shape (2m + 1,)
        ``[c0, a1, b1, ..., am, bm]``.
    t0 : float, optional
        Reference epoch (days).

    Returns
    -------
    values : ndarray

    Examples
    --------
    >>> import numpy as np
    >>> fourier_series(np.array([0.0, 0.5]), 1.0, np.array([10.0, 0.2, 0.0])).round(12)
    array([10.2,  9.8])
    """
    coefficients = np.asarray(coefficients, dtype=float)
    order = (coefficients.size - 1) // 2
    t = np.asarray(t, dtype=float)
    return design_matrix(t.ravel(), frequency, order, t0=t0).dot(coefficients).reshape(t.shape)


def frequency_derivative(t, frequency, coefficients, *, t0=0.0):
    """Return ∂V/∂f of the Fourier series at epochs ``t`` (mag per 1/day).

    Notes
    -----
    ``∂V/∂f = Σ_k 2πk (t - t0) [-a_k sin kθ + b_k cos kθ]``.

    Examples
    --------
    >>> import numpy as np
    >>> round(float(frequency_derivative(np.array([0.5]), 1.0, np.array([0.0, 0.0, 1.0]))[0]), 6)
    -3.141593
    """
    coefficients = np.asarray(coefficients, dtype=float)
    order = (coefficients.size - 1) // 2
    dt = np.asarray(t, dtype=float) - t0
    theta = 2 * np.pi * frequency * dt
    out = np.zeros_like(theta)
    for k in range(1, order + 1):
        a, b = coefficients[2 * k - 1], coefficients[2 * k]
        out += 2 * np.pi * k * dt * (-a * np.sin(k * theta) + b * np.cos(k * theta))
    return out


def model_extrema(coefficients, *, n_phase=2000):
    """Return the phases of the maxima and minima of the magnitude curve over one cycle.

    Parameters
    ----------
    coefficients : ndarray, shape (2m + 1,)
        Fourier coefficients (magnitudes: a *maximum of brightness* is a minimum of V).
    n_phase : int, optional
        Phase samples over the cycle.

    Returns
    -------
    brightness_maxima, brightness_minima : ndarray
        Phases (0-1) of the local minima of V (brightest) and local maxima of V (faintest).

    Examples
    --------
    >>> import numpy as np
    >>> bright, faint = model_extrema(np.array([0.0, 0.0, 0.0, 0.3, 0.0]))
    >>> bright.round(3), faint.round(3)
    (array([0.25, 0.75]), array([0. , 0.5]))
    """
    phase = np.arange(n_phase) / n_phase
    v = fourier_series(phase, 1.0, coefficients)
    prev, nxt = np.roll(v, 1), np.roll(v, -1)
    bright = phase[(v < prev) & (v <= nxt)]
    faint = phase[(v > prev) & (v >= nxt)]
    return bright, faint


def peak_to_peak(coefficients, *, n_phase=2000):
    """Return the peak-to-peak amplitude of the Fourier series (same unit as the coefficients).

    Examples
    --------
    >>> import numpy as np
    >>> round(float(peak_to_peak(np.array([5.0, 0.0, 0.0, 0.2, 0.0]))), 6)
    0.4
    """
    phase = np.arange(n_phase) / n_phase
    v = fourier_series(phase, 1.0, coefficients)
    return float(v.max() - v.min())
