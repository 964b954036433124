"""Sky estimators for the comet, by name."""

from dataclasses import asdict, dataclass

from .sky_coma import sky_with_coma
from .sky_median import sky_clipped_median

__all__ = ["SKY_METHODS", "SkyEstimate", "estimate_sky"]

#: name -> function(values, rho) -> (level, error, n_used, coma_k).
SKY_METHODS = {
    "coma-fit": sky_with_coma,
    "median": sky_clipped_median,
}


@dataclass(frozen=True)
class SkyEstimate:
    """Sky under the comet, from an annulus.

    Attributes
    ----------
    level, error : float
        Sky per pixel and its uncertainty (electrons over the exposure).
    n_pixels : int
        Annulus pixels used.
    coma_k : float
        Coma strength fitted in the annulus (0 for methods without a coma term).
    method : str
        Name of the estimator.
    inner, outer : float
        Annulus radii in pixels.
    """

    level: float
    error: float
    n_pixels: int
    coma_k: float
    method: str
    inner: float
    outer: float

    def to_dict(self):
        """Return the fields as a plain dict."""
        return asdict(self)


def estimate_sky(values, rho, *, method="coma-fit", inner=float("nan"), outer=float("nan")):
    """Sky level from unmasked annulus pixels with the named estimator.

    Parameters
    ----------
    values, rho : ndarray
        Pixel values and their distances (pixels) from the comet.
    method : {"coma-fit", "median"}, optional
        Estimator (see ``SKY_METHODS``).
    inner, outer : float, optional
        Annulus radii, recorded in the result.

    Returns
    -------
    sky : SkyEstimate

    Examples
    --------
    >>> import numpy as np
    >>> estimate_sky(np.full(10, 5.0), np.arange(10.0) + 20, method="median").level
    5.0
    """
    try:
        func = SKY_METHODS[method]
    except KeyError as exc:
        msg = f"unknown sky method {method!r}; choose from {', '.join(SKY_METHODS)}"
        raise ValueError(msg) from exc
    level, error, n, k = func(values, rho)
    return SkyEstimate(level, error, n, k, method, float(inner), float(outer))
