"""Aperture photometry of field stars with a local sky and a curve-of-growth aperture correction.

Sums are those of photutils ``aperture_photometry`` (exact pixel overlap) with the variance plane
as the error; the local sky is the sigma-clipped median in an annulus, the pixels whose centres
lie in it, clipped for all stars at once (astropy ``sigma_clipped_stats`` along an axis, much
faster than one clipping call per star). Both are taken by `photpipe.photometry._circles`, which
gives photutils' numbers without its per-star objects.

The stars are measured through a small aperture (good signal-to-noise) and a
large one; the median ratio of large to small over the brightest good stars is the aperture
correction that puts the small-aperture fluxes on the total-flux scale (Howell 1989, PASP 101,
616; Stetson 1990, PASP 102, 932, describe the curve of growth).
"""

import warnings

import numpy as np
from astropy.stats import sigma_clipped_stats
from astropy.table import QTable

from ._circles import circle_sums, masked_in_circles, ring_values

__all__ = ["measure_star_fluxes", "aperture_correction", "aperture_correction_error"]


def measure_star_fluxes(data, variance, mask, x, y, *, radii, annulus):
    """Sky-subtracted fluxes of stars in several circular apertures.

    Parameters
    ----------
    data, variance : ndarray, shape (ny, nx)
        Calibrated frame and variance (electrons, electrons²).
    mask : ndarray of bool, shape (ny, nx)
        True where pixels are unusable.
    x, y : array-like
        Star positions (0-based pixels).
    radii : sequence of float
        Aperture radii in pixels, increasing.
    annulus : tuple of float
        (inner, outer) radius of the sky annulus in pixels.

    Returns
    -------
    table : `~astropy.table.QTable`
        Columns ``x, y, sky`` (per pixel), ``sky_err``, ``n_masked`` (masked pixels inside the
        largest aperture) and, for each radius index k, ``flux_k`` and ``flux_err_k``.

    Notes
    -----
    Flux error from the CCD equation with the variance plane (Merline & Howell 1995, Exp. Astron.
    6, 163): σ_F² = Σ_ap var + A² σ_sky² / n_sky, with A = π r² the aperture area and σ_sky the
    scatter of the clipped annulus pixels.

    Examples
    --------
    >>> import numpy as np
    >>> img = np.full((40, 40), 10.0)
    >>> img[20, 20] += 100.0
    >>> t = measure_star_fluxes(img, np.ones_like(img), np.zeros(img.shape, bool), [20.0],
    ...                         [20.0], radii=[3.0], annulus=(8.0, 12.0))
    >>> round(float(t["flux_0"][0]), 6), round(float(t["sky"][0]), 6)
    (100.0, 10.0)
    """
    xy = np.column_stack([np.asarray(x, float), np.asarray(y, float)])
    out = QTable({"x": xy[:, 0], "y": xy[:, 1]})
    if len(xy) == 0:
        for k in range(len(radii)):
            out[f"flux_{k}"] = np.zeros(0)
            out[f"flux_err_{k}"] = np.zeros(0)
        out["sky"] = out["sky_err"] = np.zeros(0)
        out["n_masked"] = np.zeros(0, int)
        return out
    n_masked = masked_in_circles(mask, xy, float(radii[-1]))
    sky, sky_std, n_sky = clipped_rings(ring_values(data, mask, xy, *annulus))
    sky_err = sky_std / np.sqrt(np.clip(n_sky, 1.0, None))
    all_sums, all_errs = circle_sums(data, variance, mask, xy, radii)
    for k, r in enumerate(radii):
        area = np.pi * r * r
        sums, errs = all_sums[k], all_errs[k]
        out[f"flux_{k}"] = sums - sky * area
        out[f"flux_err_{k}"] = np.sqrt(errs**2 + (area * sky_err) ** 2)
    out["sky"] = sky
    out["sky_err"] = sky_err
    out["n_masked"] = np.round(np.asarray(n_masked, dtype=float)).astype(int)
    return out


def clipped_rings(rings):
    """3σ-clipped median, scatter and count of each ring's values, all rings in one call.

    ``rings`` is a list of 1-d arrays (NaN for masked pixels); they are stacked into one
    NaN-padded array so that ``sigma_clipped_stats`` runs once along an axis.
    """
    width = max((v.size for v in rings), default=0)
    stack = np.full((len(rings), max(width, 1)), np.nan)
    for i, v in enumerate(rings):
        stack[i, :v.size] = v
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        _, median, std = sigma_clipped_stats(stack, sigma=3.0, maxiters=5, axis=1)
    n = np.count_nonzero(np.isfinite(stack), axis=1).astype(float)
    return (np.atleast_1d(np.asarray(median, float)), np.atleast_1d(np.asarray(std, float)), n)


def aperture_correction(flux_small, flux_large, flux_err_small, *, min_snr=50.0, max_stars=30):
    """Median ratio of large- to small-aperture flux over the best-measured stars.

    Parameters
    ----------
    flux_small, flux_large : array-like
        Fluxes of the same stars in the photometry and the large aperture.
    flux_err_small : array-like
        Uncertainties of ``flux_small`` (to rank the stars).
    min_snr : float, optional
        Use stars with at least this signal-to-noise in the small aperture (falls back to the best
        five when fewer qualify).
    max_stars : int, optional
        Use at most this many stars.

    Returns
    -------
    correction : float
        Factor to multiply small-aperture fluxes by (≥ 1 for a well-behaved PSF).
    scatter : float
        Robust scatter (1.4826 × MAD) of the ratios, as a fraction.
    n_used : int
        Stars used.

    Examples
    --------
    >>> corr, scatter, n = aperture_correction([90.0, 45.0, 180.0], [100.0, 50.0, 200.0],
    ...                                        [0.1, 0.1, 0.1])
    >>> round(corr, 6), n
    (1.111111, 3)
    """
    fs = np.asarray(flux_small, dtype=float)
    fl = np.asarray(flux_large, dtype=float)
    es = np.asarray(flux_err_small, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        snr = fs / es
        ratio = fl / fs
    ok = np.isfinite(snr) & np.isfinite(ratio) & (fs > 0) & (fl > 0)
    order = np.argsort(-np.where(ok, snr, -np.inf))
    best = [i for i in order if ok[i]][:max_stars]
    chosen = [i for i in best if snr[i] >= min_snr]
    if len(chosen) < 5:
        chosen = best[:5]
    if not chosen:
        return float("nan"), float("nan"), 0
    r = ratio[chosen]
    med = float(np.median(r))
    scatter = float(1.4826 * np.median(np.abs(r - med)) / med)
    return med, scatter, len(chosen)


def aperture_correction_error(scatter, n_used, ratio_errors=()):
    """Relative uncertainty of the median aperture correction.

    Parameters
    ----------
    scatter : float
        Robust scatter of the stars' ratios, as a fraction (from `aperture_correction`).
    n_used : int
        Stars the median was taken over.
    ratio_errors : array-like, optional
        Relative errors of the single stars' ratios; their median stands in for the scatter when
        it is larger (a scatter measured on one or two stars says nothing).

    Returns
    -------
    error : float
        σ_c / c; NaN when no star was used.

    Notes
    -----
    The standard error of a median of n normal values is sqrt(π/2) σ / sqrt(n) ≈ 1.2533 σ / √n
    (e.g. Kendall & Stuart, The Advanced Theory of Statistics; from memory). The correction
    multiplies every star's flux, so its error is common to all stars of the frame and does not
    average down in the zero-point fit: it adds in quadrature to the zero point's error.

    Examples
    --------
    >>> round(aperture_correction_error(0.04, 16), 6)
    0.012533
    >>> round(aperture_correction_error(0.0, 1, [0.05]), 6)   # one star: its own error
    0.062666
    """
    if n_used < 1:
        return float("nan")
    errs = np.asarray(ratio_errors, dtype=float)
    errs = errs[np.isfinite(errs)]
    sigma = max(float(scatter) if np.isfinite(scatter) else 0.0,
                float(np.median(errs)) if errs.size else 0.0)
    return float(np.sqrt(np.pi / 2.0) * sigma / np.sqrt(n_used))
