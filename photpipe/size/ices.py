"""Volatile ices: vapour-pressure laws and latent heats used by the sublimation balance."""

from dataclasses import dataclass

import numpy as np
from astropy import constants as const
from astropy import units as u

from photpipe._quantity import as_positive_value

__all__ = ["Ice", "ICES", "get_ice", "vapour_pressure"]

_K_B = const.k_B.to_value(u.J / u.K)
_AMU = const.u.to_value(u.kg)


@dataclass(frozen=True)
class Ice:
    """One sublimating species with a vapour-pressure law ``P(T) = A exp(-B / T)``.

    Attributes
    ----------
    name : str
        Formula (``"H2O"``, ``"CO2"``, ``"CO"``).
    molar_mass : float
        Molecular mass in atomic mass units (g/mol).
    pressure_scale : float
        A, in Pa.
    pressure_temperature : float
        B, in K.
    source : str
        Where A and B come from.

    Notes
    -----
    The latent heat consistent with the exponential law through Clausius-Clapeyron,
    ``d ln P / dT = L m / (k T^2)``, is ``L = k B / m`` (J/kg), independent of T. Using it
    keeps the energy balance thermodynamically consistent with the pressure law.
    """

    name: str
    molar_mass: float
    pressure_scale: float
    pressure_temperature: float
    source: str

    @property
    def molecule_mass(self):
        """Mass of one molecule in kg."""
        return self.molar_mass * _AMU

    @property
    def latent_heat(self):
        """Latent heat of sublimation ``k B / m`` in J/kg."""
        return _K_B * self.pressure_temperature / self.molecule_mass

    def pressure(self, temperature):
        """Return the saturation vapour pressure (Pa) at ``temperature`` (K, plain floats)."""
        t = np.asarray(temperature, dtype=float)
        return self.pressure_scale * np.exp(-self.pressure_temperature / t)

    def mass_flux(self, temperature):
        """Return the free-sublimation mass flux ``P sqrt(m / (2 π k T))`` (kg m^-2 s^-1)."""
        t = np.asarray(temperature, dtype=float)
        return self.pressure(t) * np.sqrt(self.molecule_mass / (2.0 * np.pi * _K_B * t))


#: Species name -> Ice. A and B from Fanale & Salvail (1984, Icarus 60, 476) for H2O and
#: (1990, Icarus 84, 403) for CO2 and CO, as tabulated in Prialnik, Benkhoff & Podolak (2004,
#: Comets II, 359) -- all from memory. Tests check them against Murphy & Koop (2005) for water
#: and the handbook sublimation and triple points of CO2 and CO.
ICES = {
    "H2O": Ice("H2O", 18.015, 3.56e12, 6141.667, "Fanale & Salvail 1984 (from memory)"),
    "CO2": Ice("CO2", 44.010, 1.079e12, 3148.0, "Fanale & Salvail 1990 (from memory)"),
    "CO": Ice("CO", 28.010, 1.263e9, 764.16, "Fanale & Salvail 1990 (from memory)"),
}


def get_ice(species):
    """Return the `Ice` for a species name or pass an `Ice` through.

    Raises
    ------
    ValueError
        If the name is not in `ICES`.
    TypeError
        If ``species`` is neither a str nor an `Ice`.
    """
    if isinstance(species, Ice):
        return species
    if not isinstance(species, str):
        msg = (f"'species' must be a name from {sorted(ICES)} or an Ice, "
               f"got {type(species).__name__}")
        raise TypeError(msg)
    if species not in ICES:
        msg = f"unknown species {species!r}; known: {sorted(ICES)}"
        raise ValueError(msg)
    return ICES[species]


def vapour_pressure(species, temperature):
    """Return the saturation vapour pressure of an ice.

    Parameters
    ----------
    species : str or Ice
        ``"H2O"``, ``"CO2"``, ``"CO"`` or an `Ice`.
    temperature : `~astropy.units.Quantity` ['temperature']

    Returns
    -------
    P : `~astropy.units.Quantity` ['pressure']
        ``A exp(-B / T)`` in Pa.

    Examples
    --------
    >>> from astropy import units as u
    >>> print(f"{vapour_pressure('H2O', 273.16 * u.K).to_value('Pa'):.0f}")
    612
    """
    ice = get_ice(species)
    t = as_positive_value(temperature, u.K, "temperature")
    return ice.pressure(t) * u.Pa
