"""Pixel-integrated Moffat stamps with their analytic derivatives (private helper of the PSF fit).

The shape is written with a smooth metric so that round stars have no kink in the parameters:

    V = (1 + Q)^(-β),  Q = m11 dx² + 2 m12 dx dy + m22 dy²,
    (m11, m12, m22) = k (1 - g1, -g2, 1 + g1),  k = exp(-2 s) / sqrt(1 - g²),

so that α_a α_b = exp(2 s), the axis ratio is b/a = sqrt((1 - g) / (1 + g)) and the major axis
lies at ½ atan2(g2, g1) (the Moffat 1969 profile of `photpipe.models.moffat` in another
parametrisation). The stars' flux is a free linear factor, so V is left unnormalised. Pixels are
integrated by Gauss-Legendre product quadrature (Abramowitz & Stegun 1964, 25.4.29), a star
trailed by a motion is the average over points along its trail, and the derivatives follow the
same sums term by term.
"""

import numpy as np
from numpy.polynomial.legendre import leggauss

from photpipe.models.moffat import moffat_alpha, moffat_fwhm

__all__ = ["SHAPE_NAMES", "shape_start", "shape_summary", "metric", "moffat_stamps"]

#: The shape parameters in order: ln √(α_a α_b), β, g1, g2.
SHAPE_NAMES = ("s", "beta", "g1", "g2")


def shape_start(fwhm, beta):
    """Round shape of a FWHM (pixels) and β as (s, β, 0, 0)."""
    return np.array([np.log(moffat_alpha(float(fwhm), float(beta))), float(beta), 0.0, 0.0])


def shape_summary(theta):
    """Major-axis FWHM, β, ellipticity 1 - b/a, angle (radians) and q1, q2 of shapes ``theta``.

    ``theta`` has shape (..., 4); every output has its leading shape.

    Examples
    --------
    >>> fwhm, beta, e, ang, q1, q2 = shape_summary(shape_start(3.0, 2.5))
    >>> round(float(fwhm), 12), float(e)
    (3.0, 0.0)
    """
    theta = np.asarray(theta, dtype=float)
    s, beta, g1, g2 = np.moveaxis(theta, -1, 0)
    g = np.minimum(np.hypot(g1, g2), 0.999)
    alpha_a = np.exp(s) * ((1.0 + g) / (1.0 - g)) ** 0.25
    e = 1.0 - np.sqrt((1.0 - g) / (1.0 + g))
    angle = 0.5 * np.arctan2(g2, g1)
    with np.errstate(invalid="ignore", divide="ignore"):
        q1 = np.where(g > 0, e * g1 / g, 0.0)
        q2 = np.where(g > 0, e * g2 / g, 0.0)
    return moffat_fwhm(alpha_a, beta), beta, e, angle, q1, q2


def metric(theta):
    """(m11, m12, m22) of shapes ``theta`` (n, 4), and their derivatives by (s, g1, g2).

    Returns ``m`` of shape (n, 3) and ``dm`` of shape (n, 3, 3), ``dm[:, k, j]`` being
    ∂m_k / ∂(s, g1, g2)_j.
    """
    s, _, g1, g2 = np.asarray(theta, dtype=float).T
    one_g2 = 1.0 - g1**2 - g2**2
    k = np.exp(-2.0 * s) / np.sqrt(one_g2)
    m = np.column_stack([k * (1.0 - g1), -k * g2, k * (1.0 + g1)])
    dk1, dk2 = k * g1 / one_g2, k * g2 / one_g2
    dm = np.empty((len(k), 3, 3))
    dm[:, :, 0] = -2.0 * m
    dm[:, 0, 1], dm[:, 1, 1], dm[:, 2, 1] = dk1 * (1.0 - g1) - k, -dk1 * g2, dk1 * (1.0 + g1) + k
    dm[:, 0, 2], dm[:, 1, 2], dm[:, 2, 2] = dk2 * (1.0 - g1), -dk2 * g2 - k, dk2 * (1.0 + g1)
    return m, dm


def moffat_stamps(px, py, x, y, theta, *, offsets=((0.0, 0.0),), nodes=3, jacobian=True):
    """Unnormalised pixel-integrated Moffat stamps of n stars and their derivatives.

    Parameters
    ----------
    px, py : ndarray, shape (nx,), (ny,)
        Pixel-centre coordinates of the stamp's columns and rows (the same for every star).
    x, y : ndarray, shape (n,)
        Star centres, same coordinates.
    theta : ndarray, shape (n, 4)
        Each star's shape (s, β, g1, g2).
    offsets : sequence of (dx, dy), optional
        Points along the trail: the stamp is their average.
    nodes : int, optional
        Gauss-Legendre nodes per pixel side.
    jacobian : bool, optional
        Also return the derivatives.

    Returns
    -------
    image : ndarray, shape (n, ny, nx)
    jac : ndarray, shape (n, 6, ny, nx)
        ∂image / ∂(s, β, g1, g2, x, y); only with ``jacobian``.

    Examples
    --------
    A derivative against a central difference (the sums run in float32):

    >>> px = py = np.arange(15.0)
    >>> th = np.array([[0.5, 2.5, 0.1, -0.05]])
    >>> img, jac = moffat_stamps(px, py, np.array([7.2]), np.array([6.9]), th)
    >>> h = np.array([0.0, 0.0, 1e-3, 0.0])
    >>> up, down = (moffat_stamps(px, py, np.array([7.2]), np.array([6.9]), th + sign * h,
    ...                           jacobian=False) for sign in (1, -1))
    >>> bool(np.allclose((up - down) / 2e-3, jac[:, 2], atol=1e-4))
    True
    """
    t, w = _nodes(int(nodes))
    f32 = np.float32
    gx = (np.asarray(px, float)[:, None] + t[None, :]).ravel()
    gy = (np.asarray(py, float)[:, None] + t[None, :]).ravel()
    k = len(t)
    theta = np.asarray(theta, dtype=float)
    m, dm = metric(theta)
    # the sums run in float32: 7 digits are far below the stars' noise, and twice as fast
    beta = theta[:, 1].astype(f32)[:, None, None]
    m11, m12, m22 = (m[:, j].astype(f32)[:, None, None] for j in range(3))
    # ∂Q/∂g1 and ∂Q/∂g2 are quadratic forms too; ∂Q/∂s = -2 Q
    c1 = [dm[:, j, 1].astype(f32)[:, None, None] for j in range(3)]
    c2 = [dm[:, j, 2].astype(f32)[:, None, None] for j in range(3)]
    img, parts = 0.0, [0.0] * 6
    for ox, oy in offsets:
        dx = (gx[None, None, :] - (np.asarray(x, float) + ox)[:, None, None]).astype(f32)
        dy = (gy[None, :, None] - (np.asarray(y, float) + oy)[:, None, None]).astype(f32)
        a_ = m11 * dx + m12 * dy
        b_ = m12 * dx + m22 * dy
        q = dx * a_ + dy * b_
        log_q = np.log1p(q)
        v = np.exp(-beta * log_q)
        img = img + v
        if not jacobian:
            continue
        dv_dq = -beta * v / (1.0 + q)
        dxx, dxy, dyy = dx * dx, 2.0 * dx * dy, dy * dy
        terms = (-2.0 * dv_dq * q, -log_q * v,
                 dv_dq * (c1[0] * dxx + c1[1] * dxy + c1[2] * dyy),
                 dv_dq * (c2[0] * dxx + c2[1] * dxy + c2[2] * dyy),
                 -2.0 * dv_dq * a_, -2.0 * dv_dq * b_)
        parts = [p_ + t_ for p_, t_ in zip(parts, terms)]
    scale = 1.0 / len(offsets)
    img = _integrate(img, w, k).astype(float) * scale
    if not jacobian:
        return img
    jac = _integrate(np.stack(parts, axis=1), w, k).astype(float) * scale
    return img, jac


def _nodes(nodes):
    """Gauss-Legendre nodes and weights on [-1/2, 1/2]."""
    t, w = leggauss(nodes)
    return 0.5 * t, (0.5 * w).astype(np.float32)


def _integrate(values, w, k):
    """Weighted sums over the k × k quadrature points of each pixel (the last two axes)."""
    *lead, nyk, nxk = values.shape
    v = values.reshape(*lead, nyk // k, k, nxk // k, k)
    rows = sum(w[j] * v[..., j, :, :] for j in range(k))
    return sum(w[j] * rows[..., j] for j in range(k))
