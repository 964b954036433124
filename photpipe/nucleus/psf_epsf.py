"""Empirical PSF: the stars' joint Moffat plus a table of their mean residual around it.

An analytic profile carries the bulk of the light and a look-up table of corrections, sampled
finer than the pixels, carries what the profile misses (Stetson 1987, PASP 99, 191, the
DAOPHOT PSF); the table is the stars' residuals from the joint fit, each scaled by its star's
flux and placed by its offset from the star's fitted centre (the effective PSF of Anderson &
King 2000, PASP 112, 1360: a sampled, pixel-integrated profile). The joint fit already holds
every centre and flux, so the table is built in one pass, with no iteration.
"""

import numpy as np
from scipy import ndimage

from ._moffat_jacobian import moffat_stamps

__all__ = ["build_epsf_image"]


def build_epsf_image(fit, stamps, *, oversampling=2):
    """Oversampled empirical PSF from the joint Moffat fit of the stars and their stamps.

    Parameters
    ----------
    fit : `~photpipe.nucleus.psf_joint.JointMoffatFit`
        The joint fit (untrailed stars).
    stamps : list of `~photpipe.nucleus._stamps.StarStamp`
        The stamps it was fitted to (``fit.stars`` indexes them).
    oversampling : int, optional
        Samples per pixel side.

    Returns
    -------
    epsf : dict
        ``image`` (ndarray, the effective PSF at offsets ``(i - c) / oversampling`` pixels from
        the centre ``c`` of the grid; its sum divided by ``oversampling**2`` is 1),
        ``oversampling``, ``n_used`` and ``without`` (ndarray, shape (n, ny, nx): the image
        made without each star in turn, to score the table on stars it was not made from).

    Notes
    -----
    Each residual pixel is spread over its four nearest table points (bilinear weights) with
    weight (flux / σ)², the inverse variance of residual / flux; the sums are smoothed by the
    [1, 2, 1] / 4 kernel along each axis before dividing (normalised convolution), which keeps
    the table from following the noise of single samples.
    """
    used = [stamps[i] for i in fit.stars]
    n, ny, nx = fit.residual.shape
    half = min(ny, nx) // 2
    grid = (np.arange(2 * half * oversampling + 1) - half * oversampling) / oversampling
    moffat = moffat_stamps(grid, grid, np.zeros(1), np.zeros(1), fit.theta[None, :],
                           jacobian=False)[0]
    sigma = np.stack([st.sigma for st in used])
    ok = np.isfinite(fit.residual)
    value = np.where(ok, fit.residual * sigma, 0.0) / fit.flux[:, None, None]
    weight = np.where(ok, (fit.flux[:, None, None] / sigma) ** 2, 0.0)
    yy, xx = np.mgrid[0:ny, 0:nx]
    u = (xx[None] - fit.x[:, None, None] + half) * oversampling
    v = (yy[None] - fit.y[:, None, None] + half) * oversampling
    num, den = _splat(u, v, value, weight, grid.size)
    total_num, total_den = num.sum(axis=0), den.sum(axis=0)
    image = _normalised(moffat + _ratio(total_num, total_den), oversampling)
    # each star's table from the other stars alone: scored on a star, it cannot fit that
    # star's own noise (leave-one-out cross-validation, common practice)
    without = np.stack([_normalised(moffat + _ratio(total_num - num[i], total_den - den[i]),
                                    oversampling) for i in range(n)])
    return {"image": image, "oversampling": oversampling, "n_used": n, "without": without}


def _normalised(image, oversampling):
    return image / image.sum() * oversampling**2


def _ratio(num, den):
    return np.divide(num, den, out=np.zeros_like(num), where=den > 1e-12 * den.max())


def _splat(u, v, value, weight, size):
    """Each star's weighted sums on a size × size grid (bilinear shares), lightly smoothed.

    ``u, v, value, weight`` have shape (n, ny, nx); returns the numerators and denominators,
    each of shape (n, size, size).
    """
    n = len(u)
    star = np.broadcast_to(np.arange(n)[:, None, None], u.shape).ravel()
    u, v, value, weight = u.ravel(), v.ravel(), value.ravel(), weight.ravel()
    i0, j0 = np.floor(u).astype(int), np.floor(v).astype(int)
    fu, fv = u - i0, v - j0
    cells = n * size * size
    num = np.zeros(cells)
    den = np.zeros(cells)
    for di, dj, share in ((0, 0, (1 - fu) * (1 - fv)), (1, 0, fu * (1 - fv)),
                          (0, 1, (1 - fu) * fv), (1, 1, fu * fv)):
        i, j = i0 + di, j0 + dj
        inside = (i >= 0) & (i < size) & (j >= 0) & (j < size)
        flat = (star[inside] * size + j[inside]) * size + i[inside]
        w = (weight * share)[inside]
        num += np.bincount(flat, w * value[inside], cells)
        den += np.bincount(flat, w, cells)
    kernel = np.array([0.25, 0.5, 0.25])
    num, den = num.reshape(n, size, size), den.reshape(n, size, size)
    for axis in (1, 2):
        num = ndimage.convolve1d(num, kernel, axis=axis, mode="constant")
        den = ndimage.convolve1d(den, kernel, axis=axis, mode="constant")
    return num, den
