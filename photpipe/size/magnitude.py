"""Absolute magnitude of the nucleus: reduced magnitudes and their rotation-averaged mean."""

import warnings
from dataclasses import dataclass

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value, as_value
from photpipe._warnings import PoorResultWarning
from photpipe.rotation import reduce_lightcurve
from photpipe.size._mean_blocks import night_block_mean
from photpipe.size._mean_flux import flux_mean
from photpipe.size._mean_harmonic import harmonic_mean
from photpipe.size._mean_periods import period_averaged_mean
from photpipe.size._mean_phase_binned import phase_binned_mean

__all__ = ["MEAN_METHODS", "AbsoluteMagnitude", "reduce_magnitude", "mean_absolute_magnitude",
           "h_method_for_rotation", "CALIBRATION_ERR_MAG"]

#: Method name -> function(mag, err, *, times, period, n_bins, n_harmonics) -> (flux, error, flags).
MEAN_METHODS = {"flux-mean": flux_mean, "phase-binned": phase_binned_mean,
                "harmonic": harmonic_mean, "rotation-unknown": period_averaged_mean,
                "night-blocks": night_block_mean}
#: Methods that need the rotation period.
_NEEDS_PERIOD = ("harmonic", "phase-binned")

_LN10_04 = 0.4 * np.log(10.0)

#: 1-σ error shared by every frame of a campaign, which no averaging of frames reduces (mag):
#: the reference catalogue's zero-point accuracy in the band and the colour difference between
#: the nucleus and the reference stars; 0.01-0.03 mag is usual for catalogue-calibrated
#: broadband CCD photometry (common practice). It also holds the nucleus fit's bias shared
#: by frames of one kind of night (measured on the night cases, ≤ 0.025 mag,
#: tests/nucleus/test_case_pulls.py).
CALIBRATION_ERR_MAG = 0.02


def reduce_magnitude(mag, r_h, delta, phase, *, phase_coefficient=0.035 * u.mag / u.deg):
    """Return the reduced magnitude m(1, 1, 0) of an apparent nucleus magnitude.

    The reduction is the rotation stage's (`photpipe.rotation.reduce_lightcurve`, linear phase
    law), so a lightcurve reduced here and one reduced for the period search agree.

    Parameters
    ----------
    mag : float or array-like or `~astropy.units.Quantity` ['mag']
        Apparent magnitude(s); non-finite ones give non-finite reduced magnitudes.
    r_h, delta : `~astropy.units.Quantity` ['length']
        Heliocentric and geocentric distances (broadcast against ``mag``).
    phase : `~astropy.units.Quantity` ['angle']
        Phase angle α, 0 to 180°.
    phase_coefficient : `~astropy.units.Quantity`, optional
        Linear phase coefficient β (mag/deg); default 0.035, the mean of measured nuclei
        (Lamy et al. 2004, Comets II, from memory).

    Returns
    -------
    m110 : `~astropy.units.Quantity` ['mag']
        ``m - 5 log10(r_h Δ) - β α`` with r_h and Δ in AU, in the broadcast shape.

    Raises
    ------
    ValueError
        For a distance that is not positive or a phase angle outside 0-180°.

    Examples
    --------
    >>> from astropy import units as u
    >>> m = reduce_magnitude(20.0, 2 * u.au, 1 * u.au, 10 * u.deg)
    >>> print(f"{m.to_value('mag'):.4f}")
    18.1449
    """
    m = np.asarray(as_value(mag, u.mag, "mag", allow_dimensionless=True), dtype=float)
    rh = as_positive_value(r_h, u.au, "r_h")
    dl = as_positive_value(delta, u.au, "delta")
    alpha = as_value(phase, u.deg, "phase")
    m, rh, dl, alpha = np.broadcast_arrays(m, rh, dl, alpha)
    out = np.full(m.shape, np.nan)
    ok = np.isfinite(m)
    if np.any(ok):
        rows = {"mjd_utc_mid": np.zeros(np.count_nonzero(ok)), "nucleus_mag": m[ok],
                "nucleus_mag_err": np.ones(np.count_nonzero(ok)), "r_h_au": rh[ok],
                "delta_au": dl[ok], "phase_deg": alpha[ok]}
        out[ok] = reduce_lightcurve(rows, phase_law="linear",
                                    phase_coefficient=phase_coefficient).mag
    return out * u.mag


@dataclass(frozen=True)
class AbsoluteMagnitude:
    """Rotation-averaged absolute magnitude of a nucleus.

    Attributes
    ----------
    H, H_err : float
        Magnitude of the mean flux and its 1-sigma error (mag): the statistical error and the
        shared one in quadrature.
    n_points : int
        Points used.
    method : str
        Averaging method (a key of `MEAN_METHODS`).
    flags : tuple of str
        ``single_point``, ``sparse_rotation_coverage``, ``few_points_for_harmonics``,
        ``rotation_unknown``, ``single_night`` or empty.
    H_err_statistical, H_err_shared : float
        The parts of ``H_err``: from the points' scatter and errors (and the rotation), and
        shared by every frame (``shared_err``).
    """

    H: float
    H_err: float
    n_points: int
    method: str
    flags: tuple = ()
    H_err_statistical: float = None
    H_err_shared: float = 0.0

    def to_dict(self):
        """Return the result as plain values."""
        return {"H_mag": self.H, "H_err_mag": self.H_err, "n_points": self.n_points,
                "H_method": self.method, "flags": list(self.flags)}


def mean_absolute_magnitude(reduced_mag, reduced_mag_err, *, method="flux-mean", times=None,
                            period=None, n_bins=8, n_harmonics=4, shared_err=0.0):
    """Average a reduced lightcurve over rotation into the absolute magnitude H.

    Parameters
    ----------
    reduced_mag, reduced_mag_err : array-like or `~astropy.units.Quantity` ['mag']
        Reduced magnitudes m(1, 1, 0) and their errors; non-finite rows are dropped.
    method : {"flux-mean", "harmonic", "phase-binned", "rotation-unknown", "night-blocks"}
        ``"flux-mean"``: mean flux of all points. ``"rotation-unknown"``: the mean flux
        averaged over the periods of 2-60 h with the weight the data give each, its error
        covering the unknown rotational sampling (the choice when the period is ambiguous or
        none, see :func:`~photpipe.size._mean_periods.period_averaged_mean`);
        ``"night-blocks"``: the former estimate, nights as samples of the rotation
        (:func:`~photpipe.size._mean_blocks.night_block_mean`). ``"harmonic"``: constant term of
        a Fourier series in flux fitted at ``period`` (unbiased by uneven sampling of the
        rotation; the choice when the period is known). ``"phase-binned"``: fold at ``period``
        and give each of ``n_bins`` phase bins equal weight (model-free, but biased when points
        crowd one side of a bin).
    times : `~astropy.units.Quantity` ['time'] or `~astropy.time.Time`, optional
        Observation times (light-time corrected), for ``"harmonic"`` and ``"phase-binned"``.
    period : `~astropy.units.Quantity` ['time'], optional
        Rotation period, for ``"harmonic"`` and ``"phase-binned"``.
    n_bins : int, optional
        Number of rotational phase bins (``"phase-binned"``).
    n_harmonics : int, optional
        Harmonics of the rotation frequency fitted (``"harmonic"``; 4 covers a double-peaked
        lightcurve with unequal maxima).
    shared_err : float or `~astropy.units.Quantity` ['mag'], optional
        1-σ error shared by every point (a calibration error common to the campaign), added
        in quadrature: averaging the points reduces their own errors, not this one. The
        campaign passes `CALIBRATION_ERR_MAG`.

    Returns
    -------
    AbsoluteMagnitude

    Raises
    ------
    ValueError
        If no finite point is left ("H with no lightcurve behind it"), errors are negative, or
        the method is unknown.

    Warns
    -----
    PoorResultWarning
        For a single point, phase-binned coverage of less than half the bins, or too few points
        for the harmonics asked.

    Notes
    -----
    The effective radius belongs to the mean cross-section, so the average is taken in flux:
    ``H = -2.5 log10(<10^(-0.4 m)>)``, ``σ_H = (2.5 / ln 10) σ_F / F``, then
    ``sqrt(σ_H² + shared_err²)``: an error every frame shares (the catalogue's zero point)
    stays whole in the mean. Without it, a bare nucleus of 90 frames at 1 % each gave H to
    0.001 mag, and its pulls on the recovery campaigns had σ 2.0 (``benchmarks/recovery.py``).

    Examples
    --------
    >>> h = mean_absolute_magnitude([15.1, 14.9, 15.1, 14.9], [0.02] * 4)
    >>> print(f"{h.H:.3f} +- {h.H_err:.3f}")
    14.995 +- 0.058
    """
    m = np.atleast_1d(as_value(reduced_mag, u.mag, "reduced_mag", allow_dimensionless=True))
    e = np.atleast_1d(as_value(reduced_mag_err, u.mag, "reduced_mag_err",
                               allow_dimensionless=True))
    if m.shape != e.shape:
        msg = f"'reduced_mag' and 'reduced_mag_err' differ in shape: {m.shape} vs {e.shape}"
        raise ValueError(msg)
    if method not in MEAN_METHODS:
        msg = f"unknown method {method!r}; choose from {sorted(MEAN_METHODS)}"
        raise ValueError(msg)
    good = np.isfinite(m) & np.isfinite(e)
    if not np.any(good):
        msg = ("no finite reduced magnitudes: H needs a lightcurve behind it "
               f"({m.size} row(s) given, none usable)")
        raise ValueError(msg)
    if np.any(e[good] < 0):
        msg = "'reduced_mag_err' must be >= 0"
        raise ValueError(msg)
    t = p = None
    if method in _NEEDS_PERIOD and (times is None or period is None):
        msg = f"method {method!r} needs both 'times' and 'period'"
        raise ValueError(msg)
    if times is not None and method != "flux-mean":
        t_all = times.mjd if hasattr(times, "mjd") else as_value(times, u.day, "times")
        t = np.atleast_1d(np.asarray(t_all, dtype=float))[good]
    if method in _NEEDS_PERIOD:
        p = as_positive_value(period, u.day, "period")
    flux, flux_err, flags = MEAN_METHODS[method](m[good], e[good], times=t, period=p,
                                                 n_bins=int(n_bins), n_harmonics=int(n_harmonics))
    shared = _shared_error(shared_err)
    stat = float(flux_err / flux / _LN10_04)
    result = AbsoluteMagnitude(H=float(-2.5 * np.log10(flux)), H_err=float(np.hypot(stat, shared)),
                               n_points=int(good.sum()), method=method, flags=tuple(flags),
                               H_err_statistical=stat, H_err_shared=float(shared))
    # rotation_unknown and single_night say how the error was formed: it already covers them
    if set(flags) - {"rotation_unknown", "single_night"}:
        msg = f"absolute magnitude from {result.n_points} point(s) is weak: {', '.join(flags)}"
        warnings.warn(msg, PoorResultWarning, stacklevel=2)
    return result


def _shared_error(shared_err):
    shared = float(as_value(shared_err, u.mag, "shared_err", allow_dimensionless=True))
    if not shared >= 0:
        msg = f"'shared_err' must be zero or positive, got {shared_err}"
        raise ValueError(msg)
    return shared


def h_method_for_rotation(rotation):
    """Return ``(method, period)`` for H given a rotation result (``rotation.json`` dict).

    The rotation model is used only for a firm period (``status`` ``"period"``, or a result
    from before statuses existed); an ambiguous period or none gives ``"rotation-unknown"``,
    whose error covers the unknown rotational sampling.

    Examples
    --------
    >>> h_method_for_rotation({"status": "ambiguous", "period_h": 2.8})
    ('rotation-unknown', None)
    >>> h_method_for_rotation({"status": "period", "period_h": 7.3})
    ('harmonic', <Quantity 7.3 h>)
    >>> h_method_for_rotation(None)
    ('rotation-unknown', None)
    """
    if not rotation:
        return "rotation-unknown", None
    period_h = rotation.get("period_h")
    firm = rotation.get("status", "period") == "period"
    if firm and period_h is not None and np.isfinite(float(period_h)):
        return "harmonic", float(period_h) * u.h
    return "rotation-unknown", None
