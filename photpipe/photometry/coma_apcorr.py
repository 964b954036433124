"""Aperture correction of a 1/ρ coma seen through the PSF.

The PSF spreads coma light from inside an aperture to outside it, and the 1/ρ coma, brightest at
its centre, loses more than it gains: the flux inside a radius of a few FWHM falls short of the
2πKρ a steady coma holds there. The shortfall depends only on ρ / FWHM and on the PSF's shape. It
is computed here numerically for a Moffat PSF whose width and β are fitted to the field stars'
curve of growth, and turned into a factor that puts the comet's aperture sums on the same
total-flux scale as the star photometry of the zero point.
"""

import warnings

import numpy as np
from photutils.aperture import CircularAperture, aperture_photometry
from scipy.optimize import least_squares
from scipy.signal import fftconvolve

from photpipe.models.coma import inverse_rho_pixel_integral
from photpipe.models.moffat import moffat_alpha, moffat_encircled, moffat_fwhm, moffat_shape

__all__ = ["MoffatGrowth", "fit_moffat_growth", "moffat_from_measured_fwhm",
           "coma_aperture_correction"]

#: Sub-pixels per FWHM of the oversampled grid on which the coma is convolved.
_SAMPLES_PER_FWHM = 12
#: Largest side of that grid in sub-pixels (the sampling is coarsened to stay within it).
_MAX_GRID = 1200
#: The PSF kernel reaches this many FWHM from its centre.
_KERNEL_FWHM = 6.0


class MoffatGrowth:
    """A circular Moffat PSF, I(r) ∝ (1 + r²/α²)^(-β) (Moffat 1969, A&A 3, 455).

    Parameters
    ----------
    alpha : float
        Core width, pixels.
    beta : float
        Wing index (> 1).
    """

    def __init__(self, alpha, beta):
        if not (np.isfinite(alpha) and alpha > 0 and np.isfinite(beta) and beta > 1):
            msg = f"Moffat needs alpha > 0 and beta > 1, got alpha={alpha}, beta={beta}"
            raise ValueError(msg)
        self.alpha, self.beta = float(alpha), float(beta)

    @property
    def fwhm(self):
        """FWHM = 2 α sqrt(2^(1/β) - 1), pixels."""
        return moffat_fwhm(self.alpha, self.beta)

    def encircled(self, r):
        """Fraction of the light within radius ``r`` (see `moffat_encircled`)."""
        return moffat_encircled(r, self.alpha, self.beta)

    def measured_fraction(self, r, annulus):
        """What aperture photometry with a local sky sees of a unit star within ``r``.

        The sky, taken as the mean in ``annulus`` (inner, outer), holds some of the star's wing,
        which the subtraction removes over the aperture's area.
        """
        r_in, r_out = annulus
        wing = (self.encircled(r_out) - self.encircled(r_in)) / (r_out**2 - r_in**2)
        return self.encircled(r) - np.asarray(r, float) ** 2 * wing

    def image(self, half, step):
        """The PSF sampled on a square grid of spacing ``step`` reaching ``half`` from centre."""
        n = int(np.ceil(half / step))
        c = np.arange(-n, n + 1) * step
        r2 = c[np.newaxis, :] ** 2 + c[:, np.newaxis] ** 2
        img = moffat_shape(r2, self.alpha, self.beta)
        return img / img.sum()

    def __repr__(self):
        return f"MoffatGrowth(alpha={self.alpha:.4g}, beta={self.beta:.4g})"


def fit_moffat_growth(radii, fluxes, *, annulus, fwhm_guess, beta_range=(1.5, 10.0),
                      fwhm_range=(0.6, 1.4)):
    """Fit a Moffat PSF to the field stars' curve of growth.

    Parameters
    ----------
    radii : ndarray, shape (n_radii,)
        Aperture radii (pixels), increasing; the last is the reference.
    fluxes : ndarray, shape (n_stars, n_radii)
        Sky-subtracted star fluxes in those apertures.
    annulus : tuple of float
        The stars' sky annulus (inner, outer), pixels.
    fwhm_guess : float
        Starting FWHM (pixels).
    beta_range : tuple of float, optional
        A fitted β outside this range is not accepted.
    fwhm_range : tuple of float, optional
        A fitted FWHM outside this range, in units of ``fwhm_guess``, is not accepted.

    Returns
    -------
    psf : MoffatGrowth or None
        None when fewer than three stars have a usable curve, the fit fails, or the fit
        is not plausible: on a small frame with a handful of faint stars, noise or a blend bends
        the curve and drives β to 1.2 (wings so broad that a star's light in the reference
        aperture is a fraction of its total) or to 41, or the width to a fraction of the
        measured FWHM, and each gives a spurious coma correction.

    Notes
    -----
    The median over stars of F(r_k) / F(r_ref) is fitted by least squares with the
    `MoffatGrowth.measured_fraction` model (in ln α and ln(β - 1)); the curve of growth as a
    description of the PSF is from Stetson (1990, PASP 102, 932). Seeing-limited stars have β
    of about 2.5 to 5 (Trujillo et al. 2001, MNRAS 328, 977, find 4.765 for pure Kolmogorov
    turbulence; from memory), hence the default ``beta_range``. The Gaussian-fit FWHM that
    `~photpipe.photometry.measure_fwhm` gives is 1.08-1.10 times the width fitted here to
    noise-free pixel-integrated Moffat stars (β = 3, FWHM 1.6-3 pixels, measured on the
    scenario's stamps), well inside the default ``fwhm_range``.

    Examples
    --------
    >>> import numpy as np
    >>> psf = MoffatGrowth(2.0, 3.5)
    >>> r = np.array([2.0, 3.0, 4.0, 6.0, 8.0])
    >>> f = np.tile(psf.measured_fraction(r, (10.0, 16.0)), (5, 1))
    >>> fit = fit_moffat_growth(r, f, annulus=(10.0, 16.0), fwhm_guess=2.5)
    >>> round(fit.alpha, 3), round(fit.beta, 3)
    (2.0, 3.5)
    """
    radii = np.asarray(radii, dtype=float)
    fluxes = np.atleast_2d(np.asarray(fluxes, dtype=float))
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = fluxes / fluxes[:, -1:]
    ok = np.all(np.isfinite(ratio), axis=1) & (fluxes[:, -1] > 0)
    if np.count_nonzero(ok) < 3:
        return None
    target = np.median(ratio[ok, :-1], axis=0)

    def model(p):
        psf = MoffatGrowth(np.exp(p[0]), 1.0 + np.exp(p[1]))
        g = psf.measured_fraction(radii, annulus)
        return g[:-1] / g[-1] - target

    beta0 = 3.0
    alpha0 = moffat_alpha(fwhm_guess, beta0)
    try:
        fit = least_squares(model, [np.log(alpha0), np.log(beta0 - 1.0)],
                            bounds=([np.log(0.05 * alpha0), np.log(0.2)],
                                    [np.log(20.0 * alpha0), np.log(40.0)]))
    except (ValueError, FloatingPointError):
        return None
    if not fit.success:
        return None
    psf = MoffatGrowth(np.exp(fit.x[0]), 1.0 + np.exp(fit.x[1]))
    if not beta_range[0] <= psf.beta <= beta_range[1]:
        return None
    if not fwhm_range[0] <= psf.fwhm / fwhm_guess <= fwhm_range[1]:
        return None
    return psf


def _pixel_stamp(psf, dx, dy, half=7, oversample=5):
    """``psf`` integrated over the pixels of a (2 half + 1)² stamp, centre offset (dx, dy)."""
    n = 2 * half + 1
    sub = (np.arange(n * oversample) + 0.5) / oversample - 0.5 - half
    yy, xx = np.meshgrid(sub - dy, sub - dx, indexing="ij")
    img = moffat_shape(xx**2 + yy**2, psf.alpha, psf.beta)
    return img.reshape(n, oversample, n, oversample).mean(axis=(1, 3))


def moffat_from_measured_fwhm(fwhm, beta):
    """The Moffat PSF of index ``beta`` whose measured FWHM is ``fwhm``.

    Parameters
    ----------
    fwhm : float
        FWHM (pixels) as `~photpipe.photometry.measure_fwhm` measures it on the frame's stars.
    beta : float
        Moffat β of the PSF.

    Returns
    -------
    psf : MoffatGrowth

    Notes
    -----
    `~photpipe.photometry.measure_fwhm` fits a Gaussian to the core of a pixel-integrated star,
    which gives more than the Moffat FWHM (pixel integration widens the core, and a Gaussian
    through a Moffat's core and upper wing is wider than its half maximum). The Moffat width is
    found by bisection so that the same measurement on the model, pixel-integrated at three
    sub-pixel centrings, averages to ``fwhm``.

    Examples
    --------
    >>> psf = moffat_from_measured_fwhm(2.4, 3.0)
    >>> bool(1.8 < psf.fwhm < 2.2)
    True
    """
    from .detection import measure_fwhm

    def measured(true_fwhm):
        psf = MoffatGrowth(moffat_alpha(true_fwhm, beta), beta)
        half = max(7, int(np.ceil(3 * fwhm)))
        values = [measure_fwhm(_pixel_stamp(psf, dx, dy, half=half), [half + dx], [half + dy],
                               sky=0.0, local_sky=False)
                  for dx, dy in ((0.0, 0.0), (0.25, 0.0), (0.5, 0.5))]
        return float(np.mean(values))

    lo, hi = 0.3 * fwhm, 1.2 * fwhm
    for _ in range(30):
        mid = 0.5 * (lo + hi)
        if measured(mid) > fwhm:
            hi = mid
        else:
            lo = mid
    true_fwhm = 0.5 * (lo + hi)
    return MoffatGrowth(moffat_alpha(true_fwhm, beta), beta)


def _trail_line(trail, step):
    """A unit-sum segment ``trail`` (pixels) on a grid of spacing ``step``, centred."""
    length = float(np.hypot(*trail))
    reach = int(np.ceil(0.5 * length / step)) + 1
    line = np.zeros((2 * reach + 1, 2 * reach + 1))
    n = max(1, int(np.ceil(length / (0.25 * step))))
    t = (np.arange(n) + 0.5) / n - 0.5
    # bilinear share of each point along the segment
    gx, gy = reach + t * trail[0] / step, reach + t * trail[1] / step
    x0, y0 = np.floor(gx).astype(int), np.floor(gy).astype(int)
    fx, fy = gx - x0, gy - y0
    for dx, dy, w in ((0, 0, (1 - fx) * (1 - fy)), (1, 0, fx * (1 - fy)),
                      (0, 1, (1 - fx) * fy), (1, 1, fx * fy)):
        np.add.at(line, (y0 + dy, x0 + dx), w)
    return line / line.sum()


def coma_aperture_correction(radii, psf, *, reference_radius, annulus, pixel=False,
                             trail=(0.0, 0.0)):
    """Factor that turns a PSF-blurred 1/ρ coma's aperture sum into its true flux.

    Parameters
    ----------
    radii : array-like
        Aperture radii, pixels.
    psf : MoffatGrowth
        The frame's PSF.
    reference_radius : float
        Radius (pixels) of the star photometry that the zero point takes as total flux.
    annulus : tuple of float
        The stars' sky annulus (inner, outer), pixels.
    pixel : bool, optional
        ``psf`` is the optical PSF, not yet integrated over the pixels: convolve it with the
        one-pixel box first. A PSF fitted to the stars' curve of growth already holds the pixel
        (the stars' sums are of pixel-integrated light) and takes the default.
    trail : tuple of float, optional
        The comet's motion (dx, dy) in pixels over the exposure when the telescope followed
        the stars: the coma is blurred by the PSF averaged along it (the stars, measured
        untrailed, still set the magnitude scale).

    Returns
    -------
    factor : ndarray
        Multiply the comet's aperture sum by this (> 1 for small apertures);
        ``2.5 log10(factor)`` is the correction in magnitudes.

    Notes
    -----
    With Σ = 1/ρ the true flux inside ρ is 2πρ. The coma is integrated exactly over the
    sub-pixels of an oversampled grid (:func:`photpipe.models.coma.inverse_rho_pixel_integral`),
    convolved with the sampled PSF by FFT, and both images are summed in the same apertures
    (photutils, exact overlap), so the sub-pixel sampling cancels in the ratio
    F_coma / F_blurred. That ratio is multiplied by the fraction of a star's light that the
    zero point's star photometry measures (`MoffatGrowth.measured_fraction` at
    ``reference_radius``), since magnitudes are on that scale. For large apertures the factor tends
    to that fraction; in the small-aperture limit it grows as the blurred core loses its cusp.

    Examples
    --------
    >>> psf = MoffatGrowth(2.0, 3.0)
    >>> f = coma_aperture_correction([4.0, 20.0], psf, reference_radius=4 * psf.fwhm,
    ...                              annulus=(5 * psf.fwhm, 8 * psf.fwhm))
    >>> bool(f[0] > f[1] > 0.99)
    True
    """
    radii = np.atleast_1d(np.asarray(radii, dtype=float))
    fwhm = psf.fwhm
    half = float(radii.max()) + _KERNEL_FWHM * fwhm + 0.5 * float(np.hypot(*trail))
    step = fwhm / _SAMPLES_PER_FWHM
    step = max(step, 2.0 * half / _MAX_GRID)
    n = int(np.ceil(half / step))
    edges = (np.arange(-n, n + 2) - 0.5) * step
    coma = inverse_rho_pixel_integral(edges, edges)     # Σ = 1/ρ in pixels, per sub-pixel
    kernel = psf.image(_KERNEL_FWHM * fwhm, step)
    box = int(round(1.0 / step))
    if pixel and box > 1:
        # the detector integrates the light over each pixel: a one-pixel box on the fine grid
        kernel = fftconvolve(kernel, np.full((box, box), 1.0 / box**2), mode="same")
    if np.hypot(*trail) >= 0.5 * step:
        kernel = fftconvolve(kernel, _trail_line(trail, step), mode="full")
    blurred = fftconvolve(coma, kernel, mode="same")
    apertures = [CircularAperture((n, n), r=float(r) / step) for r in radii]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        sharp = aperture_photometry(coma, apertures, method="exact")
        seen = aperture_photometry(blurred, apertures, method="exact")
    ratio = np.array([float(sharp[f"aperture_sum_{k}"][0]) / float(seen[f"aperture_sum_{k}"][0])
                      for k in range(len(radii))])
    return ratio * float(psf.measured_fraction(reference_radius, annulus))
