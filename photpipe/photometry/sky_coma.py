"""Sky level in an annulus fitted together with the coma's own 1/ρ light."""

import numpy as np

__all__ = ["sky_with_coma"]


def sky_with_coma(values, rho, *, clip_sigma=3.0, max_iter=5):
    """Fit value = s + K/ρ to the annulus pixels and return the sky s.

    Parameters
    ----------
    values : ndarray
        Unmasked annulus pixel values (electrons).
    rho : ndarray
        Their distances from the comet centre in pixels.
    clip_sigma : float, optional
        Reject pixels further than this many standard deviations from the fit.
    max_iter : int, optional
        Clipping iterations.

    Returns
    -------
    level, error : float
        Sky per pixel s and its least-squares uncertainty.
    n_used : int
        Pixels kept by the clipping.
    coma_k : float
        Fitted K (electrons per pixel at ρ = 1 pixel).

    Notes
    -----
    A steady-state coma has Σ = K/ρ (e.g. Jewitt & Meech 1987, AJ 93, 1542), so an annulus at
    ρ_a carries K/ρ_a of coma light and a plain median overestimates the sky by that much; in an
    aperture of radius ρ that removes πρ²K/ρ_a of the 2πKρ inside, a fraction ρ/(2ρ_a). Fitting
    s + K/ρ across an annulus whose radii differ by a factor ≈ 2 separates the two (ordinary least
    squares; the variance is nearly uniform there). If the coma is steeper than 1/ρ the correction
    is partial.

    Examples
    --------
    >>> import numpy as np
    >>> rho = np.linspace(50.0, 100.0, 200)
    >>> level, err, n, k = sky_with_coma(10.0 + 400.0 / rho, rho)
    >>> round(level, 6), round(k, 6)
    (10.0, 400.0)
    """
    v = np.asarray(values, dtype=float)
    x = 1.0 / np.asarray(rho, dtype=float)
    use = np.isfinite(v) & np.isfinite(x)
    a = np.column_stack([np.ones(v.size), x])
    beta = np.array([np.nan, np.nan])
    sigma = np.nan
    for _ in range(max_iter):
        if np.count_nonzero(use) < 3:
            break
        beta, *_ = np.linalg.lstsq(a[use], v[use], rcond=None)
        resid = v - a @ beta
        sigma = float(np.std(resid[use], ddof=2))
        new_use = use & (np.abs(resid) <= clip_sigma * sigma) if sigma > 0 else use
        if np.array_equal(new_use, use):
            break
        use = new_use
    if not np.all(np.isfinite(beta)):
        return float("nan"), float("nan"), int(np.count_nonzero(use)), float("nan")
    cov = np.linalg.inv(a[use].T @ a[use]) * sigma**2 if sigma > 0 else np.zeros((2, 2))
    return float(beta[0]), float(np.sqrt(cov[0, 0])), int(np.count_nonzero(use)), float(beta[1])
