"""Surface geometries of the sublimation balance, one function each, behind a name table.

Each function takes ``(ice, flux, emissivity)`` with ``flux = (1 - A) S / r_h^2`` the absorbed
flux at normal incidence (W/m^2, array) and returns ``(T, mass_flux)``: the temperature and the
mean sublimation mass flux per unit area of the surface the geometry describes.
"""

import numpy as np

from photpipe.size._balance import local_balance

__all__ = ["GEOMETRIES", "GEOMETRY_NOTES"]

_MU, _W = np.polynomial.legendre.leggauss(32)
_MU, _W = 0.5 * (_MU + 1.0), 0.5 * _W  # nodes and weights on [0, 1]


def _subsolar(ice, flux, emissivity):
    """Surface facing the Sun (largest rate: the smallest area for a given Q)."""
    return local_balance(ice, flux, emissivity)


def _rapid_rotator(ice, flux, emissivity):
    """Equator of a fast rotator with its spin axis normal to the Sun line: mean cos z = 1/π."""
    return local_balance(ice, flux / np.pi, emissivity)


def _isothermal(ice, flux, emissivity):
    """Whole sphere at one temperature: absorbed π R^2, emitted from 4 π R^2."""
    return local_balance(ice, flux / 4.0, emissivity)


def _sunlit_hemisphere(ice, flux, emissivity):
    """Slow rotator: every sunlit point in its own balance at cos z = μ, averaged over μ.

    The per-area mean over the day-side hemisphere is ``∫_0^1 Z(μ) dμ`` (dΩ = 2π dμ),
    integrated by 32-point Gauss-Legendre quadrature; T is the area-mean temperature.
    """
    f = np.asarray(flux, dtype=float)
    t, z = local_balance(ice, f[..., None] * _MU, emissivity)
    return t @ _W, z @ _W


#: Geometry name -> function(ice, flux, emissivity) -> (T, mass_flux).
GEOMETRIES = {
    "subsolar": _subsolar,
    "rapid-rotator": _rapid_rotator,
    "isothermal": _isothermal,
    "sunlit-hemisphere": _sunlit_hemisphere,
}

#: Geometry name -> one-line description for summaries.
GEOMETRY_NOTES = {
    "subsolar": "surface facing the Sun (largest rate per area, so the smallest active area)",
    "rapid-rotator": "equator of a fast rotator, spin axis normal to the Sun line (flux / π)",
    "isothermal": "whole sphere at one temperature (flux / 4; smallest rate per area)",
    "sunlit-hemisphere": "slow rotator, each day-side point in its own balance, day-side mean",
}
