"""Radius of a nucleus from one apparent magnitude: the Russell (1916) equation."""

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value, as_value
from photpipe.size._checks import geometric_albedo, magnitude
from photpipe.size._solar import resolve_solar_magnitude

__all__ = ["RUSSELL_CONSTANT", "radius_russell"]

#: ``(1 AU)^2`` in km^2 = 2.238e16 km^2 (2.238e22 m^2 when r is in metres): the constant of the
#: Russell equation with r_h and Δ in AU. The often quoted 2.24e22 belongs to r in metres.
RUSSELL_CONSTANT = ((1 * u.au) ** 2).to(u.km**2)

_DEFAULT_BETA = 0.035 * u.mag / u.deg


def radius_russell(mag, r_h, delta, phase, *, albedo, band="V", m_sun=None,
                   phase_coefficient=_DEFAULT_BETA):
    r"""Return the nucleus radius that reflects an observed magnitude.

    Parameters
    ----------
    mag : float or array-like or `~astropy.units.Quantity` ['mag']
        Apparent magnitude of the nucleus in ``band``.
    r_h, delta : `~astropy.units.Quantity` ['length']
        Heliocentric and geocentric distances.
    phase : `~astropy.units.Quantity` ['angle']
        Sun-target-observer angle α.
    albedo : float
        Geometric albedo, 0 < p <= 1.
    band : str, optional
        Band of ``mag`` (selects ``m_sun``).
    m_sun : float, optional
        Apparent magnitude of the Sun at 1 AU in the band; overrides the table.
    phase_coefficient : `~astropy.units.Quantity`, optional
        Linear phase coefficient β in mag/deg; Φ(α) = 10^(-0.4 β α). Default 0.035 mag/deg,
        the mean of measured nuclei (Lamy et al. 2004, Comets II, from memory).

    Returns
    -------
    r : `~astropy.units.Quantity` ['length']
        Effective radius in km.

    Notes
    -----
    Russell (1916, ApJ 43, 173):

    .. math:: p\,r^2\,\Phi(\alpha) = K\,r_h^2\,\Delta^2\,10^{0.4(m_\odot - m)},

    with r_h and Δ in AU and ``K = (1 AU)^2 = 2.238e16 km^2`` for r in km (2.24e22 for r in m).
    At r_h = Δ = 1 AU and α = 0 it reduces to half of :func:`~photpipe.size.diameter_from_H`.

    Examples
    --------
    >>> from astropy import units as u
    >>> r = radius_russell(15.0, 1 * u.au, 1 * u.au, 0 * u.deg, albedo=0.04)
    >>> print(f"{r.to_value('km'):.3f}")
    3.326
    """
    m = np.asarray(magnitude(mag, "mag"))
    rh = as_positive_value(r_h, u.au, "r_h")
    dl = as_positive_value(delta, u.au, "delta")
    alpha = as_value(phase, u.deg, "phase")
    beta = as_value(phase_coefficient, u.mag / u.deg, "phase_coefficient")
    p = geometric_albedo(albedo, "albedo")
    msun, _ = resolve_solar_magnitude(band, m_sun)
    phi = 10.0 ** (-0.4 * beta * np.asarray(alpha))
    r2 = (RUSSELL_CONSTANT.to_value(u.km**2) * np.asarray(rh) ** 2 * np.asarray(dl) ** 2
          * 10.0 ** (0.4 * (msun - m)) / (p * phi))
    return np.sqrt(r2) * u.km
