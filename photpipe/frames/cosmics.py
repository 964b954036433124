"""Cosmic-ray detection on a calibrated frame.

Methods are listed by name in `COSMIC_METHODS`; each takes data and variance in electrons and a
mask of pixels to ignore, and returns a boolean mask of cosmic-ray hits.
"""

import numpy as np

__all__ = ["lacosmic_mask", "COSMIC_METHODS", "find_cosmic_rays"]

_LACOSMIC_DEFAULTS = {"sigclip": 4.5, "sigfrac": 0.3, "objlim": 5.0, "niter": 4}


def lacosmic_mask(data, variance, ignore, *, read_noise, **options):
    """Cosmic-ray hits by Laplacian edge detection (L.A.Cosmic, van Dokkum 2001).

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        Calibrated frame in electrons, sky included (the noise is estimated from it).
    variance : ndarray, shape (ny, nx)
        Variance of ``data`` in electron**2.
    ignore : ndarray of bool, shape (ny, nx)
        Pixels to leave out (saturated, non-finite, bad).
    read_noise : float
        Read noise in electrons.
    **options
        ``sigclip``, ``sigfrac``, ``objlim``, ``niter`` and the other options of
        ``astroscrappy.detect_cosmics``.

    Returns
    -------
    ndarray of bool

    Notes
    -----
    van Dokkum (2001, PASP 113, 1420): a cosmic ray is sharper than the PSF, so it stands out
    in the Laplacian of the sub-sampled image relative to the noise (``sigclip``), and in the
    ratio of the Laplacian to a fine-structure image (``objlim``), which spares stars. The
    implementation is astroscrappy's; it is given the variance plane, so the noise includes
    the flat field and the masters' own noise.
    """
    import astroscrappy

    opts = dict(_LACOSMIC_DEFAULTS)
    opts.update(options)
    clean = np.where(ignore | ~np.isfinite(data), 0.0, data).astype(np.float32)
    var = np.where(ignore | ~np.isfinite(variance), float(read_noise) ** 2,
                   variance).astype(np.float32)
    mask, _ = astroscrappy.detect_cosmics(clean, inmask=np.asarray(ignore, bool), invar=var,
                                          gain=1.0, readnoise=float(read_noise),
                                          satlevel=np.inf, verbose=False, **opts)
    return np.asarray(mask, dtype=bool) & ~ignore


def _no_cosmics(data, variance, ignore, *, read_noise, **options):
    return np.zeros(np.shape(data), dtype=bool)


#: Cosmic-ray detection methods by name.
COSMIC_METHODS = {"lacosmic": lacosmic_mask, "none": _no_cosmics}


def find_cosmic_rays(data, variance, ignore, *, read_noise, method="lacosmic", **options):
    """Boolean mask of cosmic-ray hits, by the named method of `COSMIC_METHODS`.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(3)
    >>> data = rng.normal(500.0, 23.0, (64, 64)).astype(np.float32)
    >>> data[20, 30] += 5000.0
    >>> mask = find_cosmic_rays(data, np.full(data.shape, 529.0), np.zeros(data.shape, bool),
    ...                         read_noise=5.0)
    >>> bool(mask[20, 30]), int(mask.sum()) <= 3
    (True, True)
    """
    if method not in COSMIC_METHODS:
        msg = f"cosmic-ray method must be one of {sorted(COSMIC_METHODS)}, got {method!r}"
        raise ValueError(msg)
    return COSMIC_METHODS[method](data, variance, ignore, read_noise=read_noise, **options)
