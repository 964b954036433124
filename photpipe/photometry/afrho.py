"""Afρ, the dust-production proxy of A'Hearn et al. (1984), and its uncertainty."""

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value, as_value

__all__ = ["afrho", "afrho_uncertainty"]

_LN10_04 = 0.4 * np.log(10.0)


def afrho(mag, m_sun, r_h, delta, rho):
    """Afρ of a comet from its magnitude in an aperture of radius ρ at the comet.

    Parameters
    ----------
    mag : `~astropy.units.Quantity` [mag] or float
        Comet magnitude inside the aperture (same band and system as ``m_sun``).
    m_sun : `~astropy.units.Quantity` [mag] or float
        Apparent magnitude of the Sun at 1 AU in the band.
    r_h : `~astropy.units.Quantity` ['length']
        Heliocentric distance.
    delta : `~astropy.units.Quantity` ['length']
        Geocentric distance Δ.
    rho : `~astropy.units.Quantity` ['length']
        Aperture radius projected at the comet.

    Returns
    -------
    afrho : `~astropy.units.Quantity` ['length']
        Afρ in cm (same shape as the broadcast inputs).

    Notes
    -----
    A'Hearn et al. (1984, AJ 89, 579) define

        Afρ = (2 Δ r_h)² / ρ · F_comet / F_sun = 4 r_h² Δ² / ρ · 10^(0.4 (m_sun - m)),

    with r_h in AU (F_sun is the solar flux at 1 AU) and Δ, ρ in cm, so that Afρ is in cm.

    References
    ----------
    A'Hearn, M. F., Schleicher, D. G., Millis, R. L., Feldman, P. D., & Thompson, D. T. 1984,
    AJ 89, 579.

    Examples
    --------
    >>> import astropy.units as u
    >>> a = afrho(12.0 * u.mag, -27.15 * u.mag, 1.5 * u.au, 1.0 * u.au, 1e4 * u.km)
    >>> round(float(a.to_value(u.cm)), 1)
    440.6
    """
    m = as_value(mag, u.mag, "mag", allow_dimensionless=True)
    ms = as_value(m_sun, u.mag, "m_sun", allow_dimensionless=True)
    r_au = as_positive_value(r_h, u.au, "r_h")
    delta_cm = as_positive_value(delta, u.cm, "delta")
    rho_cm = as_positive_value(rho, u.cm, "rho")
    value = 4.0 * r_au**2 * delta_cm**2 / rho_cm * 10.0 ** (0.4 * (ms - np.asarray(m)))
    return value * u.cm


def afrho_uncertainty(afrho_value, mag_err, *, r_h=None, r_h_err=None, delta=None,
                      delta_err=None):
    """Uncertainty of Afρ propagated from the magnitude and (optionally) the geometry.

    Parameters
    ----------
    afrho_value : `~astropy.units.Quantity` ['length']
        Afρ values.
    mag_err : `~astropy.units.Quantity` [mag] or float
        Uncertainty of the comet magnitude (flux and zero point combined).
    r_h, r_h_err : `~astropy.units.Quantity` ['length'], optional
        Heliocentric distance and its uncertainty.
    delta, delta_err : `~astropy.units.Quantity` ['length'], optional
        Geocentric distance and its uncertainty.

    Returns
    -------
    afrho_err : `~astropy.units.Quantity` ['length']
        One-sigma uncertainty, in cm.

    Notes
    -----
    First-order propagation of Afρ ∝ r_h² Δ² 10^(-0.4 m) (A'Hearn et al. 1984) with independent
    errors: (σ_A / A)² = (0.4 ln 10 σ_m)² + (2 σ_r / r_h)² + (2 σ_Δ / Δ)². The aperture radius ρ is
    taken as exact (it is chosen, in km).

    Examples
    --------
    >>> import astropy.units as u
    >>> err = afrho_uncertainty(100 * u.cm, 0.01 * u.mag)
    >>> round(float(err.to_value(u.cm)), 3)
    0.921
    """
    a = as_value(afrho_value, u.cm, "afrho_value")
    sm = as_value(mag_err, u.mag, "mag_err", allow_dimensionless=True)
    rel2 = (_LN10_04 * np.asarray(sm)) ** 2
    if r_h_err is not None:
        rel2 = rel2 + (2.0 * as_value(r_h_err, u.au, "r_h_err")
                       / as_positive_value(r_h, u.au, "r_h")) ** 2
    if delta_err is not None:
        rel2 = rel2 + (2.0 * as_value(delta_err, u.au, "delta_err")
                       / as_positive_value(delta, u.au, "delta")) ** 2
    return np.abs(a) * np.sqrt(rel2) * u.cm
