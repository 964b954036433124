"""Straight line by iterated sigma clipping with Birge-ratio error scaling (internal)."""

import numpy as np

from photpipe.activity._linefit import LineFit, weighted_line

__all__ = ["fit_line_clip"]


def fit_line_clip(x, y, sy, *, clip_sigma=3.0, max_iter=10, **_ignored):
    """Fit y = a + b x by weighted least squares, dropping points beyond ``clip_sigma``.

    Residuals are compared with the errors scaled by the Birge ratio sqrt(chi2/dof) (when above 1;
    Birge 1932, Phys. Rev. 40, 207), the fit repeated on the kept points until the kept set stops
    changing; the covariance is scaled by the same ratio squared.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    sy = np.asarray(sy, dtype=float)
    used = np.ones(x.size, dtype=bool)
    w = 1.0 / sy ** 2
    converged = False
    for _ in range(max_iter):
        a, b, cov, _ = weighted_line(x[used], y[used], w[used])
        r = y - a - b * x
        dof = int(np.count_nonzero(used)) - 2
        chi2 = float(np.sum((r[used] / sy[used]) ** 2))
        scale = max(1.0, np.sqrt(chi2 / dof)) if dof > 0 else 1.0
        new_used = np.abs(r) <= clip_sigma * scale * sy
        if np.count_nonzero(new_used) < 3 or np.array_equal(new_used, used):
            converged = np.array_equal(new_used, used)
            break
        used = new_used
    return LineFit(float(a), float(b), cov * scale ** 2, 0.0, float(scale), chi2, dof, used,
                   converged)
