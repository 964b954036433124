"""Input checks shared by the size modules (albedos, intervals, magnitudes)."""

import numpy as np
from astropy import units as u

from photpipe._quantity import as_value

__all__ = ["geometric_albedo", "albedo_interval", "magnitude", "positive_interval"]


def geometric_albedo(value, name="albedo"):
    """Return a geometric albedo as float (array), checking 0 < p <= 1.

    Examples
    --------
    >>> geometric_albedo(0.04)
    0.04
    >>> geometric_albedo(0.0)
    Traceback (most recent call last):
    ...
    ValueError: 'albedo' must be a geometric albedo in (0, 1], got 0.0
    """
    p = as_value(value, u.dimensionless_unscaled, name, allow_dimensionless=True)
    arr = np.asarray(p)
    if not np.all(np.isfinite(arr) & (arr > 0) & (arr <= 1)):
        msg = f"{name!r} must be a geometric albedo in (0, 1], got {p}"
        raise ValueError(msg)
    return p


def albedo_interval(value, name="albedo"):
    """Return ``(lo, hi)`` from one albedo or a two-element range (lo <= hi)."""
    arr = np.atleast_1d(np.asarray(getattr(value, "value", value), dtype=float))
    if arr.size == 1:
        p = geometric_albedo(float(arr[0]), name)
        return p, p
    if arr.size != 2:
        msg = f"{name!r} must be one value or a (lo, hi) pair, got {arr.size} values"
        raise ValueError(msg)
    lo, hi = (geometric_albedo(float(x), name) for x in arr)
    if lo > hi:
        msg = f"{name!r} range must be (lo, hi) with lo <= hi, got ({lo}, {hi})"
        raise ValueError(msg)
    return lo, hi


def positive_interval(value, unit, name):
    """Return ``(lo, hi)`` floats in ``unit`` from a Quantity pair with 0 < lo <= hi."""
    arr = np.atleast_1d(as_value(value, unit, name))
    if arr.size == 1:
        arr = np.array([arr[0], arr[0]])
    if arr.size != 2 or not np.all(np.isfinite(arr) & (arr > 0)):
        msg = f"{name!r} must be one positive value or a positive (lo, hi) pair, got {arr} {unit}"
        raise ValueError(msg)
    if arr[0] > arr[1]:
        msg = f"{name!r} must be (lo, hi) with lo <= hi, got {arr} {unit}"
        raise ValueError(msg)
    return float(arr[0]), float(arr[1])


def magnitude(value, name):
    """Return a magnitude (plain number or Quantity in mag) as float (array), all finite."""
    m = as_value(value, u.mag, name, allow_dimensionless=True)
    if not np.all(np.isfinite(m)):
        msg = f"{name!r} must be finite, got {m}"
        raise ValueError(msg)
    return m
