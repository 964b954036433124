"""The caution shown when the target is close to the Sun in the sky."""

import warnings

import numpy as np
from astropy import units as u

from photpipe._quantity import as_value
from photpipe._warnings import SolarElongationWarning

__all__ = ["DEFAULT_CAUTION_ELONGATION", "near_sun", "solar_elongation_caution",
           "warn_if_near_sun"]

#: Solar elongation below which the caution is shown (common practice: twilight-only targets).
DEFAULT_CAUTION_ELONGATION = 20.0 * u.deg


def near_sun(elong, *, limit=DEFAULT_CAUTION_ELONGATION):
    """Boolean mask of solar elongations below ``limit``.

    Examples
    --------
    >>> from astropy import units as u
    >>> near_sun([12, 45] * u.deg).tolist()
    [True, False]
    """
    e = np.atleast_1d(as_value(elong, u.deg, "elong"))
    lim = as_value(limit, u.deg, "limit")
    if not (np.isfinite(lim) and 0.0 <= lim <= 180.0):
        msg = f"'limit' must be within 0-180 deg, got {limit}"
        raise ValueError(msg)
    return e < lim


def solar_elongation_caution(elong, *, limit=DEFAULT_CAUTION_ELONGATION):
    """The caution text when any solar elongation is below ``limit``, else None.

    Parameters
    ----------
    elong : `~astropy.units.Quantity` ['angle']
        Solar elongation(s) of the target.
    limit : `~astropy.units.Quantity` ['angle'], optional
        Elongation below which to caution; default 20°.

    Returns
    -------
    text : str or None
        A short paragraph for tables, logs and the terminal.

    Examples
    --------
    >>> from astropy import units as u
    >>> solar_elongation_caution([35, 40] * u.deg) is None
    True
    >>> print(solar_elongation_caution([14.2, 30] * u.deg))  # doctest: +ELLIPSIS
    SUN CAUTION: the target comes within 14.2 deg of the Sun (limit 20 deg). ...
    """
    mask = near_sun(elong, limit=limit)
    if not np.any(mask):
        return None
    e = np.atleast_1d(as_value(elong, u.deg, "elong"))
    lim = as_value(limit, u.deg, "limit")
    return (
        f"SUN CAUTION: the target comes within {np.nanmin(e[mask]):.1f} deg of the Sun "
        f"(limit {lim:g} deg). Sunlight gathered by a telescope, finder, binoculars or camera "
        "lens can blind in an instant and can burn detectors and optics. Point near the Sun only "
        "as your site's safety rules allow and as experienced observers there advise (for "
        "example with the Sun below the horizon or blocked, and never by looking through the "
        "eyepiece to find the target)."
    )


def warn_if_near_sun(elong, *, limit=DEFAULT_CAUTION_ELONGATION, stacklevel=2):
    """Emit `~photpipe._warnings.SolarElongationWarning` when the caution applies.

    Returns
    -------
    text : str or None
        The caution text (see `solar_elongation_caution`), or None.

    Examples
    --------
    >>> import warnings
    >>> from astropy import units as u
    >>> with warnings.catch_warnings(record=True) as caught:
    ...     warnings.simplefilter("always")
    ...     _ = warn_if_near_sun([8.0] * u.deg)
    >>> caught[0].category.__name__
    'SolarElongationWarning'
    """
    text = solar_elongation_caution(elong, limit=limit)
    if text is not None:
        warnings.warn(text, SolarElongationWarning, stacklevel=stacklevel + 1)
    return text
