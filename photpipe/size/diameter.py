"""Effective diameter of a nucleus from its absolute magnitude and an assumed albedo."""

import numpy as np
from astropy import units as u

from photpipe.size._checks import geometric_albedo, magnitude
from photpipe.size._solar import resolve_solar_magnitude

__all__ = ["size_constant", "diameter_from_H", "radius_from_H"]

_AU_KM = (1 * u.au).to_value(u.km)


def size_constant(*, band="V", m_sun=None):
    r"""Return the constant C of ``D = C / sqrt(p) 10^(-H/5)`` for a band.

    Parameters
    ----------
    band : str, optional
        Band of H (``"V"`` by default); selects the solar magnitude.
    m_sun : float, optional
        Apparent magnitude of the Sun at 1 AU in the band; overrides the table.

    Returns
    -------
    C : `~astropy.units.Quantity` ['length']
        The constant in km.

    Notes
    -----
    An albedo-p sphere of diameter D seen at 1 AU from the Sun and the observer at zero phase
    has ``p (D/2)^2 = AU^2 10^(0.4 (m_sun - H))``, hence (Pravec & Harris 2007, Icarus 190, 250,
    Appendix A)

    .. math:: C = 2\,\mathrm{AU}\,10^{m_\odot/5},

    which with ``m_sun(V) = -26.762`` (the value Pravec & Harris adopt) gives the 1329 km of
    Fowler & Chillemi (1992). The project's solar table (Willmer 2018, V = -26.76) gives
    1330.3 km, 0.1% more.

    Examples
    --------
    >>> print(f"{size_constant(m_sun=-26.762).to_value('km'):.1f}")
    1329.1
    >>> print(f"{size_constant(band='R').to_value('km'):.1f}")
    1111.6
    """
    m_sun, _ = resolve_solar_magnitude(band, m_sun)
    return 2.0 * _AU_KM * 10.0 ** (0.2 * m_sun) * u.km


def diameter_from_H(H, albedo, *, band="V", m_sun=None):
    r"""Return the effective diameter of a nucleus of absolute magnitude H.

    Parameters
    ----------
    H : float or array-like or `~astropy.units.Quantity` ['mag']
        Absolute magnitude m(1, 1, 0) in ``band``.
    albedo : float or array-like
        Geometric albedo in ``band``, 0 < p <= 1 (broadcast against H).
    band : str, optional
        Band of H and p.
    m_sun : float, optional
        Solar magnitude of the band at 1 AU; overrides the built-in table.

    Returns
    -------
    D : `~astropy.units.Quantity` ['length']
        Effective (equal-area sphere) diameter in km.

    Raises
    ------
    ValueError
        If the albedo is not in (0, 1], H is not finite, or the band is unknown without m_sun.

    Notes
    -----
    .. math:: D = \frac{C}{\sqrt{p}}\,10^{-H/5}, \quad C = 2\,\mathrm{AU}\,10^{m_\odot/5}

    (Fowler & Chillemi 1992; Harris & Lagerros 2002; Pravec & Harris 2007, Appendix A). The
    size rests on the assumed albedo: D scales as p^(-1/2).

    Examples
    --------
    >>> print(f"{diameter_from_H(15.0, 0.25).to_value('km'):.2f}")
    2.66
    >>> print(f"{diameter_from_H(15.0, 0.04).to_value('km'):.2f}")
    6.65
    """
    h = magnitude(H, "H")
    p = geometric_albedo(albedo, "albedo")
    c = size_constant(band=band, m_sun=m_sun).to_value(u.km)
    return c / np.sqrt(p) * 10.0 ** (-0.2 * np.asarray(h)) * u.km


def radius_from_H(H, albedo, *, band="V", m_sun=None):
    """Return the effective radius, half of :func:`diameter_from_H`.

    Examples
    --------
    >>> print(f"{radius_from_H(15.0, 0.04).to_value('km'):.3f}")
    3.326
    """
    return 0.5 * diameter_from_H(H, albedo, band=band, m_sun=m_sun)
