"""Checking the geometry row and option values handed to the measurement."""

import numpy as np
from astropy import units as u

from photpipe._quantity import as_value

from .errors import PhotometryError

__all__ = ["geometry_values", "angle_or_pixels"]

#: geometry column -> unit (the photpipe.geometry contract); required ones first.
GEOMETRY_REQUIRED = {"r_h": u.au, "delta": u.au, "phase": u.deg, "ra": u.deg, "dec": u.deg}
GEOMETRY_OPTIONAL = {"elong": u.deg, "pa_sun": u.deg, "pa_neg_velocity": u.deg,
                     "ra_rate": u.arcsec / u.h, "dec_rate": u.arcsec / u.h}


def _get(row, key):
    try:
        return row[key]
    except (KeyError, IndexError, ValueError):
        return None


def geometry_values(row, frame_name):
    """Plain floats (contract units) from a geometry row (QTable row or dict).

    Bare numbers are taken to be in the contract's units (AU, deg). Missing optional columns give
    NaN.
    """
    out = {}
    for key, unit in {**GEOMETRY_REQUIRED, **GEOMETRY_OPTIONAL}.items():
        value = _get(row, key)
        if value is None:
            if key in GEOMETRY_REQUIRED:
                msg = f"{frame_name}: geometry row has no {key!r}"
                raise PhotometryError(msg)
            out[key] = float("nan")
            continue
        try:
            out[key] = float(as_value(value, unit, f"geometry {key}", allow_dimensionless=True))
        except (TypeError, ValueError) as exc:
            msg = f"{frame_name}: geometry {key!r}: {exc}"
            raise PhotometryError(msg) from exc
    for key in ("r_h", "delta"):
        if not (np.isfinite(out[key]) and out[key] > 0):
            msg = f"{frame_name}: geometry {key!r} must be finite and positive, got {out[key]}"
            raise PhotometryError(msg)
    if not (np.isfinite(out["phase"]) and 0 <= out["phase"] <= 180):
        msg = f"{frame_name}: geometry 'phase' must be within 0-180 deg, got {out['phase']}"
        raise PhotometryError(msg)
    return out


def angle_or_pixels(value, name, *, scale_arcsec, delta_km):
    """Convert a length at the comet (km), an angle, or pixels to pixels."""
    if not isinstance(value, u.Quantity):
        msg = f"{name!r} must be a Quantity in km, arcsec or pix, got {type(value).__name__}"
        raise TypeError(msg)
    if value.unit.is_equivalent(u.km):
        arcsec = np.degrees(value.to_value(u.km) / delta_km) * 3600.0
        return arcsec / scale_arcsec
    if value.unit.is_equivalent(u.arcsec):
        return value.to_value(u.arcsec) / scale_arcsec
    if value.unit.is_equivalent(u.pix):
        return value.to_value(u.pix)
    msg = f"{name!r} must be in km, arcsec or pix, got {value.unit}"
    raise ValueError(msg)
