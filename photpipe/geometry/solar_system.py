"""Barycentric states of the Sun and the Earth from a choice of ephemerides."""

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe.geometry._ephem_builtin import BUILTIN_RANGE_JD, earth_sun_builtin
from photpipe.geometry._ephem_de421 import de421_range_jd, earth_sun_de421
from photpipe.geometry._sampling import sampled_states

__all__ = ["EPHEMERIDES", "sun_and_earth", "earth_sun_states"]

#: Ephemeris name -> (function(jd1, jd2) -> earth_p, earth_v, sun_p, sun_v; range function;
#: label). All in AU and AU/day, ICRS axes, barycentric, at TDB Julian dates.
EPHEMERIDES = {
    "builtin": (earth_sun_builtin, lambda: BUILTIN_RANGE_JD, "astropy built-in (ERFA epv00)"),
    "de421": (earth_sun_de421, de421_range_jd, "JPL DE421"),
}

#: Grid step (days) for many epochs. The Hermite error bound Δ⁴ω⁴A/384 is ~1e-13 AU for the
#: annual orbit and the monthly Earth-Moon wobble (A = 3.1e-5 AU, ω = 2π/27.3 d) at Δ = 0.25 d.
_STEP_DAYS = 0.25


def _check_name(ephemeris):
    if ephemeris not in EPHEMERIDES:
        msg = f"'ephemeris' must be one of {sorted(EPHEMERIDES)}, got {ephemeris!r}"
        raise ValueError(msg)
    return EPHEMERIDES[ephemeris]


def earth_sun_states(jd1, jd2, *, ephemeris="builtin"):
    """Barycentric Earth and Sun states as plain floats (AU, AU/day) at TDB dates.

    Parameters
    ----------
    jd1, jd2 : ndarray, shape (n,)
        Two-part TDB Julian dates.
    ephemeris : {"builtin", "de421"}
        Which ephemeris.

    Returns
    -------
    earth_p, earth_v, sun_p, sun_v : ndarray, shape (3, n)

    Raises
    ------
    ValueError
        Unknown ephemeris, or times outside its range (the message gives the first such time).
    """
    func, span, label = _check_name(ephemeris)
    jd1 = np.atleast_1d(np.asarray(jd1, dtype=float))
    jd2 = np.atleast_1d(np.asarray(jd2, dtype=float))
    jd = jd1 + jd2
    lo, hi = span()
    outside = (jd < lo + 1.0) | (jd > hi - 1.0)
    if np.any(outside):
        first = Time(jd[outside][0], format="jd", scale="tdb").isot
        msg = (f"time {first} TDB is outside the {label} ephemeris range "
               f"{Time(lo, format='jd', scale='tdb').isot[:10]} to "
               f"{Time(hi, format='jd', scale='tdb').isot[:10]}")
        raise ValueError(msg)

    return sampled_states(func, jd1, jd2, step=_STEP_DAYS)


def sun_and_earth(times, *, ephemeris="builtin"):
    """Barycentric positions and velocities of the Sun and the Earth (ICRS axes).

    Parameters
    ----------
    times : `~astropy.time.Time`
        Epochs, any scale.
    ephemeris : {"builtin", "de421"}, optional
        astropy's built-in series, or JPL DE421 from the ``de421`` package.

    Returns
    -------
    states : dict
        ``earth_position``, ``sun_position`` (AU) and ``earth_velocity``, ``sun_velocity``
        (AU/day), each of shape (3, n).

    Examples
    --------
    >>> from astropy.time import Time
    >>> s = sun_and_earth(Time("2026-01-03T17:00", scale="tdb"))
    >>> d = s["earth_position"] - s["sun_position"]
    >>> round(float((d**2).sum() ** 0.5 / d.unit), 4)
    0.9833
    """
    if not isinstance(times, Time):
        msg = f"'times' must be an astropy Time, got {type(times).__name__}"
        raise TypeError(msg)
    t = times.tdb
    ep, ev, sp, sv = earth_sun_states(np.atleast_1d(t.jd1), np.atleast_1d(t.jd2),
                                      ephemeris=ephemeris)
    return {"earth_position": ep * u.au, "earth_velocity": ev * u.au / u.day,
            "sun_position": sp * u.au, "sun_velocity": sv * u.au / u.day}
