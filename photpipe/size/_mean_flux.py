"""Rotation-averaged magnitude as the plain mean of the fluxes of all points."""

import numpy as np

__all__ = ["flux_mean"]


def flux_mean(mag, err, *, times=None, period=None, n_bins=None, n_harmonics=None):
    """Return ``(mean flux, its error, flags)`` with every point weighted equally.

    Fluxes are ``10^(-0.4 m)``. The error is the larger of the propagated measurement error
    and the scatter of the points over sqrt(N), which also counts rotational variation sampled
    at random phases. Equal weights avoid favouring bright (lower-error) rotational phases.
    """
    f = 10.0 ** (-0.4 * mag)
    sf = 0.4 * np.log(10.0) * f * err
    n = f.size
    mean = f.mean()
    formal = np.sqrt(np.sum(sf**2)) / n
    scatter = f.std(ddof=1) / np.sqrt(n) if n > 1 else 0.0
    flags = ("single_point",) if n == 1 else ()
    return mean, max(formal, scatter), flags
