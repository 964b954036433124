"""Coma surface-brightness profiles: azimuthal means in log-spaced annuli, sectors, slope."""

import numpy as np

__all__ = ["annulus_means", "sector_selection", "profile_slope"]


def annulus_means(values, variance, rho, edges, *, select=None, sky_error=0.0):
    """Mean value per annulus with its uncertainty.

    Parameters
    ----------
    values : ndarray
        Sky-subtracted pixel values (unmasked pixels only), any shape.
    variance : ndarray
        Their variances.
    rho : ndarray
        Their distances from the centre, pixels.
    edges : ndarray, shape (n + 1,)
        Annulus edges in pixels, increasing.
    select : ndarray of bool, optional
        Use only these pixels (e.g. a sector).
    sky_error : float, optional
        Uncertainty of the subtracted sky per pixel; it is common to every annulus and added in
        quadrature.

    Returns
    -------
    rho_mean : ndarray, shape (n,)
        Mean radius of the pixels in each annulus (NaN where empty).
    mean, error : ndarray, shape (n,)
        Mean value and its uncertainty sqrt(Σ var) / n ⊕ σ_sky.
    count : ndarray of int, shape (n,)
        Pixels per annulus.

    Notes
    -----
    The mean (not the median) is used so that the variance plane propagates exactly; stars and
    bad pixels are removed by the caller's mask (common practice).

    Examples
    --------
    >>> import numpy as np
    >>> r, m, e, n = annulus_means(np.array([1.0, 3.0, 5.0]), np.ones(3), np.array([0.5, 0.7, 2]),
    ...                            np.array([0.0, 1.0, 3.0]))
    >>> m.tolist(), n.tolist()
    ([2.0, 5.0], [2, 1])
    """
    v = np.ravel(values)
    var = np.ravel(variance)
    r = np.ravel(rho)
    keep = np.isfinite(v) & np.isfinite(var) & (r >= edges[0]) & (r < edges[-1])
    if select is not None:
        keep &= np.ravel(select)
    idx = np.searchsorted(edges, r[keep], side="right") - 1
    n_bins = len(edges) - 1
    count = np.bincount(idx, minlength=n_bins)[:n_bins]
    s = np.bincount(idx, weights=v[keep], minlength=n_bins)[:n_bins]
    sv = np.bincount(idx, weights=var[keep], minlength=n_bins)[:n_bins]
    sr = np.bincount(idx, weights=r[keep], minlength=n_bins)[:n_bins]
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(count > 0, s / count, np.nan)
        err = np.where(count > 0, np.sqrt(sv) / count, np.nan)
        rho_mean = np.where(count > 0, sr / count, np.nan)
    err = np.sqrt(err**2 + sky_error**2)
    return rho_mean, mean, err, count


def sector_selection(pa_deg, centre_deg, half_width_deg):
    """Pixels whose position angle lies within ``half_width_deg`` of ``centre_deg``.

    Examples
    --------
    >>> import numpy as np
    >>> sector_selection(np.array([350.0, 10.0, 90.0]), 0.0, 45.0).tolist()
    [True, True, False]
    """
    d = (np.asarray(pa_deg, dtype=float) - centre_deg + 180.0) % 360.0 - 180.0
    return np.abs(d) <= half_width_deg


def profile_slope(rho, sb, sb_err, *, rho_range):
    """Log-log slope d log Σ / d log ρ of a profile over a range of ρ.

    Parameters
    ----------
    rho : ndarray
        Radii (any positive unit, the same as ``rho_range``).
    sb, sb_err : ndarray
        Surface brightness and its uncertainty.
    rho_range : tuple of float
        (min, max) radii to use.

    Returns
    -------
    slope, slope_err : float
        Weighted least-squares slope and its uncertainty (NaN with fewer than 3 usable annuli).
    n_used : int
        Annuli used.

    Notes
    -----
    Fits log10 Σ = a + m log10 ρ with weights from σ_log = σ_Σ / (Σ ln 10); a steady-state coma
    has m = -1 (e.g. Jewitt & Meech 1987, AJ 93, 1542).

    Examples
    --------
    >>> import numpy as np
    >>> rho = np.array([1.0, 2.0, 4.0, 8.0])
    >>> s, e, n = profile_slope(rho, 5.0 / rho, 0.01 / rho, rho_range=(0.5, 10))
    >>> round(s, 6), n
    (-1.0, 4)
    """
    rho = np.asarray(rho, dtype=float)
    sb = np.asarray(sb, dtype=float)
    sb_err = np.asarray(sb_err, dtype=float)
    ok = (np.isfinite(rho) & np.isfinite(sb) & np.isfinite(sb_err) & (sb > 0) & (sb_err > 0)
          & (rho >= rho_range[0]) & (rho <= rho_range[1]))
    n = int(np.count_nonzero(ok))
    if n < 3:
        return float("nan"), float("nan"), n
    x = np.log10(rho[ok])
    y = np.log10(sb[ok])
    w = (sb[ok] * np.log(10.0) / sb_err[ok]) ** 2
    a = np.column_stack([np.ones(n), x])
    cov = np.linalg.inv(a.T @ (a * w[:, None]))
    beta = cov @ (a.T @ (w * y))
    chi2_red = float(np.sum(w * (y - a @ beta) ** 2) / (n - 2)) if n > 2 else 1.0
    return float(beta[1]), float(np.sqrt(cov[1, 1] * max(chi2_red, 1.0))), n
