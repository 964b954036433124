"""Reading a photpipe configuration file (TOML): one rule for sections, keys, types and paths.

`load_config` parses the file, refuses an unknown section or key (naming the nearest known one),
checks every value against its `~photpipe.config._keys.Key`, resolves relative paths against the
file's folder and returns the configuration as a plain dict. The section readers in
`photpipe.config.settings` turn that dict into frozen settings objects.
"""

import glob
import os
import tomllib
from pathlib import Path

from ._errors import ConfigError
from ._keys import check_value, nearest
from ._sections import SECTIONS

__all__ = ["load_config", "check_config", "night_folders", "where", "FITS_ENDINGS"]

#: File endings of FITS frames, compressed or not, read by the ingest.
FITS_ENDINGS = (".fits", ".fit", ".fts", ".fits.fz", ".fit.fz", ".fts.fz", ".fits.gz",
                ".fit.gz", ".fts.gz", ".fz")

#: Top-level names: plain sections, and the parents of dotted ones (``target`` of ``target.orbit``).
_TOP = tuple(dict.fromkeys(name.split(".")[0] for name in SECTIONS))


def where(config, section):
    """``"<file>: [section]"``, the start of every message about that section."""
    brackets = f"[[{section}]]" if SECTIONS.get(section) and SECTIONS[section].array \
        else f"[{section}]"
    return f"{config.get('_file', 'configuration') if isinstance(config, dict) else config}: " \
           f"{brackets}"


def _unknown(file, label, name, known, what="key"):
    guess = nearest(name, known)
    hint = f"; did you mean {guess!r}?" if guess else f"; known: {', '.join(sorted(known))}"
    return ConfigError(f"{file}: {label}: unknown {what}{hint}")


def _check_table(file, name, table, label=None):
    """Check one table of section ``name`` (its keys and their values)."""
    spec = SECTIONS[name]
    label = label or f"[{name}]"
    if not isinstance(table, dict):
        msg = f"{file}: {label}: must be a table of keys, got {table!r}"
        raise ConfigError(msg)
    children = {n.split(".", 1)[1] for n in SECTIONS if n.startswith(f"{name}.")}
    for key, value in table.items():
        if key in children:
            _check_table(file, f"{name}.{key}", value)
        elif key in spec.key_names:
            check_value(spec.key(key), value, f"{file}: {label}")
        else:
            raise _unknown(file, f"{label} {key}", key, spec.key_names + tuple(children))


def check_config(raw, file):
    """Check a parsed configuration against `~photpipe.config._sections.SECTIONS`.

    Raises
    ------
    ConfigError
        An unknown section or key (with the nearest known name), or a value of the wrong kind or
        out of range: ``"<file>: [section] key: problem"``.
    """
    for name, value in raw.items():
        if name.startswith("_"):
            continue
        if name not in _TOP:
            raise _unknown(file, f"[{name}]", name, _TOP, "section")
        spec = SECTIONS[name]
        if spec.array:
            entries = [value] if isinstance(value, dict) else value
            if not isinstance(entries, list):
                msg = f"{file}: [[{name}]]: must be a list of tables, got {value!r}"
                raise ConfigError(msg)
            for i, entry in enumerate(entries):
                _check_table(file, name, entry, f"[[{name}]] entry {i + 1}")
        elif spec.named:
            if not isinstance(value, dict):
                msg = f"{file}: [{name}]: must hold [{name}.NAME] tables, got {value!r}"
                raise ConfigError(msg)
            for entry, table in value.items():
                _check_table(file, name, table, f"[{name}.{entry}]")
        else:
            _check_table(file, name, value)


def _resolve_paths(config, base):
    for name, spec in SECTIONS.items():
        if spec.array or spec.named or "." in name:
            continue
        section = config.get(name, {})
        for key in spec.keys:
            if key.kind == "path" and isinstance(section.get(key.name), str):
                section[key.name] = str((base / section[key.name]).resolve())


def _nights(config, file, base):
    nights = config.get("night", [])
    if isinstance(nights, dict):
        nights = [nights]
    if not nights:
        msg = f"{file}: no [[night]] entries: name at least one folder of frames"
        raise ConfigError(msg)
    for i, night in enumerate(nights):
        if "path" not in night:
            msg = f"{file}: [[night]] entry {i + 1} path: missing (a folder or glob of frames)"
            raise ConfigError(msg)
        night["path"] = str(base / night["path"])
        site = night.get("site")
        if site is not None and site not in config["sites"]:
            guess = nearest(site, config["sites"])
            hint = f"; did you mean {guess!r}?" if guess else ""
            msg = (f"{file}: [[night]] entry {i + 1} site: {site!r} is not among [sites.*]: "
                   f"{sorted(config['sites'])}{hint}")
            raise ConfigError(msg)
    return nights


def load_config(path):
    """Read and check a TOML configuration; return it as a plain, path-resolved dict.

    Parameters
    ----------
    path : str or path-like
        The TOML file.

    Returns
    -------
    config : dict
        Sections as dicts, as written (absent sections are empty dicts; defaults are filled by
        the section readers of `photpipe.config.settings`). Relative paths are made absolute
        against the file's folder; ``config["_file"]`` is the file's path and
        ``config["_text"]`` its text (stored with each run). ``[campaign] results`` and
        ``store`` are always set.

    Raises
    ------
    ConfigError
        The file is missing or not TOML, a section or key is unknown, a value is of the wrong
        kind or out of range, or there is no ``[[night]]``.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        msg = f"{path}: cannot read the configuration ({getattr(exc, 'strerror', None) or exc})"
        raise ConfigError(msg) from exc
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = f"{path}: not valid TOML: {exc}"
        raise ConfigError(msg) from exc
    check_config(raw, path)

    base = path.resolve().parent
    config = {name: {} for name in _TOP if not SECTIONS[name].array}
    config.update({k: v for k, v in raw.items()})
    campaign = config["campaign"]
    campaign.setdefault("results", SECTIONS["campaign"].key("results").default)
    _resolve_paths(config, base)
    campaign.setdefault("store", str(Path(campaign["results"]) / "campaign.sqlite"))
    config["night"] = _nights(config, path, base)
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
        Files ending in one of `FITS_ENDINGS` (any case), sorted.

    Raises
    ------
    ConfigError
        If the folder does not exist or the pattern matches nothing.
    """
    pattern = night["path"]
    if os.path.isdir(pattern):
        files = [os.path.join(pattern, f) for f in os.listdir(pattern)]
    else:
        files = glob.glob(pattern)
        if not files and not any(ch in pattern for ch in "*?["):
            msg = f"night folder {pattern!r} does not exist"
            raise ConfigError(msg)
    files = sorted(f for f in files if f.lower().endswith(FITS_ENDINGS) and os.path.isfile(f))
    if not files:
        msg = f"night {pattern!r} holds no FITS files"
        raise ConfigError(msg)
    return files
