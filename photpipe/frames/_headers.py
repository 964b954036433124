"""Private: read single header values safely; every failure is a `FrameError` naming the keyword.

A real header can hold anything: INF, blanks, complex numbers, 1E30, text where a number
belongs. Each reader here checks type, finiteness and a plausible range, and turns whatever
astropy, ERFA or Python raise into one line naming the file, the keyword and its value.
"""

import contextlib
import math
import re

from astropy.time import Time

from .errors import FrameError

__all__ = ["keyword_errors", "number", "integer", "first_present", "parse_time",
           "parse_section", "TIMESCALES"]

#: TIMESYS values and the astropy scale they mean.
TIMESCALES = {"UTC": "utc", "UT": "utc", "TT": "tt", "TAI": "tai", "GPS": "tai", "TDB": "tdb"}

#: Years a frame can plausibly be taken in (a date outside is a header fault, not an epoch).
YEARS = (1950, 2200)


@contextlib.contextmanager
def keyword_errors(path, key, value):
    """Turn any exception raised while interpreting ``key = value`` into a `FrameError`."""
    try:
        yield
    except FrameError:
        raise
    except Exception as exc:  # noqa: BLE001 - one bad value must never stop the night
        raise FrameError(path, f"{key} = {value!r} cannot be read "
                               f"({type(exc).__name__}: {exc})") from exc


def first_present(header, keys):
    """The first of ``keys`` with a non-blank value: ``(key, value)``, or ``(None, None)``."""
    for key in keys:
        try:
            value = header.get(key)
        except (KeyError, ValueError, TypeError):
            continue
        if value is None or (isinstance(value, str) and not value.strip()):
            continue
        return key, value
    return None, None


def number(path, key, value, *, low=-math.inf, high=math.inf, what="a finite number"):
    """``value`` as a float within [low, high]; a `FrameError` naming ``key`` otherwise.

    Examples
    --------
    >>> number("a.fits", "EXPTIME", "30")
    30.0
    >>> number("a.fits", "EXP", 1e30, low=0, high=1e6)
    Traceback (most recent call last):
    ...
    photpipe.frames.errors.FrameError: a.fits: EXP = 1e+30 is not a finite number from 0 to 1e+06
    """
    if isinstance(value, bool):
        raise FrameError(path, f"{key} = {value!r} is a logical value, not a number")
    try:
        x = float(value)
    except (TypeError, ValueError, OverflowError):
        x = math.nan
    if not (math.isfinite(x) and low <= x <= high):
        bounds = f" from {low:g} to {high:g}" if (low, high) != (-math.inf, math.inf) else ""
        raise FrameError(path, f"{key} = {value!r} is not {what}{bounds}")
    return x


def integer(path, key, value, *, low=1, high=1024):
    """``value`` as a whole number within [low, high] (a float like 2.0 is accepted)."""
    x = number(path, key, value, low=low, high=high, what="a whole number")
    if x != int(x):
        raise FrameError(path, f"{key} = {value!r} is not a whole number")
    return int(x)


_DATE_ONLY = re.compile(r"^\d{4}-\d{2}-\d{2}$")
_OLD_DATE = re.compile(r"^(\d{2})/(\d{2})/(\d{2})$")  # DD/MM/YY, the pre-2000 FITS form


def _time_or_error(path, key, value, **kw):
    if kw.get("format") == "isot":
        try:
            Time(kw["val"], format="isot", scale=kw["scale"])
        except ValueError as exc:
            raise FrameError(path, f"{key} = {value!r} is not an ISO date and time") from exc
    with keyword_errors(path, key, value):
        t = Time(**kw)
        year = float(t.utc.jyear) if t.scale != "utc" else float(t.jyear)
    if not (YEARS[0] <= year <= YEARS[1]):
        raise FrameError(path, f"{key} = {value!r} is not a date between {YEARS[0]} and "
                               f"{YEARS[1]}")
    return t


def parse_time(path, header, *, date_keys, clock_keys, mjd_keys, jd_keys):
    """The time a header states (DATE-OBS [+ TIME-OBS], else MJD-OBS, else JD), as a `Time`.

    A DATE-OBS that holds only a date needs a clock keyword (TIME-OBS, UT...); without one it
    is an error, never midnight.

    Returns
    -------
    time : `~astropy.time.Time`
    key : str
        The keyword(s) read.
    """
    sys_key, sys_value = first_present(header, ("TIMESYS",))
    scale = TIMESCALES.get(str(sys_value or "UTC").strip().upper())
    if scale is None:
        raise FrameError(path, f"TIMESYS = {sys_value!r} is not a time scale photpipe knows "
                               f"({', '.join(TIMESCALES)})")
    key, date = first_present(header, date_keys)
    if key is not None:
        text = str(date).strip()
        old = _OLD_DATE.match(text)
        if old:
            dd, mm, yy = old.groups()
            text = f"19{yy}-{mm}-{dd}"
        if _DATE_ONLY.match(text):
            ckey, clock = first_present(header, clock_keys)
            if ckey is None:
                raise FrameError(path, f"{key} = {date!r} holds a date only and no "
                                       f"{' or '.join(clock_keys)} gives the time of day")
            text, key = f"{text}T{str(clock).strip()}", f"{key} + {ckey}"
        return _time_or_error(path, key, date, val=text, format="isot", scale=scale), key
    key, mjd = first_present(header, mjd_keys)
    if key is not None:
        value = number(path, key, mjd, low=0.0, high=1e6)
        return _time_or_error(path, key, mjd, val=value, format="mjd", scale=scale), key
    key, jd = first_present(header, jd_keys)
    if key is not None:
        value = number(path, key, jd, low=2.4e6, high=2.6e6)
        return _time_or_error(path, key, jd, val=value, format="jd", scale=scale), key
    names = " or ".join((*date_keys[:1], *mjd_keys[:1], *jd_keys[:1]))
    raise FrameError(path, f"header has no {names} (time of the exposure)")


_SECTION = re.compile(r"^\s*\[\s*(\d+)\s*:\s*(\d+)\s*,\s*(\d+)\s*:\s*(\d+)\s*\]\s*$")


def parse_section(path, key, value, shape):
    """A FITS section ``'[x1:x2,y1:y2]'`` (1-based, inclusive) as numpy slices (rows, cols).

    Examples
    --------
    >>> parse_section("a.fits", "TRIMSEC", "[3:10,1:4]", (4, 12))
    (slice(0, 4, None), slice(2, 10, None))
    """
    m = _SECTION.match(str(value))
    if m is None:
        raise FrameError(path, f"{key} = {value!r} is not a section '[x1:x2,y1:y2]'")
    x1, x2, y1, y2 = (int(g) for g in m.groups())
    ny, nx = shape
    if not (1 <= x1 <= x2 <= nx and 1 <= y1 <= y2 <= ny):
        raise FrameError(path, f"{key} = {value!r} lies outside the {nx} x {ny} image")
    return slice(y1 - 1, y2), slice(x1 - 1, x2)

