"""Named steps of the nucleus fit that do not belong to the model (private helpers of `fit`).

Finding the comet's peak near a position that may be several arcseconds off, finding sources
the catalogue does not list in the residual of a first fit, and the share of the nucleus error
that comes from the PSF's own uncertainty.
"""

from dataclasses import replace

import numpy as np
from scipy import ndimage

__all__ = ["find_peak", "find_residual_sources", "refine_source", "core_bad_share",
           "psf_shape_error", "trail_from_rate"]


def trail_from_rate(rate_xy, exptime_s):
    """Motion (dx, dy) in pixels during an exposure from a detector-plane rate in pixel/s.

    Examples
    --------
    >>> trail_from_rate((0.01, -0.005), 200.0)
    (2.0, -1.0)
    """
    return (float(rate_xy[0]) * float(exptime_s), float(rate_xy[1]) * float(exptime_s))


def find_peak(data, good, x0, y0, *, radius, fwhm, avoid_xy=(), avoid_radius=0.0):
    """Brightest point of the PSF-smoothed image within ``radius`` of (x0, y0).

    The data are smoothed by a Gaussian of the PSF's width (a matched filter for a point source,
    and a peak finder for a coma's cusp); pixels near ``avoid_xy`` (catalogued stars) do not
    count. The peak is refined to a fraction of a pixel by a parabola through its neighbours.
    Returns (x, y) in the array's pixels, or (x0, y0) when nothing usable is in reach.
    """
    ny, nx = data.shape
    img = ndimage.gaussian_filter(np.where(good, data, 0.0), fwhm / 2.3548)
    norm = ndimage.gaussian_filter(good.astype(float), fwhm / 2.3548)
    with np.errstate(invalid="ignore", divide="ignore"):
        img = np.where(norm > 0.5, img / norm, -np.inf)
    yy, xx = np.mgrid[0:ny, 0:nx]
    reach = np.hypot(xx - x0, yy - y0) <= radius
    for sx, sy in avoid_xy:
        reach &= np.hypot(xx - sx, yy - sy) > avoid_radius
    if not np.any(reach & np.isfinite(img)):
        return float(x0), float(y0)
    score = np.where(reach, img, -np.inf)
    iy, ix = np.unravel_index(np.argmax(score), score.shape)
    if not np.isfinite(score[iy, ix]):
        return float(x0), float(y0)
    return ix + _vertex(img, iy, ix, axis=1), iy + _vertex(img, iy, ix, axis=0)


def _vertex(img, iy, ix, *, axis):
    n = img.shape[axis]
    i = ix if axis == 1 else iy
    if i <= 0 or i >= n - 1:
        return 0.0
    if axis == 1:
        a, b, c = img[iy, ix - 1], img[iy, ix], img[iy, ix + 1]
    else:
        a, b, c = img[iy - 1, ix], img[iy, ix], img[iy + 1, ix]
    den = a - 2 * b + c
    if not np.all(np.isfinite([a, b, c])) or den >= 0:
        return 0.0
    return float(np.clip(0.5 * (a - c) / den, -0.5, 0.5))


def find_residual_sources(resid_norm, good, x0, y0, *, fwhm, threshold=5.0, keep_radius):
    """Point sources left in the normalised residual of a first fit (stars not catalogued).

    The residual (data - model)/σ is matched-filtered with a Gaussian of the PSF's width and
    scaled to unit noise (for white noise the filtered map has σ = 1/(2√π s) with s the
    Gaussian's σ; Kaiser 2000, common practice); local maxima above ``threshold`` farther than
    ``keep_radius`` from the nucleus are returned, brightest first, as (x, y, significance).
    """
    s = fwhm / 2.3548
    filt = ndimage.gaussian_filter(np.where(good, resid_norm, 0.0), s) * (2.0 * np.sqrt(np.pi) * s)
    cover = ndimage.gaussian_filter(good.astype(float), s)
    filt = np.where(cover > 0.7, filt, 0.0)
    peaks = (filt == ndimage.maximum_filter(filt, size=max(3, int(2 * fwhm) | 1))) & (
        filt > threshold)
    ys, xs = np.nonzero(peaks)
    out = []
    for x, y in zip(xs, ys):
        if np.hypot(x - x0, y - y0) < keep_radius:
            continue
        out.append((x + _vertex(filt, y, x, axis=1), y + _vertex(filt, y, x, axis=0),
                    float(filt[y, x])))
    return sorted(out, key=lambda t: -t[2])


def refine_source(resid, sigma, good, x, y, psf, *, radius):
    """Position of a point source in a residual image, refined by a small PSF fit.

    The residual (data - a model without the source, electrons) within ``radius`` of the
    found (x, y) is fitted by flux × PSF + a constant, the position varied by least squares
    (at most 1 pixel from the start). A source found on the matched-filtered residual is off
    by a few tenths of a pixel in noise; fitted at that position, a star 2-5 FWHM from the
    nucleus leaves a dipole that the nucleus and coma partly take up. Returns (x, y); the
    start when the fit fails.
    """
    from scipy.optimize import least_squares

    ny, nx = resid.shape
    x0, x1 = max(int(np.floor(x - radius)), 0), min(int(np.ceil(x + radius)) + 1, nx)
    y0, y1 = max(int(np.floor(y - radius)), 0), min(int(np.ceil(y + radius)) + 1, ny)
    yy, xx = np.mgrid[y0:y1, x0:x1]
    use = good[y0:y1, x0:x1] & (np.hypot(xx - x, yy - y) <= radius)
    if use.sum() < 8:
        return x, y
    d = resid[y0:y1, x0:x1][use]
    s = sigma[y0:y1, x0:x1][use]

    def res(p):
        img = psf.render((y1 - y0, x1 - x0), p[0] - x0, p[1] - y0)[use]
        a = np.vstack([img, np.ones_like(img)]) / s
        coef = np.linalg.lstsq(a.T, d / s, rcond=None)[0]
        return d / s - coef @ a

    try:
        out = least_squares(res, [x, y], bounds=([x - 1, y - 1], [x + 1, y + 1]),
                            diff_step=1e-3, max_nfev=40)
    except ValueError:
        return x, y
    return (float(out.x[0]), float(out.x[1])) if out.success else (x, y)


def core_bad_share(good, x0, y0, radius):
    """Share of the pixels within ``radius`` of (x0, y0) that are not usable."""
    ny, nx = good.shape
    yy, xx = np.mgrid[0:ny, 0:nx]
    core = np.hypot(xx - x0, yy - y0) <= radius
    if not np.any(core):
        return 1.0
    return float(1.0 - good[core].mean())


#: Resamples of the PSF stars for the PSF part of the nucleus error.
PSF_RESAMPLES = 24
_MEDIAN_EFFICIENCY = 1.2533


def psf_shape_error(solve_flux, psf, *, n_resample=PSF_RESAMPLES, fallback_fwhm_share=0.1,
                    fallback_beta_err=1.0):
    """Nucleus-flux error from the PSF shape's own uncertainty.

    ``solve_flux(psf) -> float`` refits the amplitudes (nucleus, coma, sky) with the centre and
    γ held at the best fit. When the star-by-star Moffat fits are known (``psf.star_shapes``),
    the stars are resampled with replacement (bootstrap; Efron & Tibshirani 1993, ch. 6); each
    resample moves the frame's shape (the median of the stars) by the shift of its mean times
    1.2533, the ratio of the median's standard error to the mean's for a normal sample
    (Kendall & Stuart 1977, 10.10), all four parameters together so that their correlations
    are kept; the error is the standard deviation of the refitted fluxes. Without them (a
    fallback PSF), the FWHM is moved by ``fallback_fwhm_share`` of itself and β by
    ``fallback_beta_err`` and the two half-differences are added in quadrature (linear
    propagation by central differences, Bevington & Robinson 2003, eq. 3.14); an ePSF's own
    uncertainty shows in the residuals.

    Returns the error (same unit as the flux).
    """
    from .psf_moffat import shape_from_q

    if psf.image is not None:
        return 0.0
    shapes = psf.star_shapes
    if shapes is not None and len(shapes) >= 3 and "psf_fallback" not in psf.flags:
        rng = np.random.default_rng(len(shapes))  # reproducible: same frame, same error
        centre = np.median(shapes, axis=0)
        # a star spoilt by a neighbour would dominate the means: each column is clipped at
        # 3 robust σ (1.4826 MAD, common practice) around the median first
        mad = 1.4826 * np.median(np.abs(shapes - centre), axis=0)
        shapes = np.clip(shapes, centre - 3 * mad, centre + 3 * mad)
        mean = np.mean(shapes, axis=0)
        fluxes = []
        for _ in range(n_resample):
            # the shift of the resample's mean, scaled to the median's larger spread: the
            # medians of single columns would pair one star's FWHM with another's β and break
            # their strong correlation, which the flux follows
            pick = shapes[rng.integers(0, len(shapes), len(shapes))]
            med = centre + _MEDIAN_EFFICIENCY * (np.mean(pick, axis=0) - mean)
            e, ang = shape_from_q(med[2], med[3])
            variant = replace(psf, fwhm_major_pix=float(med[0]), beta=float(max(med[1], 1.2)),
                              ellipticity=float(min(e, 0.9)),
                              angle_deg=float(np.rad2deg(ang)))
            fluxes.append(solve_flux(variant))
        return float(np.std(fluxes, ddof=1))
    parts = []
    for key, value, step, floor in (
            ("fwhm_major_pix", psf.fwhm_major_pix, fallback_fwhm_share * psf.fwhm_major_pix,
             0.5),
            ("beta", psf.beta, fallback_beta_err, 1.2)):
        lo, hi = max(value - step, floor), value + step
        f_hi = solve_flux(replace(psf, **{key: hi}))
        f_lo = solve_flux(replace(psf, **{key: lo}))
        parts.append(abs(f_hi - f_lo) * step / (hi - lo))
    return float(np.hypot(*parts))
