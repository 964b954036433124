"""Straight line insensitive to a minority of discrepant points (internal).

Used as the first look at the data in the outburst search, before any night is known to be in
outburst: a least-squares line there would be pulled up by the outburst nights and its scatter
inflated until the outburst itself no longer looked significant.
"""

import numpy as np
from scipy.optimize import least_squares

from photpipe.activity._linefit import LineFit, weighted_line

__all__ = ["fit_line_robust"]

_MAD_TO_SIGMA = 1.4826  # σ / MAD for a normal distribution (common practice)


def fit_line_robust(x, y, sy, **_ignored):
    """Fit y = a + b x with a Cauchy loss on the normalised residuals.

    The loss scale is the normalised median absolute deviation of the residuals (at least 1),
    re-estimated once after a first pass. The returned ``error_scale`` is that scale, so
    residual / (sy * error_scale) is a robust z-score.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    sy = np.asarray(sy, dtype=float)
    p = np.polyfit(x, y, 1) if np.ptp(x) > 0 else np.array([0.0, np.median(y)])
    params = np.array([p[1], p[0]])
    scale = 1.0
    for _ in range(2):
        z = (y - params[0] - params[1] * x) / sy
        scale = max(1.0, _MAD_TO_SIGMA * float(np.median(np.abs(z - np.median(z)))))
        res = least_squares(lambda q: (y - q[0] - q[1] * x) / sy, params, loss="cauchy",
                            f_scale=scale)
        params = res.x
    z = (y - params[0] - params[1] * x) / sy
    scale = max(1.0, _MAD_TO_SIGMA * float(np.median(np.abs(z))))
    _, _, cov, _ = weighted_line(x, y, 1.0 / sy ** 2)
    chi2 = float(np.sum(z ** 2))
    return LineFit(float(params[0]), float(params[1]), cov * scale ** 2, 0.0, scale, chi2,
                   x.size - 2, np.abs(z) <= 3.0 * scale, bool(res.success))
