"""The first step of the period search: which points are searched, and over which range.

Upper limits are set aside (counted), coma-free points are preferred, per-filter offsets are
removed, and the sampling is checked for what it can constrain (the baseline, one night).
"""

import warnings
from dataclasses import dataclass

import numpy as np

from photpipe.rotation.errors import LightcurveError, RotationWarning
from photpipe.rotation.fit import night_blocks
from photpipe.rotation.lightcurve import ReducedLightcurve

__all__ = ["SearchPoints", "prepare_points", "count_nights", "NIGHT_GAP_D"]

#: A gap longer than this (days) starts a new night.
NIGHT_GAP_D = 0.3


@dataclass(frozen=True)
class SearchPoints:
    """The points a period search works on, and what the sampling allows.

    Attributes
    ----------
    lightcurve : ReducedLightcurve
        The detections searched.
    t, y, dy : ndarray
        Epochs (days), magnitudes with filter offsets removed, errors.
    baseline_h : float
        Time span of the points (hours).
    nights : int
        Number of nights.
    max_period_h : float
        Longest period searched (the requested one, clipped to the baseline).
    n_upper_limits : int
        Upper limits set aside.
    flags : tuple of str
        Flags raised on the way.
    """

    lightcurve: ReducedLightcurve
    t: np.ndarray
    y: np.ndarray
    dy: np.ndarray
    baseline_h: float
    nights: int
    max_period_h: float
    n_upper_limits: int
    flags: tuple


def count_nights(epoch_mjd):
    """Return the number of separate nights (runs of points split by gaps over 0.3 d).

    Examples
    --------
    >>> import numpy as np
    >>> count_nights(np.array([0.0, 0.1, 1.0, 1.1, 5.0]))
    3
    """
    t = np.asarray(epoch_mjd, dtype=float)
    if t.size == 0:
        return 1  # no gaps; callers refuse empty lightcurves before this
    return int(night_blocks(t, gap=NIGHT_GAP_D).max()) + 1


def _warn(flags, flag, message):
    flags.append(flag)
    warnings.warn(message, RotationWarning, stacklevel=4)


def _detections(reduced, flags):
    """The points that are measurements, not upper limits, and the number set aside."""
    limits = reduced.upper_limit
    n_limits = int(limits.sum())
    if n_limits:
        flags.append("upper_limits_set_aside")
    lc = reduced.select(~limits)
    bad = (~np.isfinite(lc.mag_err) | ~(lc.mag_err > 0) | ~np.isfinite(lc.mag)
           | ~np.isfinite(lc.epoch_mjd))
    if np.any(bad):
        # a lightcurve built by hand can hold what reduce_lightcurve sets aside
        names = ", ".join(str(f) for f in lc.frame[bad][:5])
        _warn(flags, "bad_points_set_aside",
              f"{bad.sum()} of {lc.n_points} points have a NaN, infinite or non-positive "
              f"magnitude error, magnitude or epoch ({names}): set aside, the search goes on "
              f"with the rest")
        lc = lc.select(~bad)
    return lc, n_limits


def _choose_points(reduced, use_points, min_points, flags):
    free = ~reduced.coma_contaminated
    if use_points == "coma-free":
        chosen = reduced.select(free)
    elif use_points == "all":
        chosen = reduced
    elif use_points == "auto":
        chosen = reduced.select(free) if free.sum() >= min_points else reduced
    else:
        msg = f"'use_points' must be 'auto', 'coma-free' or 'all', got {use_points!r}"
        raise ValueError(msg)
    if not chosen.coma_free:
        flags.append("coma_contaminated")
    return chosen


def _remove_filter_offsets(lc, flags):
    y = lc.mag.copy()
    w = 1 / lc.mag_err**2
    filters = sorted(set(lc.filter))
    if len(filters) > 1:
        for name in filters:
            sel = lc.filter == name
            y[sel] -= np.sum(w[sel] * y[sel]) / np.sum(w[sel])
        y += np.sum(w * lc.mag) / np.sum(w)
        flags.append("filter_offsets_removed")
    return y


def _check_count(lc, min_points, n_limits):
    n = lc.n_points
    need = max(min_points, 2 * (2 * 2 + 2))
    if n < need:
        limits = f" ({n_limits} upper limits set aside)" if n_limits else ""
        msg = (f"only {n} usable points{limits}: at least {need} are needed to fit a "
               f"two-harmonic lightcurve with its period and test it; these data can give a "
               f"mean magnitude and its scatter, but no rotation period")
        raise LightcurveError(msg)


def _check_range(baseline_h, nights, n, pmin_h, pmax_h, flags):
    """Return the longest period searched, after the sampling checks."""
    if baseline_h < pmin_h:
        msg = (f"the points span {baseline_h:.2f} h, less than the shortest trial period "
               f"({pmin_h:g} h): no period in the range can be constrained; the data only show "
               f"the brightness change over {baseline_h:.2f} h (a lower bound on the amplitude)")
        raise LightcurveError(msg)
    if nights == 1:
        _warn(flags, "single_night",
              f"all {n} points come from one night ({baseline_h:.2f} h): periods longer than "
              f"that cannot be constrained, and the cycle count between nights cannot be "
              f"tested")
    if baseline_h < pmax_h:
        _warn(flags, "max_period_clipped",
              f"the baseline ({baseline_h:.2f} h) is shorter than the longest trial period "
              f"({pmax_h:g} h): the search stops at {baseline_h:.2f} h, as longer periods "
              f"cannot be constrained by these data")
        pmax_h = baseline_h
    if pmin_h >= pmax_h:
        msg = (f"the search range is empty once limited by the {baseline_h:.2f} h baseline "
               f"(min_period {pmin_h:g} h)")
        raise LightcurveError(msg)
    return pmax_h


def prepare_points(reduced, *, use_points, min_points, min_period_h, max_period_h):
    """Return the points to search and the range their sampling allows.

    Parameters
    ----------
    reduced : ReducedLightcurve
        The lightcurve, upper limits included.
    use_points : {"auto", "coma-free", "all"}
        Which points (see :func:`~photpipe.rotation.search.search_rotation`).
    min_points : int
        Fewest points for which a period is searched.
    min_period_h, max_period_h : float
        Requested period range (hours).

    Returns
    -------
    SearchPoints

    Raises
    ------
    LightcurveError
        Too few detections, or a baseline shorter than the shortest trial period.

    Examples
    --------
    >>> import numpy as np
    >>> from photpipe.rotation import reduce_lightcurve, synthetic_lightcurve
    >>> table, _ = synthetic_lightcurve(n_nights=3, rng=np.random.default_rng(2))
    >>> table["flags"][:4] = "upper_limit"
    >>> pts = prepare_points(reduce_lightcurve(table), use_points="auto", min_points=12,
    ...                      min_period_h=2.0, max_period_h=20.0)
    >>> pts.n_upper_limits, "upper_limits_set_aside" in pts.flags
    (4, True)
    """
    flags = []
    detected, n_limits = _detections(reduced, flags)
    lc = _choose_points(detected, use_points, min_points, flags)
    _check_count(lc, min_points, n_limits)
    t = lc.epoch_mjd
    y = _remove_filter_offsets(lc, flags)
    baseline_h = float(np.ptp(t)) * 24
    nights = count_nights(t)
    pmax_h = _check_range(baseline_h, nights, lc.n_points, min_period_h, max_period_h, flags)
    return SearchPoints(lightcurve=lc, t=t, y=y, dy=lc.mag_err, baseline_h=baseline_h,
                        nights=nights, max_period_h=pmax_h, n_upper_limits=n_limits,
                        flags=tuple(flags))
