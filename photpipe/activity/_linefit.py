"""A straight-line fit result shared by the trend fitters (internal)."""

from dataclasses import dataclass

import numpy as np

__all__ = ["LineFit", "weighted_line"]


@dataclass(frozen=True)
class LineFit:
    """y = intercept + slope * x, with the 2x2 covariance of (intercept, slope).

    ``scatter`` is an intrinsic scatter added in quadrature to every point's error (0 if none);
    ``error_scale`` multiplies every error (1 if none); ``used`` marks the points kept;
    ``chi2`` uses the points' own errors only, so chi2/dof > 1 shows the scatter.
    ``scatter_grid``/``scatter_weights`` describe the posterior of the scatter (None: exactly
    ``scatter``).
    """

    intercept: float
    slope: float
    cov: np.ndarray
    scatter: float
    error_scale: float
    chi2: float
    dof: int
    used: np.ndarray
    converged: bool = True
    scatter_grid: np.ndarray = None
    scatter_weights: np.ndarray = None


def weighted_line(x, y, w):
    """Weighted least-squares line; returns (intercept, slope, cov, x_pivot).

    Solved about the weighted mean of x, where intercept and slope are uncorrelated, and
    converted back to x = 0 for the caller.
    """
    sw = np.sum(w)
    xbar = np.sum(w * x) / sw
    ybar = np.sum(w * y) / sw
    dx = x - xbar
    sxx = np.sum(w * dx * dx)
    slope = np.sum(w * dx * (y - ybar)) / sxx
    var_pivot = 1.0 / sw
    var_slope = 1.0 / sxx
    intercept = ybar - slope * xbar
    cov = np.array([[var_pivot + xbar ** 2 * var_slope, -xbar * var_slope],
                    [-xbar * var_slope, var_slope]])
    return intercept, slope, cov, xbar
