"""Energy balance of one surface element of sublimating ice, solved for its temperature."""

import numpy as np
from astropy import constants as const
from astropy import units as u

from photpipe.size._solver import bracketed_root

__all__ = ["SIGMA_SB", "local_balance"]

SIGMA_SB = const.sigma_sb.to_value(u.W / u.m**2 / u.K**4)


def local_balance(ice, absorbed, emissivity):
    """Return ``(T, mass_flux)`` of a surface absorbing ``absorbed`` W/m^2 (array).

    Solves ``absorbed = ε σ T^4 + Z(T) L`` (Cowan & A'Hearn 1979, Moon Planets 21, 155, with
    heat conduction into the interior neglected) with a bracketing root finder. The bracket is
    [1e-3 T_rad, (1 + 1e-8) T_rad] with ``T_rad = (absorbed / (ε σ))^(1/4)`` the temperature without
    sublimation: the residual is positive at the low end and <= 0 at T_rad.
    """
    s = np.asarray(absorbed, dtype=float)
    t_rad = (s / (emissivity * SIGMA_SB)) ** 0.25
    latent = ice.latent_heat
    flat_s = s.ravel()

    def residual(t, index):
        return flat_s[index] - emissivity * SIGMA_SB * t**4 - ice.mass_flux(t) * latent

    # the top end is nudged up so that rounding cannot leave the residual positive there
    t = bracketed_root(residual, 1e-3 * t_rad, t_rad * (1 + 1e-8), xtol=1e-9, rtol=1e-12)
    return t, ice.mass_flux(t)
