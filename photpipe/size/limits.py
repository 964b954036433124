"""Too few detections of the nucleus: an upper limit on H's brightness and on the radius."""

from dataclasses import dataclass

import numpy as np

__all__ = ["DetectionCount", "count_detections", "absolute_magnitude_limit",
           "MIN_DETECTIONS", "MIN_DETECTED_FRACTION"]

#: Fewest frames that must detect the nucleus for a radius (project choice).
MIN_DETECTIONS = 5
#: Least fraction of frames that must detect it: where most frames give only limits, the few
#: detections are as likely noise or coma structure as nucleus (project choice).
MIN_DETECTED_FRACTION = 0.5


@dataclass(frozen=True)
class DetectionCount:
    """How many frames detect the nucleus, and whether that is enough for a radius."""

    n_detected: int
    n_limits: int
    enough: bool
    reason: str


def count_detections(upper_limit, *, min_detections=MIN_DETECTIONS,
                     min_fraction=MIN_DETECTED_FRACTION):
    """Count detections against upper limits and say whether a radius can be formed.

    Parameters
    ----------
    upper_limit : array-like of bool
        True for the frames whose nucleus is an upper limit.
    min_detections : int, optional
    min_fraction : float, optional

    Returns
    -------
    DetectionCount

    Examples
    --------
    >>> count_detections([True] * 39 + [False] * 9).reason
    'only 9 of 48 frames detect the nucleus (fewer than half): the rest are upper limits'
    >>> count_detections([False] * 40).enough
    True
    """
    limit = np.asarray(upper_limit, dtype=bool)
    n_lim = int(limit.sum())
    n_det = int(limit.size - n_lim)
    total = limit.size
    if n_det < min_detections:
        reason = (f"only {n_det} of {total} frames detect the nucleus (at least "
                  f"{min_detections} are needed): the rest are upper limits")
        return DetectionCount(n_det, n_lim, False, reason)
    if n_det < min_fraction * total:
        share = "fewer than half" if min_fraction == 0.5 else f"under {min_fraction:.0%}"
        reason = (f"only {n_det} of {total} frames detect the nucleus ({share}): the rest "
                  f"are upper limits")
        return DetectionCount(n_det, n_lim, False, reason)
    return DetectionCount(n_det, n_lim, True, "")


def absolute_magnitude_limit(reduced_mag, reduced_mag_err, upper_limit, *, n_sigma=2.0):
    """Return the bright limit on H: the rotation-mean nucleus is fainter than this.

    Parameters
    ----------
    reduced_mag : ndarray
        Reduced magnitudes m(1,1,0): the bright limit for limit rows, the measurement for
        detections.
    reduced_mag_err : ndarray
        Errors (NaN for limits).
    upper_limit : ndarray of bool
        True for limit rows.
    n_sigma : float, optional
        A detection counts as ``flux + n_sigma σ_F``, its own upper bound.

    Returns
    -------
    h_limit : float
        ``-2.5 log10(<F_limit>)``.

    Notes
    -----
    Each frame bounds the nucleus flux at its instant; the mean of the frames' bounds bounds
    the mean of their fluxes, which is the rotation mean when the frames sample the rotation
    evenly (common practice). Detections enter at their ``n_sigma`` upper bound, so a few
    spurious detections cannot make the limit tighter than the data allow.

    Examples
    --------
    >>> import numpy as np
    >>> round(absolute_magnitude_limit(np.array([20.0, 20.0]), np.array([np.nan, np.nan]),
    ...                                np.array([True, True])), 3)
    20.0
    """
    m = np.asarray(reduced_mag, dtype=float)
    e = np.asarray(reduced_mag_err, dtype=float)
    lim = np.asarray(upper_limit, dtype=bool)
    flux = 10.0 ** (-0.4 * m)
    bound = np.where(lim, flux, flux * (1 + n_sigma * 0.4 * np.log(10.0) * np.nan_to_num(e)))
    ok = np.isfinite(bound)
    if not np.any(ok):
        msg = "no finite magnitude or limit: no bound on H can be formed"
        raise ValueError(msg)
    return float(-2.5 * np.log10(np.mean(bound[ok])))
