"""Straight line with an intrinsic-scatter term, marginalised over the scatter (internal).

The night-to-night scatter s of Afρ about a power law is often larger than the photometric
errors and is known only roughly from a handful of nights. Fixing s at its best value makes the
error of the slope too small whenever s happens to be underestimated, so the slope's error here
averages over the values of s the data allow.
"""

import numpy as np

from photpipe.activity._linefit import LineFit, weighted_line

__all__ = ["fit_line_scatter", "restricted_deviance", "scatter_grid"]

_GRID = 256
_WINDOW = 30.0  # deviance units above the minimum kept in the refined grid (posterior < 1e-6)


def restricted_deviance(s, x, y, sy):
    """-2 ln L_R(s) on a grid of scatters, with the line's slope and intercept integrated out.

    Returns (deviance, intercept, slope, var_intercept_at_xbar, var_slope, xbar) per grid value.
    """
    s = np.atleast_1d(np.asarray(s, dtype=float))[:, None]
    w = 1.0 / (sy[None, :] ** 2 + s ** 2)
    sw = w.sum(axis=1)
    xbar = (w @ x) / sw
    ybar = (w @ y) / sw
    dx = x[None, :] - xbar[:, None]
    sxx = np.sum(w * dx * dx, axis=1)
    slope = np.sum(w * dx * (y[None, :] - ybar[:, None]), axis=1) / sxx
    r = y[None, :] - ybar[:, None] - slope[:, None] * dx
    dev = -np.sum(np.log(w), axis=1) + np.sum(w * r * r, axis=1) + np.log(sw) + np.log(sxx)
    return dev, ybar - slope * xbar, slope, 1.0 / sw, 1.0 / sxx, xbar


def scatter_grid(deviance, y, sy):
    """The grid of intrinsic scatters s to average over, and the top of the coarse search.

    A coarse grid from 0 to five times the data's spread, then a fine one over the part of it
    within ``_WINDOW`` deviance units of the best (where the data allow s). ``deviance`` maps
    a grid of s to -2 ln L_R(s).
    """
    spread = float(np.std(y)) + float(np.max(sy))
    upper = max(5.0 * spread, 1e-6)
    grid = np.linspace(0.0, upper, _GRID)
    dev = deviance(grid)
    ok = np.flatnonzero(dev - dev.min() < _WINDOW)
    lo = grid[max(ok[0] - 1, 0)]
    hi = grid[min(ok[-1] + 1, _GRID - 1)]
    return np.linspace(lo, hi, _GRID), upper


def fit_line_scatter(x, y, sy, **_ignored):
    """Fit y = a + b x with errors sy and an unknown intrinsic scatter s.

    The line is the weighted least-squares line at the s that maximises the restricted
    likelihood L_R(s). Its covariance is that of the line averaged over the posterior
    p(s | data) ∝ L_R(s) (flat priors on a, b and s >= 0): the mean of the conditional
    covariances plus the spread of the conditional (a, b). The reported scatter is the
    posterior root-mean-square of s, the value that predicts a new night's spread.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    sy = np.asarray(sy, dtype=float)
    grid, upper = scatter_grid(lambda g: restricted_deviance(g, x, y, sy)[0], y, sy)
    dev, a, b, va, vb, xbar = restricted_deviance(grid, x, y, sy)
    post = np.exp(-0.5 * (dev - dev.min()))
    post /= post.sum()
    best = int(np.argmin(dev))
    s_best = float(grid[best])
    # Conditional covariance of (a, b) at each s, from the pivot form.
    caa = va + xbar ** 2 * vb
    cab = -xbar * vb
    mean_cov = np.array([[np.sum(post * caa), np.sum(post * cab)],
                         [np.sum(post * cab), np.sum(post * vb)]])
    da = a - a[best]
    db = b - b[best]
    spread_cov = np.array([[np.sum(post * da * da), np.sum(post * da * db)],
                           [np.sum(post * da * db), np.sum(post * db * db)]])
    cov = mean_cov + spread_cov
    s_rms = float(np.sqrt(np.sum(post * grid ** 2)))
    a0, b0, _, _ = weighted_line(x, y, 1.0 / (sy * sy + s_best * s_best))
    r = y - a0 - b0 * x
    chi2 = float(np.sum((r / sy) ** 2))
    # The search failed if the posterior still has weight at the top of the range.
    converged = bool(post[-1] < 1e-3 or grid[-1] < upper)
    keep = post > 1e-9
    return LineFit(float(a0), float(b0), cov, s_rms, 1.0, chi2, x.size - 2,
                   np.ones(x.size, dtype=bool), converged, grid[keep],
                   post[keep] / post[keep].sum())
