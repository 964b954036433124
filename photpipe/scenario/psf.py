"""Moffat point-spread functions for the synthetic sky (defined in `photpipe.models.moffat`).

The renderers import `moffat_stamp` from here; the one implementation is in `photpipe.models`.

A source that moves during the exposure (the comet under sidereal tracking, the stars when the
telescope follows the comet) is the PSF averaged along its straight trail, centred on the
mid-exposure position, at steps of at most `TRAIL_STEP` pixel (`TrailedMoffat`).
"""

import numpy as np

from photpipe.models.moffat import moffat_alpha, moffat_stamp

__all__ = ["moffat_alpha", "moffat_stamp", "TrailedMoffat", "TRAIL_STEP"]

#: Trail steps of at most this many pixels (midpoint rule along the segment).
TRAIL_STEP = 0.2


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
