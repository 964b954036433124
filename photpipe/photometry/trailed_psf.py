"""The untrailed PSF from stars trailed by the telescope following the comet.

The comet on such a frame is not trailed, so its coma correction and its FWHM need the PSF the
stars would have had without the trail. Each of the brightest clear stars is fitted with a
Moffat (Moffat 1969, A&A 3, 455) integrated over the pixels and averaged along the known trail
(the same model the synthetic sky renders, `photpipe.scenario.psf.TrailedMoffat`); the median
α and β over the stars is the PSF. The star curve of growth that serves sidereal frames cannot:
in stadium apertures it mixes the PSF with the trail.
"""

import numpy as np
from scipy.optimize import least_squares

from photpipe.models.moffat import moffat_alpha, moffat_fwhm, moffat_pixel_image

from .detection import measure_fwhm

__all__ = ["TRAIL_FIT_STEP", "fit_trailed_moffat", "measured_fwhm_of_moffat"]

#: The model's trail is sampled at midpoints of parts of at most this many pixels.
TRAIL_FIT_STEP = 0.5


def _trail_offsets(trail):
    length = float(np.hypot(*trail))
    n = max(1, int(np.ceil(length / TRAIL_FIT_STEP)))
    t = (np.arange(n) + 0.5) / n - 0.5
    return np.column_stack([t * trail[0], t * trail[1]])


def _fit_one(stamp, var, ok, x0, y0, trail, fwhm_guess):
    """Flux, sky, α, β of one trailed star (centre held at its first moment); None if failed."""
    offsets = _trail_offsets(trail)
    shape = stamp.shape
    sigma = np.sqrt(np.where(ok & (var > 0), var, np.inf))
    sky0 = float(np.median(stamp[ok]))
    flux0 = float(np.sum(stamp[ok] - sky0))
    if not flux0 > 0:
        return None
    beta0 = 3.0

    def model(p):
        fwhm = moffat_fwhm(np.exp(p[2]), 1.0 + np.exp(p[3]))
        img = sum(moffat_pixel_image(shape, x0 + ox, y0 + oy, fwhm=fwhm,
                                     beta=1.0 + np.exp(p[3]), nodes=3) for ox, oy in offsets)
        return p[1] + p[0] * img / len(offsets)

    def residual(p):
        return ((stamp - model(p)) / sigma)[ok]

    start = [flux0, sky0, np.log(moffat_alpha(fwhm_guess, beta0)), np.log(beta0 - 1.0)]
    try:
        fit = least_squares(residual, start, x_scale="jac", max_nfev=200)
    except (ValueError, FloatingPointError):
        return None
    if not fit.success or not fit.x[0] > 0:
        return None
    return np.exp(fit.x[2]), 1.0 + np.exp(fit.x[3])


def fit_trailed_moffat(data, variance, good, x, y, trail, *, fwhm_guess, max_stars=8):
    """Moffat α and β of the untrailed PSF, from stars trailed by ``trail``.

    Parameters
    ----------
    data, variance : ndarray, shape (ny, nx)
        The frame and its variance (electrons; any smooth light left is taken as each
        star's flat sky).
    good : ndarray of bool, shape (ny, nx)
    x, y : array-like
        Mid-exposure centres of bright, clear, unsaturated stars, best first.
    trail : tuple of float
        The stars' trail (dx, dy), pixels.
    fwhm_guess : float
        A first FWHM across the trail (pixels).
    max_stars : int, optional
        Fit at most this many stars.

    Returns
    -------
    alpha, beta : float or None
        Medians over the stars fitted (α in pixels; the optical PSF, before the pixel); None
        when fewer than two stars could be fitted.

    Examples
    --------
    >>> from photpipe.scenario.psf import TrailedMoffat
    >>> psf = TrailedMoffat(3.0, 3.0, 0.0, 0.0, (6.0, 2.0))
    >>> img = np.full((80, 150), 20.0)
    >>> s = psf.stamp(0.0, 0.0) * 2e5
    >>> h = s.shape[0] // 2
    >>> for xc in (30, 75, 120):
    ...     img[40 - h:40 + h + 1, xc - h:xc + h + 1] += s
    >>> a, b = fit_trailed_moffat(img, img, img > 0, [30.0, 75.0, 120.0], [40.0] * 3,
    ...                           (6.0, 2.0), fwhm_guess=3.5)
    >>> round(float(moffat_fwhm(a, b)), 1), round(b, 1)
    (3.0, 3.0)
    """
    xs = np.asarray(x, dtype=float)[:max_stars]
    ys = np.asarray(y, dtype=float)[:max_stars]
    half = int(np.ceil(2.5 * fwhm_guess + 0.5 * np.hypot(*trail)))
    ny, nx = data.shape
    fits = []
    for xc, yc in zip(xs, ys, strict=True):
        ix, iy = int(round(xc)), int(round(yc))
        if ix < half or iy < half or ix + half >= nx or iy + half >= ny:
            continue
        box = np.s_[iy - half:iy + half + 1, ix - half:ix + half + 1]
        ok = good[box] & np.isfinite(data[box]) & np.isfinite(variance[box])
        if np.count_nonzero(~ok) > 0.1 * ok.size:
            continue
        got = _fit_one(np.asarray(data[box], float), np.asarray(variance[box], float), ok,
                       xc - (ix - half), yc - (iy - half), trail, fwhm_guess)
        if got is not None:
            fits.append(got)
    if len(fits) < 2:
        return None
    fits = np.asarray(fits)
    return float(np.median(fits[:, 0])), float(np.median(fits[:, 1]))


def measured_fwhm_of_moffat(alpha, beta):
    """The FWHM `~photpipe.photometry.measure_fwhm` gives for untrailed stars of this PSF.

    The sidereal path sizes its apertures and boxes by that measured (Gaussian-core) FWHM; a
    trailed frame gets the same measure of its untrailed PSF, from pixel-integrated Moffat
    stars at a few sub-pixel positions.

    Examples
    --------
    >>> f = measured_fwhm_of_moffat(moffat_alpha(2.5, 3.0), 3.0)
    >>> 2.6 < f < 3.2
    True
    """
    fwhm = moffat_fwhm(alpha, beta)
    size = 2 * int(np.ceil(3 * fwhm)) + 11
    c = size // 2
    offsets = ((0.0, 0.0), (0.3, -0.2), (-0.45, 0.4), (0.5, 0.5))
    values = []
    for dx, dy in offsets:
        img = 1e4 * moffat_pixel_image((size, size), c + dx, c + dy, fwhm=fwhm, beta=beta)
        values.append(measure_fwhm(img, [c + dx], [c + dy], sky=0.0, local_sky=False))
    return float(np.nanmedian(values))
