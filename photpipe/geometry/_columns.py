"""Turn barycentric state vectors into the geometry table every measuring stage reads.

Both sources of geometry (an orbit, or an ephemeris table the observer supplies) end here, so
their tables have the same columns, units and conventions.
"""

import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe.geometry import _kepler
from photpipe.geometry._constants import (
    AU_PER_DAY_TO_KM_S,
    C_AU_PER_DAY,
    DAY_S,
    RAD_PER_DAY_TO_ARCSEC_PER_HOUR,
)
from photpipe.geometry.caution import near_sun

__all__ = ["GEOMETRY_COLUMNS", "FILE_NAMES", "for_file", "from_file", "geometry_table",
           "angle_between"]

#: Column name -> unit of the geometry table (DEVELOPERS.md, "Geometry").
GEOMETRY_COLUMNS = {
    "time": None,
    "r_h": u.au,
    "delta": u.au,
    "phase": u.deg,
    "elong": u.deg,
    "ra": u.deg,
    "dec": u.deg,
    "ra_rate": u.arcsec / u.hour,
    "dec_rate": u.arcsec / u.hour,
    "pa_sun": u.deg,
    "pa_neg_velocity": u.deg,
    "true_anomaly": u.deg,
    "r_h_dot": u.km / u.s,
    "delta_dot": u.km / u.s,
    "light_time": u.s,
    "flags": None,
}


#: Geometry column -> its name in files: the unit at the end, as in every result table
#: (``measurements.ecsv`` has ``r_h_au``, ``delta_au``, ``ra_deg``; the README, "Column names").
FILE_NAMES = {
    "r_h": "r_h_au", "delta": "delta_au", "phase": "phase_deg", "elong": "elong_deg",
    "ra": "ra_deg", "dec": "dec_deg", "ra_rate": "ra_rate_arcsec_h",
    "dec_rate": "dec_rate_arcsec_h", "pa_sun": "pa_sun_deg",
    "pa_neg_velocity": "pa_neg_velocity_deg", "true_anomaly": "true_anomaly_deg",
    "r_h_dot": "r_h_dot_km_s", "delta_dot": "delta_dot_km_s", "light_time": "light_time_s",
    "alt": "alt_deg", "sun_alt": "sun_alt_deg", "mag_pred": "pred_total_mag",
    "mag_pred_err": "pred_total_err_mag",
}


def for_file(table):
    """A copy of a geometry table with its columns named as in files (`FILE_NAMES`).

    Examples
    --------
    >>> from astropy.table import QTable
    >>> for_file(QTable({"r_h": [1.3] * u.au})).colnames
    ['r_h_au']
    """
    out = table.copy(copy_data=False)
    for name, file_name in FILE_NAMES.items():
        if name in out.colnames:
            out.rename_column(name, file_name)
    return out


def from_file(table):
    """A table read from a file with its geometry columns given their in-memory names.

    Both spellings are accepted: ``r_h_au`` (as photpipe writes) and ``r_h``.

    Examples
    --------
    >>> from astropy.table import QTable
    >>> from_file(QTable({"r_h_au": [1.3] * u.au, "delta": [2.0] * u.au})).colnames
    ['r_h', 'delta']
    """
    out = table.copy(copy_data=False)
    for name, file_name in FILE_NAMES.items():
        if file_name in out.colnames and name not in out.colnames:
            out.rename_column(file_name, name)
    return out


def angle_between(a, b):
    """Angle (radians) between vectors of shape (3, n), as atan2(|a × b|, a·b) (no round-off)."""
    cross = np.stack([a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2],
                      a[0] * b[1] - a[1] * b[0]])
    return np.arctan2(np.sqrt(np.sum(cross * cross, axis=0)), np.sum(a * b, axis=0))


def geometry_table(times, obs_p, obs_v, sun_p, sun_v, comet_r, comet_v, *, mu,
                   caution_limit, true_anomaly=None):
    """Assemble the geometry QTable from states at the observation and the emission times.

    Parameters
    ----------
    times : `~astropy.time.Time`, shape (n,)
        Observation times (kept as given in the ``time`` column).
    obs_p, obs_v : ndarray, shape (3, n)
        Barycentric observer state at the observation times (AU, AU/day, ICRS axes).
    sun_p, sun_v : ndarray, shape (3, n)
        Barycentric Sun state at the observation times.
    comet_r, comet_v : ndarray, shape (3, n)
        Heliocentric comet state at the emission (light-time corrected) times, ICRS axes.
    mu : float
        G M of the Sun in AU³/day².
    caution_limit : `~astropy.units.Quantity` ['angle']
        Elongation below which the row is flagged ``near_sun``.
    true_anomaly : ndarray, optional
        True anomaly in radians; computed from the comet state when not given.

    Returns
    -------
    table : `~astropy.table.QTable`

    Notes
    -----
    With τ the light time, the comet's barycentric emission position is
    x_c = x_sun(t - τ) + r(t - τ), the astrometric vector ρ = x_c - x_obs(t) and Δ = |ρ|
    (astrometric place: no aberration or light deflection, as for catalogue star positions;
    Kaplan et al. 1989, AJ 97, 1197). Differentiating, with dτ/dt = Δ̇/c:
    Δ̇ = û·(V_c - v_obs) / (1 + û·V_c / c) and ρ̇ = V_c (1 - Δ̇/c) - v_obs. Sky-plane rates are
    ρ̇ projected on the east (-sin α, cos α, 0) and north (-sin δ cos α, -sin δ sin α, cos δ)
    unit vectors over Δ (so the RA rate includes cos δ). The phase angle is the Sun-target-
    observer angle; the elongation the Sun-observer-target angle. Position angles, east of
    north, are those of the projected vectors target→Sun (-r) and -v (heliocentric velocity).
    The Sun's motion during τ is taken as linear, x_sun(t - τ) ≈ x_sun(t) - v_sun τ (error
    below a metre).
    """
    n = obs_p.shape[1]
    # the Sun at the emission time: one light-time step is enough for its slow motion
    rho = sun_p + comet_r - obs_p
    lt_days = np.sqrt(np.sum(rho * rho, axis=0)) / C_AU_PER_DAY
    rho = (sun_p - sun_v * lt_days) + comet_r - obs_p
    delta = np.sqrt(np.sum(rho * rho, axis=0))
    lt_days = delta / C_AU_PER_DAY
    uhat = rho / delta

    ra = np.arctan2(uhat[1], uhat[0]) % (2.0 * np.pi)
    dec = np.arctan2(uhat[2], np.hypot(uhat[0], uhat[1]))
    sa, ca = np.sin(ra), np.cos(ra)
    sd, cd = np.sin(dec), np.cos(dec)
    east = np.stack([-sa, ca, np.zeros(n)])
    north = np.stack([-sd * ca, -sd * sa, cd])

    comet_bary_v = sun_v + comet_v
    ucv = np.sum(uhat * comet_bary_v, axis=0)
    delta_dot = (ucv - np.sum(uhat * obs_v, axis=0)) / (1.0 + ucv / C_AU_PER_DAY)
    rho_dot = comet_bary_v * (1.0 - delta_dot / C_AU_PER_DAY) - obs_v
    ra_rate = np.sum(rho_dot * east, axis=0) / delta
    dec_rate = np.sum(rho_dot * north, axis=0) / delta

    r_h = np.sqrt(np.sum(comet_r * comet_r, axis=0))
    r_h_dot = np.sum(comet_r * comet_v, axis=0) / r_h
    phase = angle_between(-comet_r, -rho)
    elong = angle_between(sun_p - obs_p, rho)
    pa_sun = np.arctan2(np.sum(-comet_r * east, axis=0), np.sum(-comet_r * north, axis=0))
    pa_vel = np.arctan2(np.sum(-comet_v * east, axis=0), np.sum(-comet_v * north, axis=0))
    if true_anomaly is None:
        true_anomaly = _kepler.true_anomaly_from_state(comet_r, comet_v, mu)

    elong_deg = np.rad2deg(elong)
    close = near_sun(elong_deg * u.deg, limit=caution_limit)
    flags = np.where(close, "near_sun", "")

    return QTable({
        "time": times,
        "r_h": r_h * u.au,
        "delta": delta * u.au,
        "phase": np.rad2deg(phase) * u.deg,
        "elong": elong_deg * u.deg,
        "ra": np.rad2deg(ra) * u.deg,
        "dec": np.rad2deg(dec) * u.deg,
        "ra_rate": ra_rate * RAD_PER_DAY_TO_ARCSEC_PER_HOUR * (u.arcsec / u.hour),
        "dec_rate": dec_rate * RAD_PER_DAY_TO_ARCSEC_PER_HOUR * (u.arcsec / u.hour),
        "pa_sun": np.rad2deg(pa_sun) % 360.0 * u.deg,
        "pa_neg_velocity": np.rad2deg(pa_vel) % 360.0 * u.deg,
        "true_anomaly": np.rad2deg(true_anomaly) * u.deg,
        "r_h_dot": r_h_dot * AU_PER_DAY_TO_KM_S * (u.km / u.s),
        "delta_dot": delta_dot * AU_PER_DAY_TO_KM_S * (u.km / u.s),
        "light_time": lt_days * DAY_S * u.s,
        "flags": flags.astype(str),
    })
