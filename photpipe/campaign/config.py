"""Reading a photpipe configuration file (TOML).

The campaign package reads the configuration, for ``photpipe run`` and for the commands;
stages get plain values. This module
parses the file, resolves relative paths against the file's folder, fills defaults for the
sections every run needs, and reports problems with the file name and the key.
"""

import glob
import math
import os
import tomllib
from pathlib import Path

__all__ = ["ConfigError", "load_config", "night_folders", "number_setting", "PATH_KEYS"]

#: Keys (section path, key) whose values are file paths, resolved against the config's folder.
PATH_KEYS = {
    ("campaign", "results"),
    ("campaign", "store"),
    ("target", "ephemeris_table"),
    ("photometry", "reference_stars"),
    ("photometry", "reference_store"),
    ("photometry", "phase_function_table"),
}

_DEFAULTS = {
    "campaign": {"name": "unnamed campaign", "results": "results"},
    "frames": {},
    "target": {},
    "geometry": {},
    "photometry": {},
    "nucleus": {},
    "rotation": {},
    "size": {},
    "activity": {},
    "run": {"workers": 1},
    "sites": {},
}


class ConfigError(ValueError):
    """A configuration file that cannot be used; the message names the file and the key."""


def number_setting(section, key, where, *, default=None, low=None, high=None):
    """Return ``section[key]`` (or ``default``) as a checked float; None when neither is set.

    Parameters
    ----------
    section : dict
        One section of a loaded configuration.
    key : str
        The key.
    where : str
        The file and section for the message, e.g. ``"demo.toml: [size]"``.
    default : float, optional
        The value when the key is absent.
    low, high : float, optional
        The value must be above ``low`` and at most ``high``.

    Raises
    ------
    ConfigError
        ``"<where> <key> must be a number / finite / positive / above L and at most H, got
        <value>"``; a TOML boolean or string is not a number.

    Examples
    --------
    >>> number_setting({"albedo": 0.04}, "albedo", "c.toml: [size]", low=0.0)
    0.04
    >>> number_setting({}, "albedo", "c.toml: [size]", low=0.0) is None
    True
    """
    value = section.get(key, default)
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        msg = f"{where} {key} must be a number, got {value!r}"
        raise ConfigError(msg)
    value = float(value)
    if not math.isfinite(value):
        msg = f"{where} {key} must be finite, got {value}"
        raise ConfigError(msg)
    if (low is not None and value <= low) or (high is not None and value > high):
        if low == 0 and high is None:
            bounds = "positive"
        else:
            bounds = " and ".join(([f"above {low}"] if low is not None else [])
                                  + ([f"at most {high}"] if high is not None else []))
        msg = f"{where} {key} must be {bounds}, got {value}"
        raise ConfigError(msg)
    return value


def load_config(path):
    """Read a TOML configuration and return it as a plain, path-resolved dict.

    Parameters
    ----------
    path : str or path-like
        The TOML file.

    Returns
    -------
    config : dict
        Sections as dicts. Relative paths in `PATH_KEYS` and in ``[[night]] path`` are made
        absolute against the config file's folder; ``config["_file"]`` is the config's own path
        and ``config["_text"]`` its text (stored with each run for provenance). When
        ``[campaign] store`` is absent it defaults to ``<results>/campaign.sqlite``.

    Raises
    ------
    ConfigError
        If the file is missing, is not valid TOML, or lacks ``[[night]]`` entries.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        msg = f"{path}: cannot read the configuration ({exc.strerror or exc})"
        raise ConfigError(msg) from exc
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = f"{path}: not valid TOML: {exc}"
        raise ConfigError(msg) from exc

    base = path.resolve().parent
    config = {key: dict(value) for key, value in _DEFAULTS.items()}
    for key, value in raw.items():
        if isinstance(value, dict) and isinstance(config.get(key), dict):
            config[key].update(value)
        else:
            config[key] = value

    for section, key in PATH_KEYS:
        node = config
        parts = section.split(".")
        for part in parts:
            node = node.get(part, {}) if isinstance(node, dict) else {}
        if isinstance(node, dict) and key in node and isinstance(node[key], str):
            node[key] = str((base / node[key]).resolve())
    config["campaign"]["results"] = str((base / config["campaign"]["results"]).resolve())
    config["campaign"].setdefault(
        "store", str(Path(config["campaign"]["results"]) / "campaign.sqlite"))

    nights = config.get("night", [])
    if isinstance(nights, dict):
        nights = [nights]
    if not nights:
        msg = f"{path}: no [[night]] entries: name at least one folder of frames"
        raise ConfigError(msg)
    for i, night in enumerate(nights):
        if "path" not in night:
            msg = f"{path}: [[night]] entry {i + 1} has no 'path'"
            raise ConfigError(msg)
        night["path"] = str(base / night["path"])
        site = night.get("site")
        if site is not None and site not in config["sites"]:
            msg = (f"{path}: [[night]] entry {i + 1} names site {site!r}, "
                   f"which is not among [sites.*]: {sorted(config['sites'])}")
            raise ConfigError(msg)
    config["night"] = nights
    config["_file"] = str(path.resolve())
    config["_text"] = text
    return config


def night_folders(night):
    """Return the sorted FITS files a ``[[night]]`` entry names.

    Parameters
    ----------
    night : dict
        One resolved ``[[night]]`` entry; ``path`` is a folder or a glob pattern.

    Returns
    -------
    files : list of str
        FITS files (``.fits``, ``.fit``, ``.fts``, optionally ``.fz``/``.gz``), sorted.

    Raises
    ------
    ConfigError
        If the folder does not exist or the pattern matches nothing.
    """
    pattern = night["path"]
    exts = (".fits", ".fit", ".fts", ".fits.fz", ".fits.gz", ".fz")
    if os.path.isdir(pattern):
        files = [os.path.join(pattern, f) for f in os.listdir(pattern)]
    else:
        files = glob.glob(pattern)
        if not files and not any(ch in pattern for ch in "*?["):
            msg = f"night folder {pattern!r} does not exist"
            raise ConfigError(msg)
    files = sorted(f for f in files if f.lower().endswith(exts) and os.path.isfile(f))
    if not files:
        msg = f"night {pattern!r} holds no FITS files"
        raise ConfigError(msg)
    return files
