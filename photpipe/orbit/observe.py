"""Where the observer is and where the body appears: astrometric RA/Dec with light time."""

import numpy as np
from astropy import units as u
from astropy.coordinates import EarthLocation
from astropy.time import Time

from photpipe.geometry._constants import AU_KM, C_AU_PER_DAY
from photpipe.geometry._offline import offline_earth_orientation
from photpipe.geometry._timescales import tdb_parts
from photpipe.orbit._bodies import body_states

__all__ = ["observer_positions", "predict", "light_time_emission"]


def observer_positions(times, geocentric_km):
    """Barycentric observer positions (AU, ICRF axes) at observation times.

    Parameters
    ----------
    times : `~astropy.time.Time`, shape (n,)
        Observation times (any scale).
    geocentric_km : ndarray, shape (3, n)
        Each observer's geocentric ITRS position (km) from `site_vectors`, or NaN where the
        site's GCRS position is given directly (see ``gcrs_km``).

    Returns
    -------
    jd_tdb : ndarray, shape (n,)
        TDB Julian dates of the observations.
    position : ndarray, shape (3, n)
        Barycentric positions: DE421 geocentre plus the site's GCRS offset (astropy,
        IAU 2006/2000A precession-nutation and Earth rotation).
    """
    jd1, jd2 = tdb_parts(times)
    jd = jd1 + jd2
    earth, _ = body_states("earth", jd)
    xyz = np.asarray(geocentric_km, dtype=float)
    site = np.zeros((3, jd.size))
    ok = np.all(np.isfinite(xyz), axis=0) & np.any(xyz != 0.0, axis=0)
    if np.any(ok):
        loc = EarthLocation.from_geocentric(xyz[0, ok], xyz[1, ok], xyz[2, ok], unit=u.km)
        with offline_earth_orientation():
            t = Time(jd1[ok], jd2[ok], format="jd", scale="tdb")
            pos, _ = loc.get_gcrs_posvel(t)
        site[:, ok] = pos.xyz.to_value(u.km) / AU_KM
    return jd, earth + site


def light_time_emission(trajectory, jd_obs, obs_pos, *, iterations=3):
    """TDB date of emission and the body's state then, for light received at ``jd_obs``.

    Notes
    -----
    Fixed-point iteration τ = |r(t - τ) - R(t)| / c (Newtonian light time; the Sun's
    Shapiro delay, below 1e-4 s of light time here, is left out).
    """
    jd_e = np.array(jd_obs, dtype=float)
    for _ in range(iterations):
        y, _ = trajectory.states(jd_e)
        rho = y[:3] - obs_pos
        jd_e = jd_obs - np.sqrt(np.sum(rho * rho, axis=0)) / C_AU_PER_DAY
    y, phi = trajectory.states(jd_e)
    return jd_e, y, phi


def predict(trajectory, jd_obs, obs_pos, *, partials=True):
    """Astrometric RA/Dec (ICRS, light-time corrected, no aberration) and their partials.

    Parameters
    ----------
    trajectory : `~photpipe.orbit.propagate.Trajectory`
    jd_obs : ndarray, shape (n,)
        TDB Julian dates of the observations.
    obs_pos : ndarray, shape (3, n)
        Barycentric observer positions (AU).
    partials : bool, optional

    Returns
    -------
    ra, dec : ndarray, shape (n,)
        Radians.
    design : ndarray, shape (n, 2, n_par) or None
        ∂(α cos δ, δ)/∂(parameters), radians per parameter unit.
    delta : ndarray, shape (n,)
        Observer-body distance (AU).

    Notes
    -----
    An astrometric position is the direction from the observer to the body's light-time
    retarded position, the frame of star catalogues (Kaplan 2005, USNO Circular 179,
    Sect. 7; Urban & Seidelmann 2013, Sect. 7.2). The partials hold the observer fixed and
    leave out the light-time derivative (common practice; its share is ~v/c ≈ 1e-4).
    """
    _, y, phi = light_time_emission(trajectory, jd_obs, obs_pos)
    rho = y[:3] - obs_pos
    dist = np.sqrt(np.sum(rho * rho, axis=0))
    ra = np.mod(np.arctan2(rho[1], rho[0]), 2.0 * np.pi)
    dec = np.arcsin(rho[2] / dist)
    design = None
    if partials and phi is not None:
        sa, ca, sd, cd = np.sin(ra), np.cos(ra), np.sin(dec), np.cos(dec)
        zeros = np.zeros_like(ra)
        d_ra = np.stack([-sa, ca, zeros], axis=1) / dist[:, None]           # α cos δ
        d_dec = np.stack([-sd * ca, -sd * sa, cd], axis=1) / dist[:, None]
        both = np.stack([d_ra, d_dec], axis=1)                              # (n, 2, 3)
        design = np.einsum("nij,njk->nik", both, phi[:, 0:3, :])
    return ra, dec, design, dist
