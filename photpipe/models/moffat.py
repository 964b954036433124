"""The elliptical Moffat profile, as a pure model function (no fitting here).

The Moffat (1969, A&A 3, 455) point-spread function normalised to unit flux over the plane is

    I(u, v) = (β - 1) / (π α_a α_b) · (1 + u²/α_a² + v²/α_b²)^(-β),

with (u, v) along the major and minor axes, α_b = (1 - e) α_a for ellipticity e = 1 - b/a, and
FWHM_a = 2 α_a sqrt(2^(1/β) - 1) along the major axis (Trujillo et al. 2001, MNRAS 328, 977,
eq. 3 and 5). Its encircled energy is EE(r) = 1 - (1 + r²/α²)^(1-β) for the circular profile.
The stages share these functions: the nucleus fit renders its PSF with `moffat_pixel_image` and
`moffat_kernel`, the photometry's coma aperture correction uses `moffat_shape` and
`moffat_encircled`, and the synthetic sky renders its stars with `moffat_stamp`.
"""

from functools import lru_cache

import numpy as np
from numpy.polynomial.legendre import leggauss

__all__ = ["moffat_alpha", "moffat_fwhm", "moffat_shape", "moffat_surface", "moffat_pixel_image",
           "moffat_kernel", "moffat_stamp", "moffat_encircled"]


def moffat_alpha(fwhm, beta):
    """Moffat core width α for a FWHM and β.

    Examples
    --------
    >>> round(float(moffat_alpha(2.0, 3.0)), 6)
    1.961459
    """
    return fwhm / (2.0 * np.sqrt(2.0 ** (1.0 / beta) - 1.0))


def moffat_fwhm(alpha, beta):
    """FWHM of a Moffat profile of core width α and index β (inverse of `moffat_alpha`).

    Examples
    --------
    >>> round(float(moffat_fwhm(moffat_alpha(3.3, 2.5), 2.5)), 12)
    3.3
    """
    return 2.0 * alpha * np.sqrt(2.0 ** (1.0 / beta) - 1.0)


def moffat_shape(r2, alpha, beta):
    """The Moffat profile (1 + r²/α²)^(-β), not normalised, at squared radii ``r2``.

    Parameters
    ----------
    r2 : float or ndarray
        Squared distance from the centre, in the square of ``alpha``'s unit.
    alpha, beta : float
        Core width and index.

    Returns
    -------
    value : float or ndarray
        1 at the centre.

    Examples
    --------
    >>> float(moffat_shape(1.0, 1.0, 3.0))   # 2^-3
    0.125
    """
    return (1.0 + r2 / alpha**2) ** (-beta)


def moffat_surface(x, y, *, fwhm, beta, ellipticity=0.0, angle=0.0):
    """Moffat surface density at offsets (x, y) from its centre, unit integral over the plane.

    Parameters
    ----------
    x, y : array-like
        Offsets in pixels.
    fwhm : float
        FWHM along the major axis, pixels.
    beta : float
        Moffat index (> 1).
    ellipticity : float, optional
        1 - b/a, in [0, 1).
    angle : float, optional
        Major-axis angle, radians counter-clockwise from +x.

    Returns
    -------
    density : ndarray
        Per unit pixel area.

    Examples
    --------
    >>> a = moffat_alpha(3.0, 3.0)
    >>> round(float(moffat_surface(0.0, 0.0, fwhm=3.0, beta=3.0) * np.pi * a**2), 12)
    2.0
    """
    if beta <= 1.0:
        msg = f"Moffat 'beta' must exceed 1, got {beta}"
        raise ValueError(msg)
    if not 0.0 <= ellipticity < 1.0:
        msg = f"'ellipticity' must lie in [0, 1), got {ellipticity}"
        raise ValueError(msg)
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    c, s = np.cos(angle), np.sin(angle)
    aa = moffat_alpha(fwhm, beta)
    ab = aa * (1.0 - ellipticity)
    u_ = (x * c + y * s) / aa
    v_ = (-x * s + y * c) / ab
    return (beta - 1.0) / (np.pi * aa * ab) * (1.0 + u_**2 + v_**2) ** (-beta)


@lru_cache(maxsize=8)
def _pixel_nodes(nodes):
    """Gauss-Legendre nodes and weights on [-1/2, 1/2], computed once per order.

    The PSF fits call `moffat_pixel_image` thousands of times per frame.
    """
    t, w = leggauss(nodes)
    t, w = 0.5 * t, 0.5 * w
    t.flags.writeable = False
    w.flags.writeable = False
    return t, w


def moffat_pixel_image(shape, x0, y0, *, fwhm, beta, ellipticity=0.0, angle=0.0, nodes=4):
    """Moffat integrated over each pixel of an image: a unit-flux point source at (x0, y0).

    Parameters
    ----------
    shape : tuple of int
        (ny, nx).
    x0, y0 : float
        Centre in pixel coordinates (pixel centres at integers).
    fwhm, beta, ellipticity, angle
        As in `moffat_surface`.
    nodes : int, optional
        Gauss-Legendre nodes per pixel side.

    Returns
    -------
    image : ndarray, shape (ny, nx)
        Fraction of the total flux in each pixel; sums to < 1 when wings leave the image.

    Notes
    -----
    Gauss-Legendre product quadrature over each pixel (Abramowitz & Stegun 1964, 25.4.29). With
    4 nodes and FWHM ≥ 2 pixels the pixel values are good to better than 1e-4 relative.

    Examples
    --------
    >>> img = moffat_pixel_image((61, 61), 30.2, 29.9, fwhm=3.0, beta=3.0)
    >>> round(float(img.sum()), 3)
    1.0
    """
    ny, nx = shape
    t, w = _pixel_nodes(int(nodes))
    xs = (np.arange(nx)[:, None] + t[None, :]).ravel() - x0
    ys = (np.arange(ny)[:, None] + t[None, :]).ravel() - y0
    img = moffat_surface(xs[None, :], ys[:, None], fwhm=fwhm, beta=beta,
                         ellipticity=ellipticity, angle=angle)
    img = img.reshape(ny, nodes, nx, nodes)
    return np.einsum("ijnm,j,m->in", img, w, w)


def moffat_kernel(size, *, fwhm, beta, ellipticity=0.0, angle=0.0, oversample=1):
    """Point-sampled, centred, unit-sum Moffat kernel for convolving pixel-integrated scenes.

    Parameters
    ----------
    size : int
        Kernel side in pixels (odd).
    fwhm, beta, ellipticity, angle
        As in `moffat_surface`.
    oversample : int, optional
        Samples per pixel side; the kernel has ``size * oversample`` samples per side.

    Returns
    -------
    kernel : ndarray, shape (size * oversample, size * oversample)

    Notes
    -----
    A scene already integrated over pixels, convolved with the PSF sampled at pixel centres,
    gives the pixel integrals of the PSF-blurred scene (the pixel box enters once); a
    pixel-integrated kernel would apply the box twice.

    Examples
    --------
    >>> k = moffat_kernel(15, fwhm=3.0, beta=3.0)
    >>> k.shape, round(float(k.sum()), 12), bool(k[7, 7] == k.max())
    ((15, 15), 1.0, True)
    """
    if size % 2 != 1:
        msg = f"kernel 'size' must be odd, got {size}"
        raise ValueError(msg)
    n = size * oversample
    c = (np.arange(n) + 0.5) / oversample - size / 2.0
    k = moffat_surface(c[None, :], c[:, None], fwhm=fwhm, beta=beta, ellipticity=ellipticity,
                       angle=angle)
    return k / k.sum()


def moffat_stamp(size, dx, dy, fwhm, beta, *, ellipticity=0.0, angle=0.0, oversample=5):
    """Pixel-integrated Moffat PSF on a square stamp, unit sum (slow and plain on purpose).

    The synthetic sky renders its stars with it: each pixel is the mean of an oversampled grid
    inside it, and the stamp is renormalised to unit sum, so "total flux" in the truth means the
    flux a large aperture would collect.

    Parameters
    ----------
    size : int
        Stamp side in pixels (odd); the stamp centre pixel is ``size // 2``.
    dx, dy : float
        Offset of the PSF centre from the centre pixel, in pixels.
    fwhm : float
        FWHM along the major axis, in pixels.
    beta : float
        Moffat β (> 1).
    ellipticity : float, optional
        1 - b/a.
    angle : float, optional
        Position of the major axis, radians counter-clockwise from +x.
    oversample : int, optional
        Sub-pixels per pixel side.

    Returns
    -------
    stamp : ndarray, shape (size, size)
        Normalised to unit sum.

    Examples
    --------
    >>> s = moffat_stamp(21, 0.0, 0.0, 3.0, 3.0)
    >>> round(float(s.sum()), 12), int(s.argmax()) == 21 * 10 + 10
    (1.0, True)
    """
    if size % 2 != 1:
        msg = f"stamp 'size' must be odd, got {size}"
        raise ValueError(msg)
    if beta <= 1:
        msg = f"Moffat 'beta' must exceed 1, got {beta}"
        raise ValueError(msg)
    half = size // 2
    sub = (np.arange(size * oversample) + 0.5) / oversample - 0.5 - half
    yy, xx = np.meshgrid(sub - dy, sub - dx, indexing="ij")
    c, s = np.cos(angle), np.sin(angle)
    u_ = xx * c + yy * s
    v_ = (-xx * s + yy * c) / (1.0 - ellipticity)
    img = moffat_shape(u_**2 + v_**2, moffat_alpha(fwhm, beta), beta)
    img = img.reshape(size, oversample, size, oversample).mean(axis=(1, 3))
    return img / img.sum()


def moffat_encircled(r, alpha, beta):
    """Encircled-energy fraction of a circular Moffat PSF.

    Parameters
    ----------
    r : float or ndarray
        Radius, same unit as ``alpha``.
    alpha, beta : float
        Moffat width and index.

    Returns
    -------
    fraction : float or ndarray
        EE(r) = 1 - (1 + r²/α²)^(1-β), integrating I(r) ∝ (1 + r²/α²)^(-β) over the disc
        (Moffat 1969, A&A 3, 455).

    Examples
    --------
    >>> round(float(moffat_encircled(1.0, 1.0, 3.0)), 4)   # 1 - 2^-2
    0.75
    """
    r = np.asarray(r, dtype=float)
    return 1.0 - (1.0 + (r / alpha) ** 2) ** (1.0 - beta)
