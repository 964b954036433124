"""What a configuration key may hold, and the one check every value goes through.

A `Key` says what kind of value a key takes, its default (written here and nowhere else), its
unit and its range. `check_value` applies the one rule for types and ranges: a TOML boolean for
a yes/no key, a TOML integer for a count, a finite TOML number for a quantity; a string is never
read as a number or a boolean. `nearest` suggests the known name closest to a misspelt one.
"""

import datetime as _dt
import difflib
import math
from dataclasses import dataclass

from ._errors import ConfigError

__all__ = ["Key", "check_value", "nearest", "KINDS"]

#: Kind of value -> what the message says is expected.
KINDS = {
    "number": "a number",
    "integer": "a whole number",
    "boolean": "true or false",
    "text": "a text in quotes",
    "path": "a file path in quotes",
    "time": "a date and time (ISO text, or a TOML date-time)",
    "numbers": "a list of numbers",
    "texts": "a list of texts",
    "pair": "a [low, high] pair of numbers",
    "number_or_free": 'a number or "free"',
    "number_table": "a table of names to numbers",
    "text_table": "a table of names to texts",
}


@dataclass(frozen=True)
class Key:
    """One configuration key.

    Attributes
    ----------
    name : str
        The key as written in the file.
    kind : str
        One of `KINDS`.
    default : object
        The value when the key is absent (None: not set).
    doc : str
        One line for ``configs/demo.toml`` and the messages.
    unit : str, optional
        The unit the number is in (already part of the key's name).
    low, high : float, optional
        Range of a number (or of each number of a list).
    low_open : bool, optional
        The value must be above ``low`` (True) or may equal it (False).
    choices : tuple of str, optional
        The allowed texts.
    """

    name: str
    kind: str
    default: object = None
    doc: str = ""
    unit: str | None = None
    low: float | None = None
    high: float | None = None
    low_open: bool = True
    choices: tuple | None = None


def nearest(name, known):
    """The known name closest to ``name``, or None when none is close.

    Examples
    --------
    >>> nearest("aperture_km", ["apertures_km", "annulus_km", "band"])
    'apertures_km'
    >>> nearest("zzz", ["band"]) is None
    True
    """
    found = difflib.get_close_matches(name, list(known), n=1, cutoff=0.6)
    return found[0] if found else None


def _kind_name(value):
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, str):
        return "a text"
    if isinstance(value, int):
        return "a whole number"
    if isinstance(value, float):
        return "a number"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "a table"
    return type(value).__name__


def _is_number(value):
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _range_problem(key, value):
    if not math.isfinite(value):
        return "must be finite"
    below = key.low is not None and (value <= key.low if key.low_open else value < key.low)
    above = key.high is not None and value > key.high
    if not (below or above):
        return None
    if key.low == 0 and key.low_open and key.high is None:
        return "must be positive"
    parts = []
    if key.low is not None:
        parts.append(f"above {key.low:g}" if key.low_open else f"at least {key.low:g}")
    if key.high is not None:
        parts.append(f"at most {key.high:g}")
    return "must be " + " and ".join(parts)


def _number(key, value):
    if not _is_number(value):
        return None, f"must be {KINDS['number']}"
    return float(value), _range_problem(key, float(value))


def _check(key, value):
    """Return (checked value, problem or None)."""
    kind = key.kind
    if kind == "number":
        return _number(key, value)
    if kind == "integer":
        if isinstance(value, bool) or not isinstance(value, int):
            return None, f"must be {KINDS['integer']}"
        return value, _range_problem(key, value)
    if kind == "boolean":
        return value, None if isinstance(value, bool) else f"must be {KINDS['boolean']}"
    if kind in ("text", "path"):
        if not isinstance(value, str) or not value.strip():
            return None, f"must be {KINDS[kind]}"
        if key.choices is not None and value not in key.choices:
            return None, f"must be one of {', '.join(map(repr, key.choices))}"
        return value, None
    if kind == "time":
        if isinstance(value, _dt.datetime):
            return value.replace(tzinfo=None).isoformat(), None
        if isinstance(value, _dt.date):
            return value.isoformat(), None
        return (value, None) if isinstance(value, str) else (None, f"must be {KINDS['time']}")
    if kind == "number_or_free":
        return (value, None) if value == "free" else _number(key, value)
    if kind in ("numbers", "pair"):
        items = [value] if _is_number(value) and kind == "numbers" else value
        if not isinstance(items, list) or not items or not all(map(_is_number, items)):
            return None, f"must be {KINDS[kind]}"
        if kind == "pair" and (len(items) != 2 or items[0] > items[1]):
            return None, f"must be {KINDS[kind]} with low <= high"
        for item in items:
            problem = _range_problem(key, float(item))
            if problem:
                return None, f"every value {problem}"
        return tuple(float(v) for v in items), None
    if kind == "texts":
        items = value
        if not isinstance(items, list) or not all(isinstance(v, str) for v in items):
            return None, f"must be {KINDS[kind]}"
        bad = [v for v in items if key.choices is not None and v not in key.choices]
        if bad:
            return None, f"must list only {', '.join(map(repr, key.choices))}"
        return tuple(items), None
    if kind == "number_table":
        if not isinstance(value, dict) or not all(map(_is_number, value.values())):
            return None, f"must be {KINDS[kind]}"
        return {str(k): float(v) for k, v in value.items()}, None
    if kind == "text_table":
        if not isinstance(value, dict) or not all(isinstance(v, str) and v.strip()
                                                  for v in value.values()):
            return None, f"must be {KINDS[kind]}"
        return {str(k): v for k, v in value.items()}, None
    msg = f"key {key.name!r} has an unknown kind {kind!r}"
    raise AssertionError(msg)


def check_value(key, value, where):
    """Return ``value`` checked against ``key`` (numbers as float, lists as tuples).

    Parameters
    ----------
    key : Key
    value : object
        As read from TOML.
    where : str
        ``"<file>: [section]"`` for the message.

    Raises
    ------
    ConfigError
        ``"<file>: [section] key: must be ..., got <value> (<kind>)"``.

    Examples
    --------
    >>> check_value(Key("min_stars", "integer", low=1, low_open=False), 4, "c.toml: [photometry]")
    4
    >>> try:
    ...     check_value(Key("min_stars", "integer"), "4", "c.toml: [photometry]")
    ... except ConfigError as exc:
    ...     print(exc)
    c.toml: [photometry] min_stars: must be a whole number, got '4' (a text)
    """
    checked, problem = _check(key, value)
    if problem:
        shown = f"{value!r} ({_kind_name(value)})" if not _is_number(value) else f"{value!r}"
        unit = f" {key.unit}" if key.unit and _is_number(value) else ""
        msg = f"{where} {key.name}: {problem}, got {shown}{unit}"
        raise ConfigError(msg)
    return checked
