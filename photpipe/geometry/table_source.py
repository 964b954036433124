"""Observing geometry from an ephemeris table the observer already has, at frame times."""

import warnings
from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.table import Table
from astropy.time import Time
from scipy.interpolate import CubicSpline

from photpipe._warnings import PoorResultWarning
from photpipe.geometry._columns import from_file, geometry_table
from photpipe.geometry._constants import C_AU_PER_DAY, GM_SUN_AU3_D2
from photpipe.geometry._timescales import tdb_parts
from photpipe.geometry.caution import DEFAULT_CAUTION_ELONGATION, warn_if_near_sun
from photpipe.geometry.observer import observer_states
from photpipe.geometry.observing import _as_times, _describe

__all__ = ["REQUIRED_TABLE_COLUMNS", "geometry_from_ephemeris_table"]

#: Columns an ephemeris table must have, with the unit assumed when a column has none.
REQUIRED_TABLE_COLUMNS = {"time": None, "ra": u.deg, "dec": u.deg, "r_h": u.au,
                          "delta": u.au, "phase": u.deg}

# Disagreement between the table's own r_h / phase and those rebuilt from its RA, Dec, Δ above
# which the table is suspected to be for another observer or target (common practice: a
# geocentric table used for a site differs by < 1e-4 AU in r_h and < 0.01 deg in phase).
_RH_TOL_AU = 1e-4
_PHASE_TOL_DEG = 0.05


def _column(table, name, unit, source):
    col = table[name]
    if unit is None:
        return col
    if isinstance(col, u.Quantity) or getattr(col, "unit", None) is not None:
        q = u.Quantity(col)
        try:
            values = q.to_value(unit)
        except u.UnitConversionError as exc:
            msg = f"{source}: column {name!r} has unit {q.unit}, which is not a {unit}"
            raise ValueError(msg) from exc
    else:
        try:
            values = np.asarray(col, dtype=float)
        except (TypeError, ValueError) as exc:
            msg = f"{source}: column {name!r} is not numeric"
            raise ValueError(msg) from exc
    values = np.asarray(values, dtype=float)
    if not np.all(np.isfinite(values)):
        row = int(np.flatnonzero(~np.isfinite(values))[0])
        msg = f"{source}: column {name!r} has a missing or non-finite value in row {row + 1}"
        raise ValueError(msg)
    return values


def _table_times(col, source):
    if isinstance(col, Time):
        return col
    values = np.asarray(col)
    try:
        if values.dtype.kind in "fiu":
            fmt = "jd" if np.nanmin(values) > 2_000_000 else "mjd"
            return Time(values.astype(float), format=fmt, scale="utc")
        return Time([str(v) for v in values], scale="utc")
    except ValueError as exc:
        msg = f"{source}: column 'time' cannot be read as times (ISO, JD or MJD): {exc}"
        raise ValueError(msg) from exc


def geometry_from_ephemeris_table(table, times, *, location=None, ephemeris="builtin",
                                  caution_elongation=DEFAULT_CAUTION_ELONGATION,
                                  source="ephemeris table", mu=GM_SUN_AU3_D2):
    """Interpolate an ephemeris table to frame times, giving the same columns as an orbit.

    Parameters
    ----------
    table : `~astropy.table.Table`
        At least the columns ``time, ra, dec, r_h, delta, phase`` (see
        `REQUIRED_TABLE_COLUMNS`), computed for the same observer as ``location``. ``time`` may
        be a Time column (its scale is kept), ISO strings, JD or MJD numbers (then taken as
        UTC); columns without units are taken in deg and AU. Rows in increasing time.
    times : `~astropy.time.Time`
        Frame times, within the table's span.
    location : `~astropy.coordinates.EarthLocation` or None, optional
        The site the table was computed for; None for the geocentre.
    ephemeris : {"builtin", "de421"}, optional
        Ephemeris of the Sun and Earth used to rebuild the columns the table may lack.
    caution_elongation : `~astropy.units.Quantity` ['angle'], optional
        Limit for the Sun caution (as in `~photpipe.geometry.observing_geometry`).
    source : str, optional
        The table's name (file), used in messages.
    mu : float, optional
        G M of the Sun in AU³/day², for the true anomaly.

    Returns
    -------
    geometry : `~astropy.table.QTable`
        The columns of `~photpipe.geometry.observing_geometry`. ``ra, dec, delta, r_h,
        phase`` are the table's own values, interpolated; the others are computed from the
        comet's heliocentric positions rebuilt from the table's RA, Dec and Δ.

    Raises
    ------
    ValueError
        A missing or non-numeric column, unsorted times, or frame times outside the table.

    Warns
    -----
    PoorResultWarning
        The table's r_h or phase disagree with the rebuilt positions (another observer or
        ephemeris?); such rows carry the flag ``table_mismatch``.

    Notes
    -----
    RA (unwrapped), Dec, Δ, r_h and phase are interpolated with not-a-knot cubic splines in
    TDB (de Boor 1978). At each table row the comet's heliocentric emission position is
    r = x_obs(t) + Δ û(α, δ) - x_sun(t - Δ/c); the derivative of its spline, divided by
    1 - Δ̇/c, is the heliocentric velocity, from which the rates, position angles, r_h rate
    and true anomaly follow exactly as for an orbit.
    """
    table = _checked_table(table, source)
    times = _as_times(times)
    ttab = _table_times(table["time"], source)
    vals = {name: _column(table, name, unit, source)
            for name, unit in REQUIRED_TABLE_COLUMNS.items() if unit is not None}
    axis = _time_axis(ttab, times, source)
    sky, comet_r, comet_v, states = _interpolate(vals, axis, location, ephemeris)
    out = geometry_table(times, *states, comet_r, comet_v, mu=mu,
                         caution_limit=caution_elongation)
    r_h_rebuilt = out["r_h"].to_value(u.au)
    phase_rebuilt = out["phase"].to_value(u.deg)
    out["ra"] = sky["ra"] * u.deg
    out["dec"] = sky["dec"] * u.deg
    out["delta"] = sky["delta"] * u.au
    out["r_h"] = sky["r_h"] * u.au
    out["phase"] = sky["phase"] * u.deg
    out["light_time"] = (sky["delta"] / C_AU_PER_DAY * 86400.0) * u.s
    _flag_mismatch(out, r_h_rebuilt, phase_rebuilt, times, source)
    out.meta["source"] = source
    out.meta["ephemeris"] = ephemeris
    out.meta["observer"] = "geocentre" if location is None else _describe(location)
    warn_if_near_sun(out["elong"], limit=caution_elongation, stacklevel=2)
    return out


def _checked_table(table, source):
    """The table with photpipe's own column names read, checked for columns and rows."""
    if not isinstance(table, Table):
        msg = f"{source}: expected an astropy Table, got {type(table).__name__}"
        raise TypeError(msg)
    table = from_file(table)  # photpipe's own files name the columns r_h_au, ra_deg, ...
    missing = [c for c in REQUIRED_TABLE_COLUMNS if c not in table.colnames]
    if missing:
        msg = (f"{source}: missing column(s) {', '.join(missing)}; an ephemeris table needs "
               f"{', '.join(REQUIRED_TABLE_COLUMNS)}")
        raise ValueError(msg)
    if len(table) < 2:
        msg = f"{source}: needs at least 2 rows to interpolate, has {len(table)}"
        raise ValueError(msg)
    return table


@dataclass(frozen=True)
class _TimeAxis:
    """The table's and the frames' times as TDB Julian-date parts and days from the first row."""

    table_jd: tuple
    frame_jd: tuple
    x_tab: np.ndarray
    x: np.ndarray


def _time_axis(ttab, times, source):
    """Check the table's times increase and hold the frames' times; return the time axis."""
    tj1, tj2 = tdb_parts(ttab)
    fj1, fj2 = tdb_parts(times)
    base = tj1[0]
    x_tab = (tj1 - base) + tj2
    x = (fj1 - base) + fj2
    if np.any(np.diff(x_tab) <= 0):
        row = int(np.flatnonzero(np.diff(x_tab) <= 0)[0]) + 2
        msg = f"{source}: times must increase strictly; row {row} does not"
        raise ValueError(msg)
    slack = 1e-6 / 86400.0
    outside = (x < x_tab[0] - slack) | (x > x_tab[-1] + slack)
    if np.any(outside):
        first = times[np.flatnonzero(outside)[0]]
        msg = (f"{source}: frame time {first.utc.isot} UTC is outside the table's span "
               f"{ttab[0].utc.isot} to {ttab[-1].utc.isot}")
        raise ValueError(msg)
    return _TimeAxis((tj1, tj2), (fj1, fj2), x_tab, x)


def _comet_positions(jd1, jd2, ra, dec, delta, location, ephemeris):
    """Heliocentric emission positions from RA, Dec and Δ, and the observer's and Sun's states."""
    obs_p, obs_v, sun_p, sun_v = observer_states(jd1, jd2, location=location,
                                                 ephemeris=ephemeris)
    a, d = np.deg2rad(ra), np.deg2rad(dec)
    uhat = np.stack([np.cos(d) * np.cos(a), np.cos(d) * np.sin(a), np.sin(d)])
    sun_ret = sun_p - sun_v * (delta / C_AU_PER_DAY)
    return obs_p + delta * uhat - sun_ret, (obs_p, obs_v, sun_p, sun_v)


def _interpolate(vals, axis, location, ephemeris):
    """The table's columns at the frames' times, and the comet's rebuilt position and velocity.

    Returns the interpolated ``ra, dec, delta, r_h, phase`` (plain deg and AU), the comet's
    heliocentric position and velocity (AU, AU/day) and the observer's and Sun's states.
    """
    x_tab, x = axis.x_tab, axis.x
    ra_unwrapped = np.rad2deg(np.unwrap(np.deg2rad(vals["ra"])))
    splines = {name: CubicSpline(x_tab, v) for name, v in
               (("ra", ra_unwrapped), ("dec", vals["dec"]), ("delta", vals["delta"]),
                ("r_h", vals["r_h"]), ("phase", vals["phase"]))}
    r_tab, _ = _comet_positions(*axis.table_jd, vals["ra"], vals["dec"], vals["delta"],
                                location, ephemeris)
    r_spline = CubicSpline(x_tab, r_tab, axis=1)

    ra = splines["ra"](x) % 360.0
    dec = splines["dec"](x)
    delta = splines["delta"](x)
    delta_dot = splines["delta"](x, 1)
    comet_r, states = _comet_positions(*axis.frame_jd, ra, dec, delta, location, ephemeris)
    comet_v = r_spline(x, 1) / (1.0 - delta_dot / C_AU_PER_DAY)
    sky = {"ra": ra, "dec": dec, "delta": delta, "r_h": splines["r_h"](x),
           "phase": splines["phase"](x)}
    return sky, comet_r, comet_v, states


def _flag_mismatch(out, r_h_rebuilt, phase_rebuilt, times, source):
    """Flag ``table_mismatch`` where the table's r_h or phase disagree with its positions."""
    bad = (np.abs(r_h_rebuilt - out["r_h"].to_value(u.au)) > _RH_TOL_AU) | (
        np.abs(phase_rebuilt - out["phase"].to_value(u.deg)) > _PHASE_TOL_DEG)
    if not np.any(bad):
        return
    flags = [",".join(w for w in (f, "table_mismatch") if w) if b else f
             for f, b in zip(out["flags"], bad, strict=True)]
    out["flags"] = np.array(flags, dtype=str)
    i = int(np.flatnonzero(bad)[0])
    msg = (f"{source}: at {times[i].utc.isot} UTC the table gives r_h "
           f"{out['r_h'][i].to_value(u.au):.6f} AU and phase "
           f"{out['phase'][i].to_value(u.deg):.3f} deg, but its RA, Dec and delta place "
           f"the comet at r_h {r_h_rebuilt[i]:.6f} AU, phase {phase_rebuilt[i]:.3f} deg; "
           "was it computed for another observer or target? Rows flagged 'table_mismatch'.")
    warnings.warn(msg, PoorResultWarning, stacklevel=3)
