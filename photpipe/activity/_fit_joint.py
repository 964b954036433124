"""Both branches at once, meeting at perihelion, with one intrinsic scatter (internal).

Afρ changes continuously in time, and at perihelion both branches describe the same coma at the
same r_h = q, so the pre- and post-perihelion power laws take the same value there:
log Afρ = a + k_pre (x - x_q) before and a + k_post (x - x_q) after, x = log10 r_h, x_q = log10 q.
The night-to-night scatter s (calibration, seeing, the coma's own flicker) is one property of
the campaign, shared by both sides. Fitted jointly, the nights on each side pin the value at
perihelion for the other: a night just after perihelion, at the edge of its own branch's r_h
range, is then compared with a trend the earlier nights hold in place, instead of one it can
tilt towards itself. As in `_fit_scatter`, the fit is the weighted least-squares one at the s of
highest restricted likelihood, and its covariance averages over the posterior of s.
"""

import numpy as np

from photpipe.activity._fit_scatter import scatter_grid
from photpipe.activity._linefit import LineFit

__all__ = ["fit_joint_scatter"]


def _solve(design, y, sy, s):
    """Weighted least squares on a grid of scatters: (deviance, beta, cov) per grid value."""
    w = 1.0 / (sy[None, :] ** 2 + s[:, None] ** 2)                     # (g, n)
    a = np.einsum("gn,ni,nj->gij", w, design, design)                 # (g, p, p)
    b = np.einsum("gn,ni,n->gi", w, design, y)                        # (g, p)
    cov = np.linalg.inv(a)
    beta = np.einsum("gij,gj->gi", cov, b)
    r = y[None, :] - beta @ design.T
    _, logdet = np.linalg.slogdet(a)
    # -2 ln L_R (restricted likelihood: the linear parameters integrated out, flat priors)
    dev = -np.sum(np.log(w), axis=1) + np.sum(w * r * r, axis=1) + logdet
    return dev, beta, cov


def fit_joint_scatter(x, y, sy, post, x_q):
    """Fit both branches, continuous at ``x_q``, with a shared, marginalised intrinsic scatter.

    Parameters
    ----------
    x, y, sy : ndarray
        log10 r_h, log10 Afρ and its error for every night used (both branches).
    post : ndarray of bool
        Nights after perihelion.
    x_q : float
        log10 of the perihelion distance (au).

    Returns
    -------
    pre, post : LineFit
        Each branch as ``y = intercept + slope * x`` with its marginal 2x2 covariance, the
        shared scatter (posterior rms) and its posterior grid; ``dof`` and ``chi2`` are those
        of the joint fit (n - 3).
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    sy = np.asarray(sy, dtype=float)
    post = np.asarray(post, dtype=bool)
    dx = x - x_q
    design = np.column_stack([np.ones_like(x), np.where(post, 0.0, dx), np.where(post, dx, 0.0)])
    grid, upper = scatter_grid(lambda g: _solve(design, y, sy, g)[0], y, sy)
    dev, beta, cov = _solve(design, y, sy, grid)
    weight = np.exp(-0.5 * (dev - dev.min()))
    weight /= weight.sum()
    best = int(np.argmin(dev))
    d = beta - beta[best]
    full_cov = (np.einsum("g,gij->ij", weight, cov)
                + np.einsum("g,gi,gj->ij", weight, d, d))
    s_rms = float(np.sqrt(np.sum(weight * grid ** 2)))
    r = y - design @ beta[best]
    chi2 = float(np.sum((r / sy) ** 2))
    converged = bool(weight[-1] < 1e-3 or grid[-1] < upper)
    keep = weight > 1e-9
    fits = []
    for column, side in ((1, ~post), (2, post)):
        # y = (a - k x_q) + k x: the branch's own intercept at x = 0 and its covariance.
        jac = np.array([[1.0, -x_q], [0.0, 1.0]])
        sub = full_cov[np.ix_([0, column], [0, column])]
        a0 = float(beta[best, 0] - beta[best, column] * x_q)
        fits.append(LineFit(a0, float(beta[best, column]), jac @ sub @ jac.T, s_rms, 1.0, chi2,
                            x.size - 3, np.ones(int(np.count_nonzero(side)), dtype=bool),
                            converged, grid[keep], weight[keep] / weight[keep].sum()))
    return fits[0], fits[1]
