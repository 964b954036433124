"""Rotation-averaged magnitude from fluxes folded at the rotation period and binned in phase."""

import numpy as np

__all__ = ["phase_binned_mean"]


def phase_binned_mean(mag, err, *, times=None, period=None, n_bins=8, n_harmonics=None):
    """Return ``(mean flux, its error, flags)`` giving each rotational phase bin equal weight.

    Points are folded at ``period`` (same unit as ``times``); each filled bin contributes its
    mean flux, so phases sampled often do not dominate. A bin's error is the scatter of its
    points over sqrt(n), or the propagated error for a single point. Fewer than half the bins
    filled sets the ``sparse_rotation_coverage`` flag.
    """
    if times is None or period is None:
        msg = "the phase-binned mean needs the observation times and the rotation period"
        raise ValueError(msg)
    f = 10.0 ** (-0.4 * mag)
    sf = 0.4 * np.log(10.0) * f * err
    phase = np.mod((times - times.min()) / period, 1.0)
    which = np.minimum((phase * n_bins).astype(int), n_bins - 1)
    means, errs = [], []
    for k in range(n_bins):
        sel = which == k
        n = int(sel.sum())
        if n == 0:
            continue
        means.append(f[sel].mean())
        formal = np.sqrt(np.sum(sf[sel] ** 2)) / n
        scatter = f[sel].std(ddof=1) / np.sqrt(n) if n > 1 else 0.0
        errs.append(max(formal, scatter))
    means, errs = np.array(means), np.array(errs)
    flags = ("sparse_rotation_coverage",) if means.size < 0.5 * n_bins else ()
    return means.mean(), np.sqrt(np.sum(errs**2)) / means.size, flags
