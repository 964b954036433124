"""Pure model functions of the activity trend: the Afρ power law in r_h and the brightening.

Kept apart from the fitters (:mod:`photpipe.activity.trend`) so the synthetic generator, the
figures and the outburst search evaluate the very same formulas.
"""

import numpy as np

__all__ = ["log_afrho_power_law", "brightening_mag"]


def log_afrho_power_law(log_r_h, log_norm, k):
    r"""Base-10 logarithm of Afρ for a power law in heliocentric distance.

    Parameters
    ----------
    log_r_h : float or ndarray
        log10 of r_h in au.
    log_norm : float
        log10 of Afρ (cm) extrapolated to r_h = 1 au.
    k : float
        Power-law index (Afρ ∝ r_h^k; negative when activity rises towards the Sun).

    Returns
    -------
    log_afrho : float or ndarray
        log10 Afρ in cm.

    Notes
    -----
    The model is

    .. math:: \log_{10} A f\rho = \log_{10} A_1 + k \log_{10}(r_h / 1\,\mathrm{au}),

    the power-law description of Afρ against r_h that A'Hearn et al. (1995, Icarus 118, 223)
    used for their survey of 85 comets and that is common practice since.

    References
    ----------
    A'Hearn, M. F., Millis, R. L., Schleicher, D. G., Osip, D. J., & Birch, P. V. 1995, Icarus,
    118, 223.

    Examples
    --------
    >>> round(float(log_afrho_power_law(np.log10(2.0), 3.0, -2.0)), 6)   # 1000 cm / 2**2
    2.39794
    """
    return log_norm + k * np.asarray(log_r_h, dtype=float)


def brightening_mag(afrho, afrho_reference):
    """Brightening in magnitudes of an Afρ over a reference Afρ.

    Parameters
    ----------
    afrho, afrho_reference : float or ndarray
        Afρ values in the same unit (both > 0).

    Returns
    -------
    delta_mag : float or ndarray
        ``-2.5 log10(afrho / afrho_reference)``: negative when brighter than the reference.

    Notes
    -----
    For a fixed aperture and geometry Afρ is proportional to the coma flux in the aperture
    (A'Hearn et al. 1984, AJ 89, 579, eq. 1), so the ratio converts to a magnitude difference
    by Pogson's relation. The value is the brightening of the dust in the aperture, not of the
    whole comet.

    Examples
    --------
    >>> round(float(brightening_mag(10.0, 1.0)), 6)
    -2.5
    """
    ratio = np.asarray(afrho, dtype=float) / np.asarray(afrho_reference, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = -2.5 * np.log10(ratio)
    return float(out) if np.ndim(out) == 0 else out
