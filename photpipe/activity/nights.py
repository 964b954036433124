"""Grouping frames into observing nights and averaging log Afρ per night.

Afρ measured on frames of one night shares that night's calibration, seeing and geometry, so its
frame-to-frame errors are not independent of the night-to-night ones. The trend and the outburst
search therefore work on one value per night.
"""

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe._quantity import as_positive_value

__all__ = ["night_labels", "NightBins", "bin_nights"]

_DEFAULT_GAP = 0.25 * u.day
_DEFAULT_SPAN = 1.0 * u.day


def _labels_from_mjd(mjd, gap_d, span_d):
    order = np.argsort(mjd, kind="stable")
    t = mjd[order]
    labels_sorted = np.zeros(t.size, dtype=int)
    label = 0
    start = t[0] if t.size else 0.0
    for i in range(1, t.size):
        if t[i] - t[i - 1] > gap_d or t[i] - start > span_d:
            label += 1
            start = t[i]
        labels_sorted[i] = label
    labels = np.empty_like(labels_sorted)
    labels[order] = labels_sorted
    return labels


def night_labels(time, *, gap=_DEFAULT_GAP, max_span=_DEFAULT_SPAN):
    """Number the observing nights of a set of frame times.

    Parameters
    ----------
    time : `~astropy.time.Time`, shape (n,)
        Mid-exposure times of the frames, in any order.
    gap : `~astropy.units.Quantity` ['time'], optional
        A pause longer than this between consecutive frames starts a new night (default 6 h).
    max_span : `~astropy.units.Quantity` ['time'], optional
        A night never spans more than this (default 1 day), so a chain of sites around the globe
        does not merge days.

    Returns
    -------
    labels : ndarray of int, shape (n,)
        0 for the first night, 1 for the next, ... in time order.

    Examples
    --------
    >>> from astropy.time import Time
    >>> t = Time([60000.1, 60000.2, 61000.1, 60001.15], format="mjd")
    >>> night_labels(t).tolist()
    [0, 0, 2, 1]
    """
    if not isinstance(time, Time):
        msg = f"'time' must be an astropy Time, got {type(time).__name__}"
        raise TypeError(msg)
    gap_d = as_positive_value(gap, u.day, "gap")
    span_d = as_positive_value(max_span, u.day, "max_span")
    mjd = np.atleast_1d(np.asarray(time.utc.mjd, dtype=float))
    return _labels_from_mjd(mjd, gap_d, span_d)


class NightBins:
    """One weighted-mean log10 Afρ per night (plain floats; internal to the activity stage).

    Attributes
    ----------
    mjd, mjd_first, mjd_last : ndarray
        Mean, first and last frame time of each night (MJD, UTC).
    log_r_h : ndarray
        Mean log10 r_h (au) of the night's frames.
    y, sy : ndarray
        Weighted mean of log10 Afρ (cm) and its error, the error inflated by the Birge ratio
        when the frames scatter more than their errors say.
    n_frames : ndarray of int
    labels : ndarray of int
        Night index of every input frame (``-1`` for frames left out).
    """

    def __init__(self, mjd, mjd_first, mjd_last, log_r_h, y, sy, n_frames, labels):
        self.mjd = mjd
        self.mjd_first = mjd_first
        self.mjd_last = mjd_last
        self.log_r_h = log_r_h
        self.y = y
        self.sy = sy
        self.n_frames = n_frames
        self.labels = labels

    def __len__(self):
        return self.mjd.size

    def subset(self, keep):
        """Return the nights where the boolean ``keep`` is true (frame labels renumbered)."""
        keep = np.asarray(keep, dtype=bool)
        new_index = np.full(keep.size, -1)
        new_index[keep] = np.arange(np.count_nonzero(keep))
        labels = np.where(self.labels >= 0, new_index[np.maximum(self.labels, 0)], -1)
        return NightBins(self.mjd[keep], self.mjd_first[keep], self.mjd_last[keep],
                         self.log_r_h[keep], self.y[keep], self.sy[keep], self.n_frames[keep],
                         labels)


def bin_nights(mjd, log_r_h, y, sy, *, gap_d=0.25, span_d=1.0, split_mjd=None):
    r"""Average log10 Afρ per night (plain floats in, `NightBins` out).

    Parameters
    ----------
    mjd, log_r_h, y, sy : ndarray, shape (n,)
        Frame times (MJD UTC), log10 r_h (au), log10 Afρ (cm) and its error (dex). Frames
        with a non-finite entry are left out (label -1).
    gap_d, span_d : float
        Night-splitting gap and maximum span, in days (see `night_labels`).
    split_mjd : float, optional
        A time (e.g. perihelion) that no night straddles: frames either side of it go to
        different nights.

    Returns
    -------
    nights : `NightBins`

    Notes
    -----
    The night value is the inverse-variance weighted mean; its error is
    :math:`(\sum w)^{-1/2}` multiplied by :math:`\max(1, \sqrt{\chi^2/(n-1)})` (the Birge
    ratio, Birge 1932, Phys. Rev. 40, 207), so frames that scatter more than their stated errors
    do not give an over-confident night.

    Examples
    --------
    >>> import numpy as np
    >>> b = bin_nights(np.array([1.0, 1.1, 2.0]), np.zeros(3), np.array([3.0, 3.2, 3.1]),
    ...                np.array([0.1, 0.1, 0.1]))
    >>> np.round(b.y, 3).tolist(), b.n_frames.tolist()
    ([3.1, 3.1], [2, 1])
    """
    mjd = np.asarray(mjd, dtype=float)
    good = np.isfinite(mjd) & np.isfinite(log_r_h) & np.isfinite(y) & np.isfinite(sy) & (sy > 0)
    labels = np.full(mjd.size, -1)
    if not np.any(good):
        empty = np.array([])
        return NightBins(empty, empty, empty, empty, empty, empty, np.array([], dtype=int),
                         labels)
    idx = np.flatnonzero(good)
    sub = _labels_from_mjd(mjd[idx], gap_d, span_d)
    if split_mjd is not None:
        # Renumber so that (night, side of the split) pairs are the nights.
        side = (mjd[idx] >= split_mjd).astype(int)
        _, sub = np.unique(sub * 2 + side, return_inverse=True)
    labels[idx] = sub
    n = int(sub.max()) + 1
    w = 1.0 / sy[idx] ** 2
    sw = np.bincount(sub, w, n)
    ybar = np.bincount(sub, w * y[idx], n) / sw
    counts = np.bincount(sub, minlength=n)
    chi2 = np.bincount(sub, w * (y[idx] - ybar[sub]) ** 2, n)
    with np.errstate(divide="ignore", invalid="ignore"):
        birge = np.where(counts > 1, np.sqrt(chi2 / np.maximum(counts - 1, 1)), 1.0)
    sy_night = np.sqrt(1.0 / sw) * np.maximum(birge, 1.0)
    t = mjd[idx]
    mean_t = np.bincount(sub, t, n) / counts
    first = np.full(n, np.inf)
    last = np.full(n, -np.inf)
    np.minimum.at(first, sub, t)
    np.maximum.at(last, sub, t)
    lr = np.bincount(sub, log_r_h[idx], n) / counts
    order = np.argsort(mean_t, kind="stable")
    rank = np.empty(n, dtype=int)
    rank[order] = np.arange(n)
    labels[idx] = rank[sub]
    return NightBins(mean_t[order], first[order], last[order], lr[order], ybar[order],
                     sy_night[order], counts[order], labels)
