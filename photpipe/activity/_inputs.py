"""Checking and converting the activity stage's inputs (internal)."""

import warnings

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe._quantity import as_value
from photpipe._warnings import PoorResultWarning

__all__ = ["prepare", "choose_aperture", "Prepared"]

_LN10 = np.log(10.0)
#: Aperture radius commonly used to quote Afρ when several are measured (common practice).
_PREFERRED_RHO_KM = 1.0e4


class Prepared:
    """Plain-float view of the measurements kept for the fit."""

    def __init__(self, mjd, log_r_h, y, sy, keep, rho_km):
        self.mjd = mjd
        self.log_r_h = log_r_h
        self.y = y
        self.sy = sy
        self.keep = keep
        self.rho_km = rho_km


def choose_aperture(rho_km, aperture_km=None):
    """Return the aperture radius (km) to use among the per-row radii ``rho_km``.

    With ``aperture_km`` given, that one (it must be present to 0.1 %); otherwise the radius with
    the most rows, ties going to the one nearest 10 000 km.
    """
    finite = rho_km[np.isfinite(rho_km)]
    if finite.size == 0:
        msg = "'rho' has no finite aperture radius"
        raise ValueError(msg)
    values = np.unique(np.round(finite, 3))
    if aperture_km is not None:
        close = np.abs(values - aperture_km) <= 1e-3 * aperture_km
        if not np.any(close):
            msg = (f"'aperture' {aperture_km:g} km is not among the measured apertures "
                   f"{values.tolist()} km")
            raise ValueError(msg)
        return float(values[close][0])
    counts = np.array([np.count_nonzero(np.abs(finite - v) <= 1e-3 * v) for v in values])
    best = values[counts == counts.max()]
    return float(best[np.argmin(np.abs(np.log(best / _PREFERRED_RHO_KM)))])


def prepare(time, r_h, afrho, afrho_err, *, rho=None, aperture=None, exclude=None,
            require_r_h=True):
    """Validate the arrays, pick one aperture, convert to log10 and drop unusable rows."""
    if not isinstance(time, Time):
        msg = f"'time' must be an astropy Time, got {type(time).__name__}"
        raise TypeError(msg)
    mjd = np.atleast_1d(np.asarray(time.utc.mjd, dtype=float))
    n = mjd.size
    a = np.atleast_1d(as_value(afrho, u.cm, "afrho"))
    ae = np.atleast_1d(as_value(afrho_err, u.cm, "afrho_err"))
    if r_h is None:
        if require_r_h:
            msg = "'r_h' is required"
            raise ValueError(msg)
        rh = np.ones(n)
    else:
        rh = np.atleast_1d(as_value(r_h, u.au, "r_h"))
    arrays = {"r_h": rh, "afrho": a, "afrho_err": ae}
    if rho is not None:
        arrays["rho"] = np.atleast_1d(as_value(rho, u.km, "rho"))
    if exclude is not None:
        arrays["exclude"] = np.atleast_1d(np.asarray(exclude, dtype=bool))
    for name, arr in arrays.items():
        if arr.shape != (n,):
            msg = f"{name!r} has shape {arr.shape}, but 'time' has {n} entries"
            raise ValueError(msg)
    keep = np.ones(n, dtype=bool)
    rho_km = None
    if rho is not None:
        aperture_km = None if aperture is None else as_value(aperture, u.km, "aperture")
        rho_km = choose_aperture(arrays["rho"], aperture_km)
        keep &= np.abs(arrays["rho"] - rho_km) <= 1e-3 * rho_km
    if exclude is not None:
        keep &= ~arrays["exclude"]
    usable = np.isfinite(mjd) & np.isfinite(rh) & (rh > 0) & np.isfinite(a) & (a > 0) \
        & np.isfinite(ae) & (ae > 0)
    bad = keep & ~usable
    if np.any(bad):
        msg = (f"{np.count_nonzero(bad)} of {np.count_nonzero(keep)} measurements left out of "
               f"the activity trend: non-finite or non-positive Afρ, error or r_h")
        warnings.warn(msg, PoorResultWarning, stacklevel=3)
    keep &= usable
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.where(keep, np.log10(np.where(keep, a, 1.0)), np.nan)
        sy = np.where(keep, ae / (np.where(keep, a, 1.0) * _LN10), np.nan)
        log_r_h = np.where(keep, np.log10(np.where(keep, rh, 1.0)), np.nan)
    return Prepared(mjd, log_r_h, y, sy, keep, rho_km)
