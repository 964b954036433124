"""Moffat point-spread functions, rendered by oversampling each pixel (slow and plain on purpose).

The Moffat (1969, A&A 3, 455) profile is

    I(r) = (β - 1) / (π α²) · (1 + r²/α²)^(-β),   FWHM = 2 α sqrt(2^(1/β) - 1),

normalised to unit flux over the plane. The generator renders it on a stamp by averaging an
oversampled grid inside each pixel and renormalises the stamp to unit sum, so "total flux" in the
truth means the flux a large aperture would collect.
"""

import numpy as np

__all__ = ["moffat_alpha", "moffat_stamp"]


def moffat_alpha(fwhm, beta):
    """Moffat core width α for a given FWHM and β.

    Examples
    --------
    >>> round(float(moffat_alpha(2.0, 3.0)), 6)
    1.961459
    """
    return fwhm / (2.0 * np.sqrt(2.0 ** (1.0 / beta) - 1.0))


def moffat_stamp(size, dx, dy, fwhm, beta, *, ellipticity=0.0, angle=0.0, oversample=5):
    """Pixel-integrated Moffat PSF on a square stamp, unit sum.

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
    alpha = moffat_alpha(fwhm, beta)
    img = (1.0 + (u_**2 + v_**2) / alpha**2) ** (-beta)
    img = img.reshape(size, oversample, size, oversample).mean(axis=(1, 3))
    return img / img.sum()
