"""Non-gravitational acceleration laws g(r) and the radial-transverse-normal acceleration."""

import numpy as np

__all__ = ["water_g", "inverse_square_g", "G_LAWS", "nongrav_acceleration", "WATER_CONSTANTS"]

#: Marsden, Sekanina & Yeomans (1973, AJ 78, 211, Eq. 2): α, r0 (AU), m, n, k of the water
#: sublimation law, α chosen so that g(1 AU) = 1.
WATER_CONSTANTS = {"alpha": 0.111262, "r0": 2.808, "m": 2.15, "n": 5.093, "k": 4.6142}


def water_g(r):
    """Water-ice sublimation law g(r) of Marsden, Sekanina & Yeomans (1973).

    Parameters
    ----------
    r : float or ndarray
        Heliocentric distance in AU.

    Returns
    -------
    g : float or ndarray
        Dimensionless; 1 at 1 AU by the law's definition.

    Notes
    -----
    g(r) = α (r/r₀)^-m [1 + (r/r₀)^n]^-k with α = 0.111262, r₀ = 2.808 AU, m = 2.15,
    n = 5.093, k = 4.6142 (Marsden, Sekanina & Yeomans 1973, AJ 78, 211, Eq. 2).

    Examples
    --------
    >>> round(float(water_g(1.0)), 5)
    1.0
    """
    c = WATER_CONSTANTS
    x = np.asarray(r, dtype=float) / c["r0"]
    return c["alpha"] * x ** (-c["m"]) * (1.0 + x ** c["n"]) ** (-c["k"])


def inverse_square_g(r):
    """Inverse-square law g(r) = (1 AU / r)², for activity driven by CO or CO₂.

    Notes
    -----
    A volatile far more volatile than water sublimates at a rate set by the absorbed sunlight
    alone, so its reaction force falls as r⁻² (common practice; e.g. Farnocchia et al. 2023,
    Nature 618, 1014 for an r⁻² law in non-gravitational fits).

    Examples
    --------
    >>> float(inverse_square_g(2.0))
    0.25
    """
    return 1.0 / np.asarray(r, dtype=float) ** 2


#: Name -> g(r) law, for configuration and the command line.
G_LAWS = {"water": water_g, "inverse-square": inverse_square_g}


def nongrav_acceleration(r_helio, v_helio, a123, g_law=water_g):
    """Non-gravitational acceleration g(r) (A1 r̂ + A2 t̂ + A3 n̂), AU/day².

    Parameters
    ----------
    r_helio, v_helio : ndarray, shape (3,) or (3, n)
        Heliocentric position (AU) and velocity (AU/day).
    a123 : sequence of 3 floats
        A1, A2, A3 in AU/day² (the acceleration at 1 AU for a law with g(1) = 1).
    g_law : callable, optional
        g(r).

    Returns
    -------
    accel : ndarray, same shape as ``r_helio``
    basis : ndarray, shape (3, 3) or (3, 3, n)
        g(r) r̂, g(r) t̂, g(r) n̂ as rows: the partials of the acceleration by A1, A2, A3.

    Notes
    -----
    r̂ is the Sun-to-comet direction, n̂ ∥ r × v the orbit normal and t̂ = n̂ × r̂ in the
    orbit plane toward the motion (Marsden, Sekanina & Yeomans 1973, Eq. 1).

    Examples
    --------
    >>> import numpy as np
    >>> a, _ = nongrav_acceleration(np.array([1.0, 0, 0]), np.array([0, 0.017, 0]),
    ...                             [1e-8, 2e-9, 0.0])
    >>> np.round(a * 1e9, 3)
    array([10.,  2.,  0.])
    """
    r = np.asarray(r_helio, dtype=float)
    v = np.asarray(v_helio, dtype=float)
    rn = np.sqrt(r[0] ** 2 + r[1] ** 2 + r[2] ** 2)
    h = _cross(r, v)
    n_hat = h / np.sqrt(h[0] ** 2 + h[1] ** 2 + h[2] ** 2)
    r_hat = r / rn
    t_hat = _cross(n_hat, r_hat)
    g = g_law(rn)
    basis = g * np.stack([r_hat, t_hat, n_hat])
    a123 = np.asarray(a123, dtype=float)
    a = a123[0] * basis[0] + a123[1] * basis[1] + a123[2] * basis[2]
    return a, basis


def _cross(a, b):
    # along the first axis, written out: np.cross moves axes and is slow on small arrays
    return np.stack([a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2],
                     a[0] * b[1] - a[1] * b[0]])
