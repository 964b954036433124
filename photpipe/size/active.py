"""Fraction of the nucleus surface that must sublimate to supply a measured gas production."""

import warnings
from dataclasses import dataclass, field

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value
from photpipe._warnings import PoorResultWarning
from photpipe.size.ices import get_ice
from photpipe.size.sublimation import sublimation_rate

__all__ = ["DEFAULT_COMPOSITION", "ActiveFraction", "active_fraction"]

#: Mass fractions of the sublimating ices assumed when none are given (an invented-scenario
#: default, not a measured comet's mix).
DEFAULT_COMPOSITION = {"H2O": 0.7, "CO2": 0.3}


@dataclass(frozen=True)
class ActiveFraction:
    """Active area and active fraction of a nucleus.

    Attributes
    ----------
    fraction : float
        Active area over the whole surface 4π R^2.
    active_area, surface_area : `~astropy.units.Quantity` ['area']
        Sublimating area needed and the nucleus surface (km^2).
    areas : dict of str -> `~astropy.units.Quantity`
        Area needed by each ice (km^2).
    rates : dict of str -> `~astropy.units.Quantity`
        Sublimation mass flux of each ice (kg m^-2 s^-1).
    composition : dict of str -> float
        Mass fractions used.
    geometry : str
        Surface geometry of the sublimation balance.
    r_h : `~astropy.units.Quantity` ['length']
        Heliocentric distance (AU).
    flags : tuple of str
        ``"exceeds_surface"`` when the fraction is above 1.
    """

    fraction: float
    active_area: u.Quantity
    surface_area: u.Quantity
    areas: dict = field(compare=False)
    rates: dict = field(compare=False)
    composition: dict = field(compare=False)
    geometry: str = "subsolar"
    r_h: u.Quantity = None
    flags: tuple = ()

    def to_dict(self):
        """Return the result as plain numbers (km^2, kg m^-2 s^-1, AU)."""
        return {"active_fraction": float(self.fraction),
                "active_area_km2": float(self.active_area.to_value(u.km**2)),
                "surface_area_km2": float(self.surface_area.to_value(u.km**2)),
                "active_area_by_ice_km2": {k: float(v.to_value(u.km**2))
                                           for k, v in self.areas.items()},
                "sublimation_kg_m2_s": {k: float(v.to_value(u.kg / u.m**2 / u.s))
                                        for k, v in self.rates.items()},
                "composition": dict(self.composition), "sublimation_geometry": self.geometry,
                "activity_r_h_au": float(self.r_h.to_value(u.au)), "flags": list(self.flags)}


def _check_composition(composition):
    if not isinstance(composition, dict) or not composition:
        msg = f"'composition' must be a non-empty dict of ice -> mass fraction, got {composition!r}"
        raise TypeError(msg)
    fractions = {}
    for name, value in composition.items():
        get_ice(name)
        f = float(value)
        if not (np.isfinite(f) and 0 <= f <= 1):
            msg = f"composition fraction of {name!r} must be in [0, 1], got {value}"
            raise ValueError(msg)
        fractions[name] = f
    total = sum(fractions.values())
    if abs(total - 1.0) > 1e-6:
        msg = f"composition mass fractions must add up to 1, got {total:g} from {fractions}"
        raise ValueError(msg)
    return fractions


def active_fraction(Q, r_h, radius, composition=None, *, geometry="subsolar", albedo=0.01,
                    emissivity=0.9):
    """Return the fraction of the surface that must be active to give a gas mass-loss rate.

    Parameters
    ----------
    Q : `~astropy.units.Quantity` ['mass/time']
        Gas mass-loss rate (kg/s).
    r_h : `~astropy.units.Quantity` ['length']
        Heliocentric distance at which Q was measured.
    radius : `~astropy.units.Quantity` ['length']
        Effective nucleus radius.
    composition : dict of str -> float, optional
        Mass fractions of Q carried by each ice (must add up to 1); default
        `DEFAULT_COMPOSITION`.
    geometry : str, optional
        Surface geometry of the balance (see `~photpipe.size.sublimation_rate`). The default
        ``"subsolar"`` gives the largest rate per area, hence the smallest area: the fraction is
        then a lower limit.
    albedo, emissivity : float, optional
        Bond albedo and emissivity of the ice surfaces.

    Returns
    -------
    ActiveFraction

    Raises
    ------
    ValueError
        For a non-positive Q, r_h or radius, or a bad composition.

    Warns
    -----
    PoorResultWarning
        If the active area exceeds the surface (flag ``"exceeds_surface"``): the gas then needs
        another source (icy grains in the coma), a larger nucleus (lower albedo), or more
        volatile ice.

    Notes
    -----
    Each ice sublimates from its own patch in its own energy balance, so
    ``A_active = Σ_i f_i Q / Z_i(r_h)`` and the fraction is ``A_active / (4 π R^2)``.

    Examples
    --------
    >>> from astropy import units as u
    >>> af = active_fraction(150 * u.kg / u.s, 1.3 * u.au, 2.5 * u.km)
    >>> print(f"{af.fraction:.4f}")
    0.0057
    """
    q = as_positive_value(Q, u.kg / u.s, "Q")
    rh = as_positive_value(r_h, u.au, "r_h")
    r = as_positive_value(radius, u.m, "radius")
    mix = _check_composition(DEFAULT_COMPOSITION if composition is None else composition)
    areas, rates = {}, {}
    for name, f in mix.items():
        z = sublimation_rate(name, rh * u.au, albedo=albedo, emissivity=emissivity,
                             geometry=geometry).mass_flux.to_value(u.kg / u.m**2 / u.s)
        rates[name] = z * u.kg / u.m**2 / u.s
        areas[name] = (f * q / z if f > 0 else 0.0) * u.m**2
    active = sum(a.to_value(u.m**2) for a in areas.values())
    surface = 4.0 * np.pi * r**2
    fraction = active / surface
    flags = ()
    if fraction > 1:
        flags = ("exceeds_surface",)
        msg = (f"active area {active / 1e6:.3g} km^2 exceeds the nucleus surface "
               f"{surface / 1e6:.3g} km^2 (fraction {fraction:.3g}): the gas needs icy grains "
               f"in the coma, a larger nucleus (lower albedo) or more volatile ice")
        warnings.warn(msg, PoorResultWarning, stacklevel=2)
    return ActiveFraction(
        fraction=float(fraction), active_area=(active * u.m**2).to(u.km**2),
        surface_area=(surface * u.m**2).to(u.km**2),
        areas={k: v.to(u.km**2) for k, v in areas.items()}, rates=rates, composition=mix,
        geometry=geometry, r_h=rh * u.au, flags=flags,
    )
