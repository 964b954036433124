"""Lower bound on the nucleus mass from the balance of outgassing momentum and its acceleration."""

from dataclasses import dataclass

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value
from photpipe.size._checks import geometric_albedo, positive_interval

__all__ = ["momentum_mass_bound", "BoundComparison", "compare_with_bound"]

_G_CM3 = u.g / u.cm**3


def momentum_mass_bound(Q, v, a_limit, *, efficiency=1.0):
    """Return the smallest mass that keeps the outgassing acceleration below a limit.

    Parameters
    ----------
    Q : `~astropy.units.Quantity` ['mass flux' as mass/time]
        Gas mass-loss rate (kg/s).
    v : `~astropy.units.Quantity` ['speed']
        Outflow speed of the gas (m/s).
    a_limit : `~astropy.units.Quantity` ['acceleration']
        Upper limit on the non-gravitational acceleration; any acceleration unit
        (m/s^2, m/day^2, AU/day^2).
    efficiency : float, optional
        Momentum-transfer efficiency η, 0 < η <= 1 (1 for gas leaving in one direction; a
        hemispheric outflow transfers less).

    Returns
    -------
    M : `~astropy.units.Quantity` ['mass']
        ``η Q v / a`` in kg: the nucleus mass is at least this.

    Raises
    ------
    ValueError
        If Q, v or a is not positive, or η is not in (0, 1].

    Notes
    -----
    The reaction force of the escaping gas is ``η Q v``; an acceleration below ``a`` needs
    ``M >= η Q v / a`` (common practice). It rests on the measured Q and on ``a`` being a true
    upper limit for the same epoch.

    Examples
    --------
    >>> from astropy import units as u
    >>> m = momentum_mass_bound(150 * u.kg / u.s, 440 * u.m / u.s, 15 * u.m / u.day**2)
    >>> print(f"{m.to_value('kg'):.3e}")
    3.285e+13
    """
    q = as_positive_value(Q, u.kg / u.s, "Q")
    speed = as_positive_value(v, u.m / u.s, "v")
    a = as_positive_value(a_limit, u.m / u.s**2, "a_limit")
    eta = float(getattr(efficiency, "value", efficiency))
    if not (np.isfinite(eta) and 0 < eta <= 1):
        msg = f"'efficiency' must be in (0, 1], got {efficiency}"
        raise ValueError(msg)
    return eta * np.asarray(q) * np.asarray(speed) / np.asarray(a) * u.kg


@dataclass(frozen=True)
class BoundComparison:
    """The momentum mass bound set against the photometric radius.

    Attributes
    ----------
    mass_bound : `~astropy.units.Quantity` ['mass']
        The lower bound on the mass (kg).
    radius : `~astropy.units.Quantity` ['length']
        Photometric radius (km) at the assumed albedo.
    albedo : float
        The albedo behind ``radius``.
    density_lo, density_hi : `~astropy.units.Quantity` ['mass density']
        The assumed density range (g/cm^3).
    radius_bound : `~astropy.units.Quantity` ['length']
        Smallest radius allowed by the bound at the highest assumed density (km).
    radius_bound_at_density_lo : `~astropy.units.Quantity` ['length']
        Smallest radius allowed at the lowest assumed density (km).
    density_min : `~astropy.units.Quantity` ['mass density']
        Least bulk density a nucleus of the photometric radius needs to satisfy the bound.
    albedo_max : float
        Largest albedo for which the photometric radius meets the bound at the highest assumed
        density (radius scales as p^(-1/2)).
    consistent : bool
        True when the photometric radius meets the bound within the assumed density range.
    """

    mass_bound: u.Quantity
    radius: u.Quantity
    albedo: float
    density_lo: u.Quantity
    density_hi: u.Quantity
    radius_bound: u.Quantity
    radius_bound_at_density_lo: u.Quantity
    density_min: u.Quantity
    albedo_max: float
    consistent: bool

    def statement(self):
        """Return one or two sentences saying what the bound implies."""
        r = self.radius.to_value(u.km)
        rb = self.radius_bound.to_value(u.km)
        rho_min = self.density_min.to_value(_G_CM3)
        rho_hi = self.density_hi.to_value(_G_CM3)
        rho_lo = self.density_lo.to_value(_G_CM3)
        if self.consistent:
            part = ("all of" if rho_min <= rho_lo else f"the part above {rho_min:.3g} g/cm^3 of")
            return (f"The photometric radius {r:.3g} km (albedo {self.albedo:g}) meets the "
                    f"momentum bound for any bulk density of {rho_min:.3g} g/cm^3 or more: "
                    f"{part} the assumed {rho_lo:g}-{rho_hi:g} g/cm^3 range.")
        return (f"The photometric radius {r:.3g} km (albedo {self.albedo:g}) is below the "
                f"momentum-bound radius {rb:.3g} km at {rho_hi:.3g} g/cm^3: either the density "
                f"is at least {rho_min:.3g} g/cm^3 or the albedo is at most "
                f"{self.albedo_max:.3g} (or the acceleration limit or Q is wrong).")

    def to_dict(self):
        """Return the comparison as plain numbers (kg, km, g/cm^3)."""
        return {"mass_bound_kg": float(self.mass_bound.to_value(u.kg)),
                "radius_bound_km": float(self.radius_bound.to_value(u.km)),
                "radius_bound_at_density_lo_km":
                    float(self.radius_bound_at_density_lo.to_value(u.km)),
                "density_min_g_cm3": float(self.density_min.to_value(_G_CM3)),
                "albedo_max": float(self.albedo_max),
                "bound_consistent": bool(self.consistent)}


def compare_with_bound(radius, mass_bound, *, albedo, density_range):
    """Compare a photometric radius with the momentum mass bound.

    Parameters
    ----------
    radius : `~astropy.units.Quantity` ['length']
        Photometric radius at ``albedo``.
    mass_bound : `~astropy.units.Quantity` ['mass']
        Lower bound on the mass (from :func:`momentum_mass_bound`).
    albedo : float
        Geometric albedo assumed for ``radius``.
    density_range : `~astropy.units.Quantity` ['mass density']
        Assumed (lo, hi) bulk density range, or one density.

    Returns
    -------
    BoundComparison

    Notes
    -----
    With ``V = 4/3 π r^3``: the bound radius at density ρ is ``(3 M_min / (4 π ρ))^(1/3)``; the
    photometric radius needs ``ρ >= M_min / V``; and since ``r ∝ p^(-1/2)`` the albedo that
    reaches the bound radius r_b at the highest density is ``p (r / r_b)^2``.

    Examples
    --------
    >>> from astropy import units as u
    >>> c = compare_with_bound(2.0 * u.km, 3.2846e13 * u.kg, albedo=0.04,
    ...                        density_range=[0.3, 1.0] * u.g / u.cm**3)
    >>> print(f"{c.density_min.to_value('g / cm3'):.3f} {c.consistent}")
    0.980 True
    """
    r = as_positive_value(radius, u.m, "radius")
    m = as_positive_value(mass_bound, u.kg, "mass_bound")
    p = geometric_albedo(albedo, "albedo")
    d_lo, d_hi = positive_interval(density_range, u.kg / u.m**3, "density_range")
    k = 4.0 / 3.0 * np.pi
    rb_hi = np.cbrt(m / (k * d_hi))
    rb_lo = np.cbrt(m / (k * d_lo))
    rho_min = m / (k * r**3)
    return BoundComparison(
        mass_bound=m * u.kg, radius=(r * u.m).to(u.km), albedo=float(p),
        density_lo=(d_lo * u.kg / u.m**3).to(_G_CM3),
        density_hi=(d_hi * u.kg / u.m**3).to(_G_CM3),
        radius_bound=(rb_hi * u.m).to(u.km), radius_bound_at_density_lo=(rb_lo * u.m).to(u.km),
        density_min=(rho_min * u.kg / u.m**3).to(_G_CM3),
        albedo_max=float(min(1.0, p * (r / rb_hi) ** 2)), consistent=bool(rho_min <= d_hi),
    )
