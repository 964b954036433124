"""From the configuration dict to the geometry stage's objects: orbit, site, ephemeris table.

The geometry stage never reads the configuration; this module does, once, and reports problems
with the configuration file's name and the offending key.
"""

import datetime as _dt
from pathlib import Path

from astropy import units as u
from astropy.table import Table
from astropy.time import Time

from photpipe.geometry import (
    DEFAULT_CAUTION_ELONGATION,
    EPHEMERIDES,
    Orbit,
    geometry_from_ephemeris_table,
    observing_geometry,
    site_location,
)

from .config import ConfigError, number_setting

__all__ = [
    "orbit_from_config", "location_for_night", "location_for_site", "ephemeris_name",
    "caution_limit", "read_ephemeris_table", "geometry_for_times", "geometry_at_location",
    "GEOCENTRE",
]

#: The ``--site`` value (and site name) that means "no site: the Earth's centre".
GEOCENTRE = "geocentre"

_PERIHELION_KEYS = ("q_au", "e", "i_deg", "node_deg", "peri_deg", "perihelion_time")
_MEAN_ANOMALY_KEYS = ("a_au", "e", "i_deg", "node_deg", "peri_deg", "mean_anomaly_deg", "epoch")
_SITE_KEYS = ("longitude_deg", "latitude_deg", "height_m")


def _file(config):
    return config.get("_file", "configuration")


def _number(section, key, where, config):
    return number_setting(section, key, f"{_file(config)}: {where}")


def _tdb_time(section, key, where, config):
    value = section[key]
    try:
        if isinstance(value, _dt.datetime):
            value = value.replace(tzinfo=None)
        elif not isinstance(value, str):
            raise ValueError(f"expected an ISO date-time string, got {value!r}")
        return Time(value, scale="tdb")
    except ValueError as exc:
        msg = f"{_file(config)}: {where} {key} is not a readable time (ISO, TDB): {exc}"
        raise ConfigError(msg) from exc


def orbit_from_config(config):
    """Build the target's `~photpipe.geometry.Orbit` from ``[target.orbit]``.

    Parameters
    ----------
    config : dict
        A loaded configuration (`photpipe.campaign.config.load_config`).

    Returns
    -------
    orbit : `~photpipe.geometry.Orbit`

    Raises
    ------
    ConfigError
        A missing section or key, a non-numeric value, or elements that are not an orbit; the
        message names the file, the key and the value.
    """
    target = config.get("target", {})
    section = target.get("orbit")
    where = "[target.orbit]"
    if not isinstance(section, dict) or not section:
        msg = (f"{_file(config)}: no {where} section: give the elements "
               f"({', '.join(_PERIHELION_KEYS)}) or set [target] ephemeris_table")
        raise ConfigError(msg)
    by_perihelion = "q_au" in section or "perihelion_time" in section
    by_mean = "a_au" in section or "mean_anomaly_deg" in section
    if by_perihelion and by_mean:
        msg = (f"{_file(config)}: {where} mixes the two ways of giving an orbit: use either "
               f"{', '.join(_PERIHELION_KEYS)} or {', '.join(_MEAN_ANOMALY_KEYS)}")
        raise ConfigError(msg)
    keys = _MEAN_ANOMALY_KEYS if by_mean else _PERIHELION_KEYS
    missing = [k for k in keys if k not in section]
    if missing:
        msg = (f"{_file(config)}: {where} is missing {', '.join(missing)} "
               f"(an orbit needs {', '.join(keys)})")
        raise ConfigError(msg)
    e = _number(section, "e", where, config)
    if e < 0:
        msg = f"{_file(config)}: {where} e must be >= 0, got {e}"
        raise ConfigError(msg)
    inc = _number(section, "i_deg", where, config)
    if not 0.0 <= inc <= 180.0:
        msg = f"{_file(config)}: {where} i_deg must be within 0 and 180, got {inc}"
        raise ConfigError(msg)
    node = _number(section, "node_deg", where, config)
    peri = _number(section, "peri_deg", where, config)
    name = str(target.get("name", ""))
    try:
        if by_mean:
            a = _number(section, "a_au", where, config)
            if a <= 0:
                msg = f"{_file(config)}: {where} a_au must be > 0, got {a}"
                raise ConfigError(msg)
            if e >= 1:
                msg = (f"{_file(config)}: {where} e must be < 1 when the orbit is given by "
                       f"a_au and mean_anomaly_deg, got {e} (give q_au and perihelion_time)")
                raise ConfigError(msg)
            m = _number(section, "mean_anomaly_deg", where, config)
            epoch = _tdb_time(section, "epoch", where, config)
            return Orbit.from_mean_anomaly(a * u.au, e, inc * u.deg, node * u.deg,
                                           peri * u.deg, m * u.deg, epoch, name=name)
        q = _number(section, "q_au", where, config)
        if q <= 0:
            msg = f"{_file(config)}: {where} q_au must be > 0, got {q}"
            raise ConfigError(msg)
        tp = _tdb_time(section, "perihelion_time", where, config)
        return Orbit(q * u.au, e, inc * u.deg, node * u.deg, peri * u.deg, tp, name=name)
    except (ValueError, TypeError) as exc:
        if isinstance(exc, ConfigError):
            raise
        msg = f"{_file(config)}: {where}: {exc}"
        raise ConfigError(msg) from exc


def location_for_site(config, name):
    """The `~astropy.coordinates.EarthLocation` of ``[sites.NAME]``, or None for the geocentre.

    Raises
    ------
    ConfigError
        Unknown site, missing key, or impossible coordinates (named with their value).
    """
    if name is None or name == GEOCENTRE:
        return None
    sites = config.get("sites", {})
    if name not in sites:
        msg = f"{_file(config)}: no [sites.{name}] section; sites given: {sorted(sites)}"
        raise ConfigError(msg)
    section = sites[name]
    where = f"[sites.{name}]"
    missing = [k for k in _SITE_KEYS if k not in section]
    if missing:
        msg = f"{_file(config)}: {where} is missing {', '.join(missing)}"
        raise ConfigError(msg)
    lon, lat, height = (_number(section, k, where, config) for k in _SITE_KEYS)
    try:
        return site_location(lon * u.deg, lat * u.deg, height * u.m, name=name)
    except ValueError as exc:
        msg = f"{_file(config)}: {where}: {exc}"
        raise ConfigError(msg) from exc


def location_for_night(config, night):
    """The observing site of a ``[[night]]`` entry (a dict, or its index), None if it has none.

    Raises
    ------
    ConfigError
        The night names an unknown site, or the site's coordinates are impossible.
    """
    if night is None:
        return None
    if isinstance(night, int):
        nights = config.get("night", [])
        if not 0 <= night < len(nights):
            msg = f"{_file(config)}: there is no [[night]] entry {night + 1}"
            raise ConfigError(msg)
        night = nights[night]
    return location_for_site(config, night.get("site"))


def ephemeris_name(config):
    """``[geometry] ephemeris``, checked against the available ephemerides (default builtin)."""
    name = config.get("geometry", {}).get("ephemeris", "builtin")
    if name not in EPHEMERIDES:
        msg = (f"{_file(config)}: [geometry] ephemeris must be one of {sorted(EPHEMERIDES)}, "
               f"got {name!r}")
        raise ConfigError(msg)
    return name


def caution_limit(config):
    """``[geometry] caution_elongation_deg`` as a Quantity (default 20 deg)."""
    section = config.get("geometry", {})
    if "caution_elongation_deg" not in section:
        return DEFAULT_CAUTION_ELONGATION
    value = _number(section, "caution_elongation_deg", "[geometry]", config)
    if not 0.0 <= value <= 180.0:
        msg = (f"{_file(config)}: [geometry] caution_elongation_deg must be within 0 and 180, "
               f"got {value}")
        raise ConfigError(msg)
    return value * u.deg


def read_ephemeris_table(path):
    """Read an ephemeris table file (ECSV, or CSV with a header line).

    Raises
    ------
    ConfigError
        The file is missing or cannot be read as a table.
    """
    path = Path(path)
    if not path.is_file():
        msg = f"{path}: ephemeris table not found"
        raise ConfigError(msg)
    fmt = {".ecsv": "ascii.ecsv", ".csv": "ascii.csv"}.get(path.suffix.lower(), "ascii")
    try:
        return Table.read(path, format=fmt)
    except Exception as exc:  # astropy's readers raise many kinds for a broken file
        msg = f"{path}: cannot read the ephemeris table ({exc})"
        raise ConfigError(msg) from exc


def geometry_at_location(config, location, times):
    """Geometry at ``times`` for an explicit site (None: geocentre), orbit or table as set."""
    ephemeris = ephemeris_name(config)
    limit = caution_limit(config)
    table_path = config.get("target", {}).get("ephemeris_table")
    if table_path:
        table = read_ephemeris_table(table_path)
        try:
            return geometry_from_ephemeris_table(table, times, location=location,
                                                 ephemeris=ephemeris, caution_elongation=limit,
                                                 source=str(table_path))
        except ValueError as exc:
            raise ConfigError(str(exc)) from exc
    orbit = orbit_from_config(config)
    return observing_geometry(orbit, times, location=location, ephemeris=ephemeris,
                              caution_elongation=limit)


def geometry_for_times(config, night, times):
    """Per-frame geometry for a night's frames: orbit or ephemeris table, as configured.

    Parameters
    ----------
    config : dict
        A loaded configuration.
    night : dict or int or None
        The ``[[night]]`` entry (or its index) whose site is the observer; None: geocentre.
    times : `~astropy.time.Time`
        Frame mid-exposure times.

    Returns
    -------
    geometry : `~astropy.table.QTable`
        The columns of `photpipe.geometry.observing_geometry`.
    """
    return geometry_at_location(config, location_for_night(config, night), times)
