"""Empirical PSF: the effective PSF of Anderson & King (2000, PASP 112, 1360) built by photutils."""

import warnings

import numpy as np
from astropy.utils.exceptions import AstropyUserWarning
from photutils.psf import EPSFBuilder, EPSFStar, EPSFStars

__all__ = ["build_epsf_image"]


def build_epsf_image(stamps, *, oversampling=2, maxiters=8):
    """Oversampled ePSF image from sky-subtracted star stamps (photutils `EPSFBuilder`).

    Returns a dict with ``image`` (ndarray, unit sum over the oversampled grid divided by
    ``oversampling**2``), ``oversampling`` and ``n_used``.
    """
    stars = []
    for st in stamps:
        data = np.where(st.good, st.data - st.sky, 0.0)
        weights = np.where(st.good, 1.0 / st.sigma, 0.0)
        stars.append(EPSFStar(data, weights=weights,
                              cutout_center=(st.x_local, st.y_local),
                              origin=(st.x_origin, st.y_origin)))
    builder = EPSFBuilder(oversampling=oversampling, maxiters=maxiters, progress_bar=False)
    with warnings.catch_warnings():
        # photutils warns when a star's recentring does not settle; the scores judge the result
        warnings.simplefilter("ignore", AstropyUserWarning)
        result = builder(EPSFStars(stars))
    image = np.asarray(result.epsf.data, dtype=float)
    image = image / image.sum() * oversampling**2
    n_used = len(stars) - int(result.n_excluded_stars)
    return {"image": image, "oversampling": oversampling, "n_used": n_used}
