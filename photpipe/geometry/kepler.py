"""Two-body propagation with units: the universal-variable Kepler solver at the public edge."""

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value, as_value
from photpipe.geometry import _kepler

__all__ = ["propagate_two_body", "eccentric_anomaly", "hyperbolic_anomaly"]


def propagate_two_body(position, velocity, dt, *, mu):
    """Propagate a two-body state by time offsets ``dt``, for any eccentricity.

    Parameters
    ----------
    position : `~astropy.units.Quantity` ['length'], shape (3,)
        Position relative to the central body at the reference epoch.
    velocity : `~astropy.units.Quantity` ['speed'], shape (3,)
        Velocity at the reference epoch.
    dt : `~astropy.units.Quantity` ['time'], scalar or shape (n,)
        Offsets from the reference epoch (negative for the past).
    mu : `~astropy.units.Quantity`
        Gravitational parameter G M, in units such as km3 / s2.

    Returns
    -------
    position, velocity : `~astropy.units.Quantity`, shape (3, n)
        States at the requested offsets, in the units of the inputs.

    Raises
    ------
    ValueError
        If the state has zero angular momentum or ``mu`` is not positive.

    Notes
    -----
    Universal-variable Kepler equation with Stumpff functions and Lagrange coefficients
    (Battin 1999, Sect. 4.5; Curtis 2014, Algorithms 3.3-3.4), solved by bracketed Laguerre
    iterations (Conway 1986); valid for ellipses, the parabola and hyperbolas alike.

    Examples
    --------
    A hyperbolic Earth flyby (Curtis 2014, Example 3.5: perigee 6678 km, 15 km/s):

    >>> import numpy as np
    >>> from astropy import units as u
    >>> r, v = propagate_two_body([6678.0, 0, 0] * u.km, [0, 15.0, 0] * u.km / u.s,
    ...                           [0, 1] * u.h, mu=398600 * u.km**3 / u.s**2)
    >>> np.round(np.linalg.norm(r.to_value(u.km), axis=0))
    array([ 6678., 42608.])
    """
    length = position.unit if isinstance(position, u.Quantity) else u.km
    speed = velocity.unit if isinstance(velocity, u.Quantity) else u.km / u.s
    r0 = as_value(position, length, "position")
    v0 = as_value(velocity, speed, "velocity")
    if np.shape(r0) != (3,) or np.shape(v0) != (3,):
        msg = (f"'position' and 'velocity' must be 3-vectors, got shapes {np.shape(r0)} and "
               f"{np.shape(v0)}")
        raise ValueError(msg)
    time_unit = length / speed
    t = np.atleast_1d(as_value(dt, time_unit, "dt"))
    gm = as_positive_value(mu, length**3 / time_unit**2, "mu")
    r, v = _kepler.universal_propagate(r0, v0, t, gm)
    return r * length, v * speed


def eccentric_anomaly(mean_anomaly, e):
    """Solve Kepler's equation M = E - e sin E for an elliptic orbit.

    Parameters
    ----------
    mean_anomaly : `~astropy.units.Quantity` ['angle']
        Mean anomaly, any range.
    e : float
        Eccentricity, 0 <= e < 1.

    Returns
    -------
    E : `~astropy.units.Quantity` ['angle']
        Eccentric anomaly in radians, in the same turn as ``mean_anomaly``.

    Notes
    -----
    Kepler (1609); solved by Newton iterations (Danby 1988, Sect. 6.6).

    Examples
    --------
    >>> from astropy import units as u
    >>> round(float(eccentric_anomaly(27 * u.deg, 0.5).to_value(u.deg)), 4)
    48.4342
    """
    m = as_value(mean_anomaly, u.rad, "mean_anomaly")
    ecc = float(e)
    if not 0.0 <= ecc < 1.0:
        msg = f"'e' must satisfy 0 <= e < 1 for an ellipse, got {e}"
        raise ValueError(msg)
    return _kepler.mean_to_eccentric(m, ecc) * u.rad


def hyperbolic_anomaly(mean_anomaly, e):
    """Solve the hyperbolic Kepler equation M = e sinh H - H.

    Parameters
    ----------
    mean_anomaly : `~astropy.units.Quantity` ['angle']
        Hyperbolic mean anomaly.
    e : float
        Eccentricity, e > 1.

    Returns
    -------
    H : `~astropy.units.Quantity` ['angle']
        Hyperbolic anomaly in radians.

    Notes
    -----
    Vallado (2013), Eq. 2-81 and Algorithm 4, solved by Newton iterations from above the root.

    Examples
    --------
    >>> from astropy import units as u
    >>> round(float(hyperbolic_anomaly(235.4 * u.deg, 2.4).to_value(u.rad)), 4)
    1.6014
    """
    m = as_value(mean_anomaly, u.rad, "mean_anomaly")
    ecc = float(e)
    if not ecc > 1.0:
        msg = f"'e' must be > 1 for a hyperbola, got {e}"
        raise ValueError(msg)
    return _kepler.mean_to_hyperbolic(m, ecc) * u.rad
