"""Observing geometry of a comet from its orbit: r_h, Δ, phase, elongation, RA/Dec, rates."""

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe.geometry._columns import geometry_table
from photpipe.geometry._constants import C_AU_PER_DAY, ECLIPTIC_TO_ICRS
from photpipe.geometry._timescales import tdb_parts
from photpipe.geometry.caution import DEFAULT_CAUTION_ELONGATION, warn_if_near_sun
from photpipe.geometry.observer import observer_states
from photpipe.geometry.orbit import Orbit

__all__ = ["observing_geometry"]

_AU3_D2 = u.au**3 / u.day**2


def _as_times(times):
    if not isinstance(times, Time):
        msg = f"'times' must be an astropy Time, got {type(times).__name__}"
        raise TypeError(msg)
    times = times.reshape(-1) if times.isscalar else times
    if times.ndim != 1:
        msg = f"'times' must be one-dimensional, got shape {times.shape}"
        raise ValueError(msg)
    if not np.all(np.isfinite(times.jd1 + times.jd2)):
        msg = "'times' holds non-finite values"
        raise ValueError(msg)
    return times


def observing_geometry(orbit, times, *, location=None, ephemeris="builtin",
                       caution_elongation=DEFAULT_CAUTION_ELONGATION):
    """Per-epoch observing geometry of a body on a heliocentric orbit.

    Parameters
    ----------
    orbit : `~photpipe.geometry.Orbit`
        Heliocentric osculating orbit.
    times : `~astropy.time.Time`
        Observation times (e.g. mid-exposure, UTC); shape (n,) or scalar.
    location : `~astropy.coordinates.EarthLocation` or None, optional
        Observing site; None for the geocentre.
    ephemeris : {"builtin", "de421"}, optional
        Ephemeris of the Sun and the Earth: astropy's built-in series, or JPL DE421.
    caution_elongation : `~astropy.units.Quantity` ['angle'], optional
        Below this solar elongation rows are flagged ``near_sun`` and a
        `~photpipe._warnings.SolarElongationWarning` carries the Sun caution.

    Returns
    -------
    geometry : `~astropy.table.QTable`
        One row per time, columns ``time, r_h (AU), delta (AU), phase (deg), elong (deg),
        ra (deg), dec (deg), ra_rate (arcsec/h, includes cos δ), dec_rate (arcsec/h),
        pa_sun (deg), pa_neg_velocity (deg), true_anomaly (deg), r_h_dot (km/s),
        delta_dot (km/s), light_time (s), flags``. RA/Dec are astrometric (ICRS, light-time
        corrected, no aberration): directly comparable with catalogue star positions.

    Raises
    ------
    TypeError
        ``orbit`` not an `Orbit`, ``times`` not a `~astropy.time.Time`.
    ValueError
        Times outside the ephemeris range, or an unknown ephemeris.

    Notes
    -----
    Light time: τ solves τ = |x_sun(t - τ) + r(t - τ) - x_obs(t)| / c (Seidelmann 1992,
    Explanatory Supplement, Sect. 3.32). The orbit is solved once at t and once at t - τ₁; the
    remaining corrections (|Δτ| ~ τ v/c, under a second) are applied to first order with the
    comet's velocity, which leaves errors of order |a| Δτ² < 1e-14 AU. See
    `~photpipe.geometry._columns.geometry_table` for the columns' formulas.

    Examples
    --------
    >>> from astropy import units as u
    >>> from astropy.time import Time
    >>> orb = Orbit(1.31 * u.au, 2.85, 128.4 * u.deg, 47.2 * u.deg, 113.6 * u.deg,
    ...             Time("2026-11-20T09:30:00", scale="tdb"))
    >>> geo = observing_geometry(orb, Time("2026-12-01T06:00:00", scale="utc"))
    >>> round(float(geo["r_h"][0] / u.au), 3), round(float(geo["delta"][0] / u.au), 3)
    (1.339, 2.176)
    """
    if not isinstance(orbit, Orbit):
        msg = f"'orbit' must be a photpipe.geometry.Orbit, got {type(orbit).__name__}"
        raise TypeError(msg)
    times = _as_times(times)
    jd1, jd2 = tdb_parts(times)
    obs_p, obs_v, sun_p, sun_v = observer_states(jd1, jd2, location=location,
                                                 ephemeris=ephemeris)
    mu = orbit.mu.to_value(_AU3_D2)
    tp = orbit.perihelion_time
    days = (jd1 - tp.jd1) + (jd2 - tp.jd2)

    r, v, chi = orbit._state_days(days, frame="icrs", return_chi=True)
    tau = np.sqrt(np.sum((sun_p + r - obs_p) ** 2, axis=0)) / C_AU_PER_DAY
    rn = np.sqrt(np.sum(r * r, axis=0))
    # warm start: dχ/dt = √μ / r (Battin 1999, Eq. 4.79)
    r, v = orbit._state_days(days - tau, frame="icrs", chi_guess=chi - tau * np.sqrt(mu) / rn)
    r1, tau1 = r, tau
    for _ in range(2):
        tau = np.sqrt(np.sum((sun_p - sun_v * tau + r - obs_p) ** 2, axis=0)) / C_AU_PER_DAY
        r = r1 - v * (tau - tau1)

    p_hat = ECLIPTIC_TO_ICRS @ orbit._p_hat
    q_hat = ECLIPTIC_TO_ICRS @ orbit._q_hat
    nu = np.arctan2(q_hat @ r, p_hat @ r)

    table = geometry_table(times, obs_p, obs_v, sun_p, sun_v, r, v, mu=mu,
                           caution_limit=caution_elongation, true_anomaly=nu)
    table.meta["source"] = "orbit"
    table.meta["ephemeris"] = ephemeris
    table.meta["observer"] = "geocentre" if location is None else _describe(location)
    if orbit.name:
        table.meta["target"] = orbit.name
    warn_if_near_sun(table["elong"], limit=caution_elongation, stacklevel=2)
    return table


def _describe(location):
    lon, lat, h = location.lon.to_value(u.deg), location.lat.to_value(u.deg), location.height
    return f"site lon {lon:.5f} deg, lat {lat:.5f} deg, height {h.to_value(u.m):.0f} m"
