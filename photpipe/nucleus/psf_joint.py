"""The field stars' Moffat fitted jointly: one shape, each star's own position, flux and sky.

All the PSF stars share the shape (`_moffat_jacobian`: ln √(α_a α_b), β, g1, g2); each star has
its centre, and its flux and sloping sky as linear factors solved exactly at every step
(variable projection, Golub & Pereyra 1973, with Kaufman's 1975 Jacobian). The derivatives are
analytic and the normal equations small (4 + 2 n unknowns), so a Levenberg-Marquardt iteration
(Press et al. 2007, Numerical Recipes 3rd ed., 15.5.2) costs one rendering of the stamps. The
residuals of that one fit decide whether an empirical PSF is worth building, and score the
Moffat; each star's own shape, for the PSF's error, is a few steps from the joint one.
"""

from dataclasses import dataclass

import numpy as np
from scipy import ndimage

from ._fit_steps import find_residual_sources
from ._moffat_jacobian import moffat_stamps, shape_start, shape_summary

__all__ = ["JointMoffatFit", "fit_stars_jointly", "STAR_OUTLIER_FACTOR"]

#: A star whose χ²/dof is this many times the median of the stars' is left out of the shape
#: (a neighbour below the catalogue limit, a cosmic-ray hit): one shape cannot be judged on it.
STAR_OUTLIER_FACTOR = 3.0

#: Pixels more than this many σ above the fit outside its core (a neighbour, a hit) are masked,
#: grown by `_GROW` pixels, and the stars are fitted again.
_NEIGHBOUR_SIGMA = 5.0
_GROW = 2
#: Radius (FWHM) of the disc left out about a faint neighbour found by the matched filter.
_FAINT_DISC = 2.0

_BETA = (1.3, 15.0)
_G_MAX = 0.8           # axis ratio down to 1/3
_STEP_XY = 2.0         # pixels a star may move from its catalogue position


@dataclass(frozen=True, eq=False)
class JointMoffatFit:
    """The joint fit of the PSF stars.

    Attributes
    ----------
    theta : ndarray, shape (4,)
        The shared shape (s, β, g1, g2).
    x, y : ndarray, shape (n,)
        Star centres in stamp coordinates.
    flux : ndarray, shape (n,)
        Linear factor of each star's unnormalised stamp.
    chi2, dof : ndarray, shape (n,)
        Each star's χ² and degrees of freedom (usable pixels - 6).
    residual : ndarray, shape (n, ny, nx)
        (data - model) / σ, NaN where not usable.
    stars : ndarray of int
        Indices of the stamps used (outliers left out).
    star_theta : ndarray, shape (n, 4)
        Each star's own shape, refined from the joint one.
    offsets : ndarray, shape (k, 2)
        Points along the stars' trail.
    """

    theta: np.ndarray
    x: np.ndarray
    y: np.ndarray
    flux: np.ndarray
    chi2: np.ndarray
    dof: np.ndarray
    residual: np.ndarray
    stars: np.ndarray
    star_theta: np.ndarray
    offsets: np.ndarray

    def shape(self):
        """(FWHM_major, β, ellipticity, angle in radians) of the joint shape."""
        fwhm, beta, e, angle, _, _ = shape_summary(self.theta)
        return float(fwhm), float(beta), float(e), float(angle)

    def star_shapes(self):
        """Each star's (FWHM_major, β, q1, q2), shape (n, 4)."""
        fwhm, beta, _, _, q1, q2 = shape_summary(self.star_theta)
        return np.column_stack([fwhm, beta, q1, q2])


class _Stack:
    """The stamps stacked: weighted data, weights and the sky plane's rows."""

    def __init__(self, stamps):
        self.data = np.stack([st.data for st in stamps]).astype(float)
        good = np.stack([st.good for st in stamps])
        sigma = np.stack([st.sigma for st in stamps]).astype(float)
        self.weight = np.where(good, 1.0 / sigma, 0.0)
        _, ny, nx = self.data.shape
        self.px, self.py = np.arange(nx, dtype=float), np.arange(ny, dtype=float)
        yy, xx = np.mgrid[0:ny, 0:nx]
        # sky 1, x, y as in _stamps.sky_plane: a sloping sky under stars inside the coma
        self.sky = np.stack([np.ones((ny, nx)), (xx - nx / 2) / nx, (yy - ny / 2) / ny])

    def take(self, keep):
        out = object.__new__(_Stack)
        out.__dict__.update(self.__dict__)
        out.data, out.weight = self.data[keep], self.weight[keep]
        return out


def _solve(stack, theta, x, y, offsets, nodes, jacobian=True):
    """Residuals (n, p), linear factors (n, 4) and the projected Jacobian (n, p, 6)."""
    n = len(x)
    out = moffat_stamps(stack.px, stack.py, x, y, np.broadcast_to(theta, (n, 4)) if
                        theta.ndim == 1 else theta, offsets=offsets, nodes=nodes,
                        jacobian=jacobian)
    img, jac = out if jacobian else (out, None)
    w = stack.weight.reshape(n, -1)
    basis = np.concatenate([img[:, None], np.broadcast_to(stack.sky, (n, 3) + img.shape[1:])],
                           axis=1).reshape(n, 4, -1) * w[:, None, :]
    wd = stack.data.reshape(n, -1) * w
    gram = basis @ basis.transpose(0, 2, 1)
    coef = np.linalg.solve(gram, basis @ wd[..., None])[..., 0]
    r = wd - (coef[:, None, :] @ basis)[:, 0]
    if not jacobian:
        return r, coef, None
    # Kaufman (1975): -(I - projection on the linear columns) of the model's derivative
    d = jac.reshape(n, 6, -1) * (coef[:, 0][:, None, None] * w[:, None, :])
    along = np.linalg.solve(gram, basis @ d.transpose(0, 2, 1))
    d = d - along.transpose(0, 2, 1) @ basis
    return r, coef, -np.transpose(d, (0, 2, 1))


def _clip(theta, x, y, x0, y0, size):
    """Keep the parameters inside their bounds."""
    theta = theta.copy()
    theta[..., 0] = np.clip(theta[..., 0], np.log(0.3), np.log(size))
    theta[..., 1] = np.clip(theta[..., 1], *_BETA)
    g = np.hypot(theta[..., 2], theta[..., 3])
    scale = np.where(g > _G_MAX, _G_MAX / np.maximum(g, 1e-300), 1.0)
    theta[..., 2] *= scale
    theta[..., 3] *= scale
    return (theta, np.clip(x, x0 - _STEP_XY, x0 + _STEP_XY),
            np.clip(y, y0 - _STEP_XY, y0 + _STEP_XY))


def _joint_step(r, jac, lam):
    """Levenberg-Marquardt step of the shared shape and the n centres."""
    n = len(r)
    h = np.zeros((4 + 2 * n, 4 + 2 * n))
    blocks = jac.transpose(0, 2, 1) @ jac
    h[:4, :4] = blocks[:, :4, :4].sum(axis=0)
    cross, own = blocks[:, :4, 4:], blocks[:, 4:, 4:]
    for i in range(n):
        k = 4 + 2 * i
        h[:4, k:k + 2] = cross[i]
        h[k:k + 2, :4] = cross[i].T
        h[k:k + 2, k:k + 2] = own[i]
    grad = (jac.transpose(0, 2, 1) @ r[..., None])[..., 0]
    g = np.concatenate([grad[:, :4].sum(axis=0), grad[:, 4:].ravel()])
    diag = np.maximum(np.diag(h), 1e-12 * max(np.diag(h).max(), 1e-300))
    step = -np.linalg.solve(h + lam * np.diag(diag), g)
    return step[:4], step[4::2], step[5::2]


def _fit_joint(stack, theta, x, y, offsets, nodes, *, max_iter=40):
    """Levenberg-Marquardt on the shared shape and the centres; returns theta, x, y."""
    x0, y0 = x.copy(), y.copy()
    size = float(stack.data.shape[1])
    lam = 1e-3
    r, _, jac = _solve(stack, theta, x, y, offsets, nodes)
    cost = float(np.sum(r**2))
    for _ in range(max_iter):
        dt, dx, dy = _joint_step(r, jac, lam)
        t_new, x_new, y_new = _clip(theta + dt, x + dx, y + dy, x0, y0, size)
        r_new, _, jac_new = _solve(stack, t_new, x_new, y_new, offsets, nodes)
        new = float(np.sum(r_new**2))
        if np.isfinite(new) and new <= cost:
            small = cost - new <= 1e-9 * cost + 1e-12
            theta, x, y, r, jac, cost = t_new, x_new, y_new, r_new, jac_new, new
            lam = max(lam / 5.0, 1e-7)
            if small and np.max(np.abs(dt / [0.01, 0.01, 0.001, 0.001])) < 1:
                break
        else:
            lam *= 8.0
            if lam > 1e8:
                break
    return theta, x, y


def _fit_each(stack, theta, x, y, offsets, nodes, *, iterations=3):
    """Each star's own shape and centre, by a few damped steps from the joint solution."""
    n = len(x)
    theta = np.tile(theta, (n, 1))
    x0, y0 = x.copy(), y.copy()
    size = float(stack.data.shape[1])
    lam = np.full(n, 1e-3)
    r, _, jac = _solve(stack, theta, x, y, offsets, nodes)
    cost = np.sum(r**2, axis=1)
    for _ in range(iterations):
        h = jac.transpose(0, 2, 1) @ jac
        g = (jac.transpose(0, 2, 1) @ r[..., None])[..., 0]
        diag = np.maximum(np.einsum("naa->na", h), 1e-12)
        damped = h + lam[:, None, None] * (diag[:, :, None] * np.eye(6))
        step = -np.linalg.solve(damped, g[..., None])[..., 0]
        t_new, x_new, y_new = _clip(theta + step[:, :4], x + step[:, 4], y + step[:, 5], x0, y0,
                                    size)
        r_new, _, jac_new = _solve(stack, t_new, x_new, y_new, offsets, nodes)
        new = np.sum(r_new**2, axis=1)
        ok = np.isfinite(new) & (new <= cost)
        theta[ok], x[ok], y[ok], r[ok], jac[ok], cost[ok] = (
            t_new[ok], x_new[ok], y_new[ok], r_new[ok], jac_new[ok], new[ok])
        lam = np.where(ok, np.maximum(lam / 5.0, 1e-7), lam * 8.0)
    return theta


def _neighbours(stack, r, x, y, fwhm):
    """Pixels of a neighbour or a hit outside the stars' cores, to be left out.

    Pixels far above the fit (a hit, a bright neighbour's core), grown, and discs of
    `_FAINT_DISC` FWHM about fainter neighbours found by a matched filter on the residual
    (`find_residual_sources`): a star below the catalogue limit a few FWHM from a PSF star
    has a core under 5σ a pixel, and its light, left in, biased the fitted Moffat (β 0.01-0.04
    high on noise-free poor-seeing frames, 0.01 at most with the discs). Only sources beyond
    2 FWHM of the star are looked for, where a misfit of the star itself is faint.
    """
    n, ny, nx = stack.data.shape
    yy, xx = np.mgrid[0:ny, 0:nx]
    outside = np.hypot(xx[None] - x[:, None, None], yy[None] - y[:, None, None]) > 1.5 * fwhm
    resid = r.reshape(n, ny, nx)
    high = (resid > _NEIGHBOUR_SIGMA) & outside
    cross = np.array([[[0, 1, 0], [1, 1, 1], [0, 1, 0]]], bool)
    bad = ndimage.binary_dilation(high, structure=cross, iterations=_GROW)
    good = stack.weight > 0
    for i in range(n):
        for sx, sy, _ in find_residual_sources(np.where(good[i], resid[i], 0.0), good[i], x[i],
                                               y[i], fwhm=fwhm, keep_radius=2.0 * fwhm):
            bad[i] |= np.hypot(xx - sx, yy - sy) < _FAINT_DISC * fwhm
    return bad & good


def fit_stars_jointly(stamps, *, fwhm_guess=3.0, beta_guess=3.0, offsets=((0.0, 0.0),)):
    """Fit one Moffat shape to all the star stamps at once.

    Parameters
    ----------
    stamps : list of `~photpipe.nucleus._stamps.StarStamp`
        Stamps of one size.
    fwhm_guess, beta_guess : float, optional
        Start of the shape (pixels, β).
    offsets : array-like, shape (k, 2), optional
        Points along the stars' trail (pixels); one point (0, 0) for untrailed stars.

    Returns
    -------
    fit : JointMoffatFit

    Raises
    ------
    ValueError
        If no stamp is given or the fit cannot be solved.

    Notes
    -----
    After a first fit, pixels more than 5σ above it outside 1.5 FWHM of a star are masked (grown
    by 2 pixels), so are discs of 2 FWHM about fainter neighbours the matched filter finds in
    the residual beyond 2 FWHM of a star, and stars whose χ²/dof exceeds `STAR_OUTLIER_FACTOR`
    times the median are left out; the fit is then repeated from where it stopped.
    """
    if not stamps:
        msg = "no star stamp to fit a Moffat profile to"
        raise ValueError(msg)
    offsets = np.asarray(offsets, dtype=float).reshape(-1, 2)
    nodes = 3 if len(offsets) == 1 else 2
    stack = _Stack(stamps)
    theta = shape_start(fwhm_guess, beta_guess)
    x = np.array([st.x_local for st in stamps])
    y = np.array([st.y_local for st in stamps])
    stars = np.arange(len(stamps))
    try:
        theta, x, y = _fit_joint(stack, theta, x, y, offsets, nodes)
        r, _, _ = _solve(stack, theta, x, y, offsets, nodes, jacobian=False)
        bad = _neighbours(stack, r, x, y, shape_summary(theta)[0])
        red = _reduced_chi2(r, stack, bad)
        keep = red <= STAR_OUTLIER_FACTOR * np.median(red)
        if np.any(bad) or not np.all(keep):
            stack.weight[bad] = 0.0
            stars, x, y = stars[keep], x[keep], y[keep]
            stack = stack.take(keep)
            theta, x, y = _fit_joint(stack, theta, x, y, offsets, nodes)
        r, coef, _ = _solve(stack, theta, x, y, offsets, nodes, jacobian=False)
        star_theta = _fit_each(stack, theta, x.copy(), y.copy(), offsets, nodes)
    except np.linalg.LinAlgError as exc:
        msg = f"the joint Moffat fit of {len(stamps)} stars could not be solved ({exc})"
        raise ValueError(msg) from exc
    n, ny, nx = stack.data.shape
    usable = stack.weight > 0
    residual = np.where(usable, r.reshape(n, ny, nx), np.nan)
    return JointMoffatFit(theta=theta, x=x, y=y, flux=coef[:, 0],
                          chi2=np.sum(r**2, axis=1), dof=usable.sum(axis=(1, 2)) - 6.0,
                          residual=residual, stars=stars, star_theta=star_theta, offsets=offsets)


def _reduced_chi2(r, stack, bad):
    use = (stack.weight > 0) & ~bad
    n = len(r)
    chi2 = np.sum(np.where(use.reshape(n, -1), r**2, 0.0), axis=1)
    return chi2 / np.maximum(use.reshape(n, -1).sum(axis=1) - 6.0, 1.0)
