"""Moffat point-spread functions, rendered by oversampling each pixel (slow and plain on purpose).

The Moffat (1969, A&A 3, 455) profile is

    I(r) = (β - 1) / (π α²) · (1 + r²/α²)^(-β),   FWHM = 2 α sqrt(2^(1/β) - 1),

normalised to unit flux over the plane. The generator renders it on a stamp by averaging an
oversampled grid inside each pixel and renormalises the stamp to unit sum, so "total flux" in the
truth means the flux a large aperture would collect.

A source that moves during the exposure (the comet under sidereal tracking, the stars when the
telescope follows the comet) is the PSF averaged along its straight trail, centred on the
mid-exposure position, at steps of at most `TRAIL_STEP` pixel (`TrailedMoffat`).
"""

import numpy as np

__all__ = ["moffat_alpha", "moffat_stamp", "TrailedMoffat", "TRAIL_STEP"]

#: Trail steps of at most this many pixels (midpoint rule along the segment).
TRAIL_STEP = 0.2


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


def _trail_points(trail):
    length = float(np.hypot(*trail))
    n = max(1, int(np.ceil(length / TRAIL_STEP)))
    t = (np.arange(n) + 0.5) / n - 0.5
    return np.column_stack([t * trail[0], t * trail[1]])


class TrailedMoffat:
    """Stamps and kernels of a Moffat PSF averaged along a trail (plain and finely sampled).

    Parameters
    ----------
    fwhm, beta : float
        Moffat FWHM (pixels, major axis) and index.
    ellipticity, angle : float
        1 - b/a and the major axis's angle (radians from +x).
    trail : tuple of float
        Motion (dx, dy) in pixels during the exposure; (0, 0) gives the plain Moffat.

    Attributes
    ----------
    size : int
        Side of the stamps: 6 FWHM each side plus half the trail.

    Examples
    --------
    >>> psf = TrailedMoffat(2.5, 3.0, 0.0, 0.0, (3.0, 0.0))
    >>> s = psf.stamp(0.0, 0.0)
    >>> round(float(s.sum()), 12), s.shape == (psf.size, psf.size)
    (1.0, True)
    """

    def __init__(self, fwhm, beta, ellipticity, angle, trail):
        self.args = (fwhm, beta)
        self.kw = {"ellipticity": ellipticity, "angle": angle}
        self.points = _trail_points(trail)
        reach = int(np.ceil(0.5 * np.hypot(*trail)))
        self.size = int(2 * (np.ceil(6 * fwhm) + reach) + 1)

    def stamp(self, dx, dy, *, oversample=5):
        """Unit-sum stamp offset by (dx, dy) from the centre pixel, ``oversample`` per pixel."""
        out = sum(moffat_stamp(self.size, dx + ox, dy + oy, *self.args, oversample=oversample,
                               **self.kw) for ox, oy in self.points)
        return out / out.sum()

    def fine_kernel(self, n):
        """Centred unit-sum kernel sampled ``n`` times finer (for `render_comet`'s core)."""
        fwhm, beta = self.args
        out = sum(moffat_stamp(self.size * n, ox * n, oy * n, fwhm * n, beta, oversample=1,
                               **self.kw) for ox, oy in self.points)
        return out / out.sum()
