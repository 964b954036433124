"""Nucleus mass from its radius for an assumed range of bulk density, and the reverse."""

from dataclasses import dataclass

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value
from photpipe.size._checks import positive_interval

__all__ = ["DEFAULT_DENSITY_RANGE", "MassRange", "mass_range", "radius_from_mass", "sphere_mass"]

#: Bulk density range of comet nuclei assumed by default. Measured nuclei fall within it:
#: 67P 0.533 g/cm^3 (Pätzold et al. 2016, Nature 530, 63, from memory); the survey of
#: Groussin et al. 2019 (Space Sci. Rev. 215, 29) gives 0.2-1.0 g/cm^3 (from memory).
DEFAULT_DENSITY_RANGE = (0.3, 1.0) * u.g / u.cm**3

_G_CM3 = u.g / u.cm**3


@dataclass(frozen=True)
class MassRange:
    """Mass of a sphere over a radius interval and a density range.

    Attributes
    ----------
    lo, hi : `~astropy.units.Quantity` ['mass']
        Mass at the smallest radius and lowest density, and at the largest and highest (kg).
    density_lo, density_hi : `~astropy.units.Quantity` ['mass density']
        The density range (g/cm^3).
    radius_lo, radius_hi : `~astropy.units.Quantity` ['length']
        The radius interval (km).
    """

    lo: u.Quantity
    hi: u.Quantity
    density_lo: u.Quantity
    density_hi: u.Quantity
    radius_lo: u.Quantity
    radius_hi: u.Quantity

    def to_dict(self):
        """Return the range as plain numbers (kg, g/cm^3, km)."""
        return {"mass_kg_lo": float(self.lo.to_value(u.kg)),
                "mass_kg_hi": float(self.hi.to_value(u.kg)),
                "density_lo_g_cm3": float(self.density_lo.to_value(_G_CM3)),
                "density_hi_g_cm3": float(self.density_hi.to_value(_G_CM3)),
                "radius_lo_km": float(self.radius_lo.to_value(u.km)),
                "radius_hi_km": float(self.radius_hi.to_value(u.km))}


def sphere_mass(radius, density):
    """Return ``4/3 π r^3 ρ`` in kg.

    Examples
    --------
    >>> from astropy import units as u
    >>> print(f"{sphere_mass(1 * u.km, 1 * u.g / u.cm**3).to_value('kg'):.4e}")
    4.1888e+12
    """
    r = as_positive_value(radius, u.m, "radius")
    rho = as_positive_value(density, u.kg / u.m**3, "density")
    return 4.0 / 3.0 * np.pi * np.asarray(r) ** 3 * np.asarray(rho) * u.kg


def mass_range(radius, density_range=DEFAULT_DENSITY_RANGE):
    """Return the mass range of a spherical nucleus.

    Parameters
    ----------
    radius : `~astropy.units.Quantity` ['length']
        One radius, or a (lo, hi) radius interval.
    density_range : `~astropy.units.Quantity` ['mass density'], optional
        One density or a (lo, hi) range; default 0.3-1.0 g/cm^3 (`DEFAULT_DENSITY_RANGE`).

    Returns
    -------
    MassRange

    Raises
    ------
    ValueError
        If a radius or density is not positive, or a range is not (lo, hi) with lo <= hi.

    Notes
    -----
    ``M = 4/3 π r^3 ρ``; the low end takes the small radius with the low density, the high end
    the large radius with the high density, so the range holds every combination. It rests on
    the assumed albedo (through r) and the assumed density.

    Examples
    --------
    >>> from astropy import units as u
    >>> m = mass_range(2.5 * u.km)
    >>> print(f"{m.lo.to_value('kg'):.3e} {m.hi.to_value('kg'):.3e}")
    1.963e+13 6.545e+13
    """
    r_lo, r_hi = positive_interval(radius, u.m, "radius")
    d_lo, d_hi = positive_interval(density_range, u.kg / u.m**3, "density_range")
    k = 4.0 / 3.0 * np.pi
    return MassRange(
        lo=k * r_lo**3 * d_lo * u.kg, hi=k * r_hi**3 * d_hi * u.kg,
        density_lo=(d_lo * u.kg / u.m**3).to(_G_CM3), density_hi=(d_hi * u.kg / u.m**3).to(_G_CM3),
        radius_lo=(r_lo * u.m).to(u.km), radius_hi=(r_hi * u.m).to(u.km),
    )


def radius_from_mass(mass, density):
    """Return the radius of a sphere of given mass and bulk density.

    Parameters
    ----------
    mass : `~astropy.units.Quantity` ['mass']
    density : `~astropy.units.Quantity` ['mass density']

    Returns
    -------
    radius : `~astropy.units.Quantity` ['length']
        ``(3 M / (4 π ρ))^(1/3)`` in km.

    Examples
    --------
    >>> from astropy import units as u
    >>> r = radius_from_mass(3.2846e13 * u.kg, 0.5 * u.g / u.cm**3)
    >>> print(f"{2 * r.to_value('km'):.2f}")
    5.01
    """
    m = as_positive_value(mass, u.kg, "mass")
    rho = as_positive_value(density, u.kg / u.m**3, "density")
    r = np.cbrt(3.0 * np.asarray(m) / (4.0 * np.pi * np.asarray(rho)))
    return (r * u.m).to(u.km)
