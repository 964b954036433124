"""Checking astropy quantities at the public edges of photpipe.

Public functions call :func:`as_value` once on each physical input, do their numerics on plain
floats, and put units back on the way out. The error names the offending argument.
"""

import numpy as np
from astropy import units as u

__all__ = ["as_value", "as_positive_value"]


def as_value(value, unit, name, *, allow_dimensionless=False):
    """Return ``value`` as a float array in ``unit``, naming ``name`` in any error.

    Parameters
    ----------
    value : `~astropy.units.Quantity` or float or array-like
        The input. A bare number is accepted only when ``allow_dimensionless`` is true, in which
        case it is taken to be in ``unit`` already.
    unit : `~astropy.units.Unit` or str
        The unit to convert to.
    name : str
        The argument's name, used in error messages.
    allow_dimensionless : bool, optional
        Accept plain numbers as already being in ``unit``.

    Returns
    -------
    value : ndarray or float
        The value in ``unit``, as float (0-d inputs give a Python float).

    Raises
    ------
    TypeError
        If ``value`` is not a Quantity and plain numbers are not allowed.
    ValueError
        If the unit cannot be converted to ``unit``.

    Examples
    --------
    >>> from astropy import units as u
    >>> round(as_value(1.5 * u.au, u.km, "delta"))
    224396806
    """
    unit = u.Unit(unit)
    if not isinstance(value, u.Quantity):
        if allow_dimensionless:
            arr = np.asarray(value, dtype=float)
            return float(arr) if arr.ndim == 0 else arr
        msg = f"{name!r} must be an astropy Quantity in units of {unit}, got {type(value).__name__}"
        raise TypeError(msg)
    try:
        arr = value.to_value(unit, equivalencies=u.dimensionless_angles()
                             if unit.physical_type == "angle" else [])
    except u.UnitConversionError as exc:
        msg = f"{name!r} must have units convertible to {unit}, got {value.unit}"
        raise ValueError(msg) from exc
    arr = np.asarray(arr, dtype=float)
    return float(arr) if arr.ndim == 0 else arr


def as_positive_value(value, unit, name, *, allow_dimensionless=False):
    """Like :func:`as_value` but every element must be finite and > 0.

    Examples
    --------
    >>> from astropy import units as u
    >>> as_positive_value(-1 * u.s, u.s, "exptime")
    Traceback (most recent call last):
    ...
    ValueError: 'exptime' must be finite and positive, got -1.0
    """
    arr = as_value(value, unit, name, allow_dimensionless=allow_dimensionless)
    if not np.all(np.isfinite(arr) & (np.asarray(arr) > 0)):
        msg = f"{name!r} must be finite and positive, got {arr}"
        raise ValueError(msg)
    return arr
