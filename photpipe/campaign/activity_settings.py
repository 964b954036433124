"""The ``[activity]`` section of a configuration, checked, for ``photpipe report``.

Keys (all optional): ``outburst_sigma`` (5.0), ``jump_sigma`` (3.0), ``quiet_sigma`` (2.0),
``max_false_alarm`` (0.01), ``fit_method`` ("scatter", "clip" or "robust"), ``aperture_km``
(default: the most measured aperture, ties nearest 10 000 km), ``afrho_column`` ("a0frho_cm" or
"afrho_cm"), ``night_gap_h`` (6.0), ``exclude_flags`` (["upper_limit", "saturated"]),
``perihelion_time`` (ISO, TDB; default ``[target.orbit] perihelion_time``). The Sun caution
limit is ``[geometry] caution_elongation_deg`` (20), read as the ephemeris command reads it.
"""

from astropy import units as u
from astropy.time import Time

from .config import ConfigError, number_setting
from .geometry_settings import caution_limit

__all__ = ["activity_settings"]

_FIT_METHODS = ("scatter", "clip", "robust")
_AFRHO_COLUMNS = ("a0frho_cm", "afrho_cm")
_DEFAULT_EXCLUDE = ("upper_limit", "saturated")


def _number(section, key, default, where, *, low=None, high=None):
    return number_setting(section, key, f"{where}: [activity]", default=default, low=low,
                          high=high)


def activity_settings(config):
    """Return the ``[activity]`` section as checked keyword values (see the module notes).

    Raises
    ------
    ConfigError
        Naming the file and the key, for a value of the wrong kind or out of range.
    """
    where = config.get("_file", "configuration")
    section = config.get("activity", {}) or {}
    method = section.get("fit_method", "scatter")
    if method not in _FIT_METHODS:
        msg = f"{where}: [activity] fit_method must be one of {list(_FIT_METHODS)}, got {method!r}"
        raise ConfigError(msg)
    column = section.get("afrho_column", "a0frho_cm")
    if column not in _AFRHO_COLUMNS:
        msg = (f"{where}: [activity] afrho_column must be one of {list(_AFRHO_COLUMNS)}, "
               f"got {column!r}")
        raise ConfigError(msg)
    flags = section.get("exclude_flags", list(_DEFAULT_EXCLUDE))
    if isinstance(flags, str) or not all(isinstance(f, str) for f in flags):
        msg = f"{where}: [activity] exclude_flags must be a list of flag words, got {flags!r}"
        raise ConfigError(msg)
    peri = section.get("perihelion_time")
    if peri is None:
        peri = ((config.get("target") or {}).get("orbit") or {}).get("perihelion_time")
        peri_source = "[target.orbit] perihelion_time"
    else:
        peri_source = "[activity] perihelion_time"
    perihelion = None
    if peri is not None:
        try:
            perihelion = Time(str(peri), scale="tdb")
        except ValueError as exc:
            msg = f"{where}: {peri_source} is not a date and time: {peri!r}"
            raise ConfigError(msg) from exc
    aperture = _number(section, "aperture_km", None, where, low=0.0)
    return {
        "sigma": _number(section, "outburst_sigma", 5.0, where, low=0.0),
        "jump_sigma": _number(section, "jump_sigma", 3.0, where, low=0.0),
        "quiet_sigma": _number(section, "quiet_sigma", 2.0, where, low=0.0),
        "max_false_alarm": _number(section, "max_false_alarm", 0.01, where, low=0.0, high=1.0),
        "method": method,
        "aperture": None if aperture is None else aperture * u.km,
        "column": column,
        "night_gap": _number(section, "night_gap_h", 6.0, where, low=0.0) * u.h,
        "exclude_flags": tuple(flags),
        "perihelion_time": perihelion,
        "perihelion_source": peri_source if perihelion is not None else None,
        "caution_elongation": caution_limit(config),
    }
