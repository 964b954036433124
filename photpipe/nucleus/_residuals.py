"""Is there a residual shape shared by the stars? (private helper of the PSF choice)."""

import numpy as np

__all__ = ["shared_residual_z"]


def shared_residual_z(residuals, *, min_share=0.8):
    """Significance, in standard deviations, of a residual pattern common to all star stamps.

    Parameters
    ----------
    residuals : ndarray, shape (n_stars, ny, nx)
        Normalised residuals (data - model) / σ of each star's fit, NaN where not usable.
    min_share : float, optional
        Only stamp pixels usable in at least this share of the stars (and in 6 or more) count.

    Returns
    -------
    z : float
        (Σ t² - E[Σ t²]) / sd(Σ t²) over the stamp pixels, with t the mean residual of a pixel
        over the stars divided by its standard error from the scatter between the stars. NaN
        when too few stars or pixels.

    Notes
    -----
    A PSF model that is right leaves residuals that average to zero over the stars in every
    stamp pixel, whatever else (neighbours, noise of the variance plane, flux-dependent errors)
    makes each star's χ² large; a wrong shape leaves the same pattern around every star. With
    the scatter between the stars as the error, t² at a pixel used by n stars follows
    F(1, ν = n - 1), of mean ν/(ν - 2) and variance 2ν²(ν - 1)/((ν - 2)²(ν - 4))
    (Abramowitz & Stegun 1964, 26.6 and 26.7), so the sum over pixels is compared with its
    expectation in units of its standard deviation (pixels taken as independent).

    Examples
    --------
    Pure noise scores about N(0, 1) (0.3 % of 300 noise sets above 3); a disc offset by 1σ in
    every star's stamp stands far out:

    >>> rng = np.random.default_rng(2)
    >>> noise = rng.normal(size=(25, 21, 21))
    >>> round(shared_residual_z(noise), 1)
    -0.3
    >>> disc = np.hypot(*np.mgrid[-10:11, -10:11]) < 3
    >>> bool(shared_residual_z(noise + disc) > 10)
    True
    """
    r = np.asarray(residuals, dtype=float)
    n_stars = r.shape[0]
    n = np.sum(np.isfinite(r), axis=0)
    use = n >= max(6, int(np.ceil(min_share * n_stars)))
    if use.sum() < 10:
        return np.nan
    r = r[:, use]
    n = n[use]
    mean = np.nanmean(r, axis=0)
    sd = np.nanstd(r, axis=0, ddof=1)
    ok = sd > 0
    t2 = (mean[ok] / (sd[ok] / np.sqrt(n[ok]))) ** 2
    nu = n[ok] - 1.0
    expect = nu / (nu - 2.0)
    var = 2.0 * nu**2 * (nu - 1.0) / ((nu - 2.0) ** 2 * (nu - 4.0))
    return float((t2.sum() - expect.sum()) / np.sqrt(var.sum()))
