"""From the configuration to the geometry stage's objects: orbit, site, ephemeris table.

The geometry stage never reads the configuration; these readers do, once, and name the file,
the section and the key of any problem.
"""

from pathlib import Path

from astropy import units as u
from astropy.table import Table
from astropy.time import Time

from ._errors import ConfigError
from .settings import read_geometry, section_values

__all__ = [
    "orbit_from_config", "location_for_night", "location_for_site", "read_ephemeris_table",
    "geometry_for_times", "geometry_at_location", "GEOCENTRE",
]

#: The ``--site`` value (and site name) that means "no site: the Earth's centre".
GEOCENTRE = "geocentre"

_PERIHELION_KEYS = ("q_au", "e", "i_deg", "node_deg", "peri_deg", "perihelion_time")
_MEAN_ANOMALY_KEYS = ("a_au", "e", "i_deg", "node_deg", "peri_deg", "mean_anomaly_deg", "epoch")
_SITE_KEYS = ("longitude_deg", "latitude_deg", "height_m")


def _file(config):
    return config.get("_file", "configuration")


def _tdb(config, key, value):
    try:
        return Time(value, scale="tdb")
    except ValueError as exc:
        msg = (f"{_file(config)}: [target.orbit] {key}: not a readable time (ISO, TDB), "
               f"got {value!r}")
        raise ConfigError(msg) from exc


def orbit_from_config(config):
    """Build the target's `~photpipe.geometry.Orbit` from ``[target.orbit]``.

    Raises
    ------
    ConfigError
        A missing section or key, a bad value, or elements that are not an orbit; the message
        names the file, the key and the value.
    """
    from photpipe.geometry import Orbit

    given = ((config.get("target") or {}).get("orbit")) or {}
    where = f"{_file(config)}: [target.orbit]"
    if not given:
        msg = (f"{where}: missing: give the elements ({', '.join(_PERIHELION_KEYS)}) or set "
               "[target] ephemeris_table")
        raise ConfigError(msg)
    v = section_values(config, "target.orbit")
    by_mean = "a_au" in given or "mean_anomaly_deg" in given
    if by_mean and ("q_au" in given or "perihelion_time" in given):
        msg = (f"{where}: mixes the two ways of giving an orbit: use either "
               f"{', '.join(_PERIHELION_KEYS)} or {', '.join(_MEAN_ANOMALY_KEYS)}")
        raise ConfigError(msg)
    keys = _MEAN_ANOMALY_KEYS if by_mean else _PERIHELION_KEYS
    missing = [k for k in keys if v[k] is None]
    if missing:
        msg = f"{where} {missing[0]}: missing (an orbit needs {', '.join(keys)})"
        raise ConfigError(msg)
    name = str(section_values(config, "target")["name"])
    angles = [v[k] * u.deg for k in ("i_deg", "node_deg", "peri_deg")]
    try:
        if by_mean:
            if v["e"] >= 1:
                msg = (f"{where} e: must be below 1 when the orbit is given by a_au and "
                       f"mean_anomaly_deg, got {v['e']} (give q_au and perihelion_time)")
                raise ConfigError(msg)
            return Orbit.from_mean_anomaly(v["a_au"] * u.au, v["e"], *angles,
                                           v["mean_anomaly_deg"] * u.deg,
                                           _tdb(config, "epoch", v["epoch"]), name=name)
        return Orbit(v["q_au"] * u.au, v["e"], *angles,
                     _tdb(config, "perihelion_time", v["perihelion_time"]), name=name)
    except (ValueError, TypeError) as exc:
        if isinstance(exc, ConfigError):
            raise
        msg = f"{where}: {exc}"
        raise ConfigError(msg) from exc


def location_for_site(config, name):
    """The `~astropy.coordinates.EarthLocation` of ``[sites.NAME]``, or None for the geocentre.

    Raises
    ------
    ConfigError
        Unknown site, missing key, or impossible coordinates (named with their value).
    """
    from photpipe.geometry import site_location

    if name is None or name == GEOCENTRE:
        return None
    sites = config.get("sites") or {}
    if name not in sites:
        msg = f"{_file(config)}: [sites.{name}]: missing; sites given: {sorted(sites)}"
        raise ConfigError(msg)
    label = f"[sites.{name}]"
    v = section_values(config, "sites", sites[name], label=label)
    missing = [k for k in _SITE_KEYS if v[k] is None]
    if missing:
        msg = f"{_file(config)}: {label} {missing[0]}: missing"
        raise ConfigError(msg)
    try:
        return site_location(v["longitude_deg"] * u.deg, v["latitude_deg"] * u.deg,
                             v["height_m"] * u.m, name=name)
    except ValueError as exc:
        msg = f"{_file(config)}: {label}: {exc}"
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
            msg = f"{_file(config)}: [[night]]: there is no entry {night + 1}"
            raise ConfigError(msg)
        night = nights[night]
    return location_for_site(config, night.get("site"))


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
    except Exception as exc:  # noqa: BLE001 - astropy's readers raise many kinds
        msg = f"{path}: cannot read the ephemeris table ({exc})"
        raise ConfigError(msg) from exc


def geometry_at_location(config, location, times):
    """Geometry at ``times`` for an explicit site (None: geocentre), orbit or table as set."""
    from photpipe.geometry import geometry_from_ephemeris_table, observing_geometry

    settings = read_geometry(config)
    table_path = section_values(config, "target")["ephemeris_table"]
    if table_path:
        table = read_ephemeris_table(table_path)
        try:
            return geometry_from_ephemeris_table(
                table, times, location=location, ephemeris=settings.ephemeris,
                caution_elongation=settings.caution_elongation, source=str(table_path))
        except ValueError as exc:
            raise ConfigError(str(exc)) from exc
    return observing_geometry(orbit_from_config(config), times, location=location,
                              ephemeris=settings.ephemeris,
                              caution_elongation=settings.caution_elongation)


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
