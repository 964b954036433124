"""Sublimation rate of an ice surface in radiative and latent-heat balance with sunlight."""

from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe._quantity import as_positive_value, as_value
from photpipe.size._geometry import GEOMETRIES
from photpipe.size.ices import get_ice

__all__ = ["SOLAR_IRRADIANCE", "SublimationRate", "sublimation_rate"]

#: Total solar irradiance at 1 AU: the IAU 2015 Resolution B3 nominal value (Prša et al. 2016,
#: AJ 152, 41).
SOLAR_IRRADIANCE = 1361.0 * u.W / u.m**2

_FLUX_UNIT = u.kg / u.m**2 / u.s
_NUMBER_UNIT = 1 / (u.m**2 * u.s)


@dataclass(frozen=True)
class SublimationRate:
    """Equilibrium temperature and sublimation rate of an ice surface.

    Attributes
    ----------
    species, geometry : str
        The ice and the surface geometry (see `sublimation_rate`).
    r_h : `~astropy.units.Quantity` ['length']
        Heliocentric distance(s) (AU).
    temperature : `~astropy.units.Quantity` ['temperature']
        Surface temperature (K; the area mean for ``"sunlit-hemisphere"``).
    mass_flux : `~astropy.units.Quantity`
        Sublimation rate per unit area, kg m^-2 s^-1.
    number_flux : `~astropy.units.Quantity`
        Sublimation rate per unit area, molecules m^-2 s^-1.
    albedo, emissivity : float
        Bond albedo and thermal emissivity assumed.
    """

    species: str
    geometry: str
    r_h: u.Quantity
    temperature: u.Quantity
    mass_flux: u.Quantity
    number_flux: u.Quantity
    albedo: float
    emissivity: float

    def to_table(self):
        """Return one row per r_h as a `~astropy.table.QTable`."""
        n = np.atleast_1d(self.r_h).size
        t = QTable({"r_h": np.atleast_1d(self.r_h),
                    "temperature": np.atleast_1d(self.temperature),
                    "mass_flux": np.atleast_1d(self.mass_flux),
                    "number_flux": np.atleast_1d(self.number_flux)})
        t["species"] = [self.species] * n
        t["geometry"] = [self.geometry] * n
        t.meta.update(albedo=self.albedo, emissivity=self.emissivity)
        return t


def sublimation_rate(species, r_h, *, albedo=0.01, emissivity=0.9, geometry="subsolar"):
    r"""Return the equilibrium sublimation rate of an ice at heliocentric distance r_h.

    Parameters
    ----------
    species : str or `~photpipe.size.Ice`
        ``"H2O"``, ``"CO2"`` or ``"CO"`` (see `~photpipe.size.ICES`).
    r_h : `~astropy.units.Quantity` ['length']
        Heliocentric distance, scalar or array.
    albedo : float, optional
        Bond albedo A, 0 <= A < 1. Default 0.01: a geometric albedo of 0.04 times a phase
        integral of about 0.25-0.3 (common practice).
    emissivity : float, optional
        Thermal emissivity ε, 0 < ε <= 1 (default 0.9, common practice).
    geometry : {"subsolar", "rapid-rotator", "isothermal", "sunlit-hemisphere"}, optional
        Which surface the balance describes (see Notes).

    Returns
    -------
    SublimationRate

    Raises
    ------
    ValueError
        For r_h <= 0, an albedo outside [0, 1), an emissivity outside (0, 1], or an unknown
        species or geometry.

    Notes
    -----
    Energy balance of a surface element (Cowan & A'Hearn 1979, Moon Planets 21, 155):

    .. math:: \frac{(1 - A) S_\odot}{r_h^2}\,f = \varepsilon\sigma T^4 + Z(T)\,L,
       \qquad Z(T) = P(T)\sqrt{\frac{m}{2\pi k T}},\qquad P(T) = A_P e^{-B/T}

    with S the solar irradiance at 1 AU (r_h in AU), Z the free-sublimation (Hertz-Knudsen)
    mass flux with unit sticking coefficient, and L = k B / m. The factor f is 1 for
    ``"subsolar"``, 1/π for ``"rapid-rotator"`` (equator, spin axis normal to the Sun line)
    and 1/4 for ``"isothermal"``; ``"sunlit-hemisphere"`` averages the local balance at
    f = cos z over the day side. Heat conducted into the nucleus is neglected, so the rates are
    upper limits for the stated albedo.

    Examples
    --------
    >>> from astropy import units as u
    >>> z = sublimation_rate("H2O", 1 * u.au)
    >>> print(f"{z.temperature.to_value('K'):.0f} K, {z.number_flux.value:.2e} m^-2 s^-1")
    205 K, 1.48e+22 m^-2 s^-1
    """
    ice = get_ice(species)
    rh = as_positive_value(r_h, u.au, "r_h")
    a = float(as_value(albedo, u.dimensionless_unscaled, "albedo", allow_dimensionless=True))
    eps = float(as_value(emissivity, u.dimensionless_unscaled, "emissivity",
                         allow_dimensionless=True))
    if not (np.isfinite(a) and 0 <= a < 1):
        msg = f"'albedo' (Bond) must be in [0, 1), got {albedo}"
        raise ValueError(msg)
    if not (np.isfinite(eps) and 0 < eps <= 1):
        msg = f"'emissivity' must be in (0, 1], got {emissivity}"
        raise ValueError(msg)
    if geometry not in GEOMETRIES:
        msg = f"unknown geometry {geometry!r}; choose from {sorted(GEOMETRIES)}"
        raise ValueError(msg)
    flux = (1.0 - a) * SOLAR_IRRADIANCE.to_value(u.W / u.m**2) / np.asarray(rh) ** 2
    t, z = GEOMETRIES[geometry](ice, flux, eps)
    if np.ndim(rh) == 0:
        t, z = float(t), float(z)
    return SublimationRate(
        species=ice.name, geometry=geometry, r_h=rh * u.au, temperature=t * u.K,
        mass_flux=z * _FLUX_UNIT, number_flux=np.asarray(z) / ice.molecule_mass * _NUMBER_UNIT,
        albedo=a, emissivity=eps,
    )
