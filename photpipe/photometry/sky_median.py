"""Sky level in an annulus as the sigma-clipped median (the classical estimate)."""

import numpy as np
from astropy.stats import sigma_clipped_stats

__all__ = ["sky_clipped_median"]


def sky_clipped_median(values, rho):
    """Sigma-clipped median of the annulus pixels.

    Parameters
    ----------
    values : ndarray
        Unmasked annulus pixel values (electrons).
    rho : ndarray
        Their distances from the comet centre in pixels (unused; same signature as the other sky
        estimators).

    Returns
    -------
    level, error : float
        Sky per pixel and its uncertainty.
    n_used : int
        Pixels kept by the clipping.
    coma_k : float
        Always 0 (no coma term).

    Notes
    -----
    3σ clipping; the error of a median is sqrt(π/2) σ / sqrt(n) for Gaussian noise (Kenney &
    Keeping 1962, Mathematics of Statistics, §13.13; common practice). A coma still bright in the
    annulus biases the level high by K/ρ_annulus; see :mod:`photpipe.photometry.sky_coma`.

    Examples
    --------
    >>> import numpy as np
    >>> level, err, n, k = sky_clipped_median(np.array([1.0, 2.0, 3.0] * 5 + [100.0]), np.ones(16))
    >>> level, n
    (2.0, 15)
    """
    values = np.asarray(values, dtype=float)
    clipped = np.ma.masked_invalid(values)
    _, median, std = sigma_clipped_stats(clipped, sigma=3.0, maxiters=5)
    lo, hi = median - 3.0 * std, median + 3.0 * std
    n = int(np.count_nonzero((values >= lo) & (values <= hi))) if std > 0 else values.size
    err = float(np.sqrt(np.pi / 2.0) * std / np.sqrt(max(n, 1)))
    return float(median), err, n, 0.0
