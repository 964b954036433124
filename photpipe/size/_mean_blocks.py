"""Rotation-averaged magnitude when the rotation period is not known: mean flux, honest error."""

import numpy as np
from scipy import stats

__all__ = ["night_block_mean"]

# A gap longer than this (days) starts a new night (as the rotation stage counts nights).
_NIGHT_GAP_D = 0.3
# From this many nights on, their scatter measures the rotational sampling error (project
# choice, measured: with 4 nights or more the pulls have σ near 1, see tests/size).
_MIN_NIGHTS_FOR_SCATTER = 4


def _nights(times):
    order = np.argsort(times)
    labels = np.empty(times.size, dtype=int)
    labels[order] = np.concatenate([[0], np.cumsum(np.diff(times[order]) > _NIGHT_GAP_D)])
    return labels


def night_block_mean(mag, err, *, times=None, period=None, n_bins=None, n_harmonics=None):
    """Return ``(mean flux, its error, flags)`` without a rotation model.

    The mean is that of all fluxes, equal weights. Its error must cover the unknown rotational
    sampling: the points of one night sample one stretch of the rotation, so they are not
    independent draws of the rotational phase. The error is the largest of

    - the propagated measurement error, ``sqrt(Σσ_F²)/N``;
    - with four nights or more, the scatter of the nightly mean fluxes over ``sqrt(n_nights)``
      times Student's t (nights as independent samples of the rotation);
    - with fewer nights, the rotational term ``ΔF / (2 sqrt(3 n_nights))``: a night's mean
      can lie anywhere within ``±ΔF/2`` of the rotation mean, whose standard deviation for a
      uniform spread is ``ΔF / (2 sqrt 3)``, and nights average it down as
      ``1/sqrt(n_nights)``. ``ΔF`` is estimated as ``2 sqrt(2) s_rot``, the peak-to-peak of a
      sinusoid of the points' rotational scatter ``s_rot² = var(F) - <σ_F²>`` (common
      practice; the uniform-spread bound is a project choice).

    Flags ``rotation_unknown``, and ``single_night`` for one night.
    """
    f = 10.0 ** (-0.4 * mag)
    sf = 0.4 * np.log(10.0) * f * err
    n = f.size
    mean = f.mean()
    formal = np.sqrt(np.sum(sf**2)) / n
    flags = ["rotation_unknown"]
    if times is None:
        labels = np.zeros(n, dtype=int)
    else:
        labels = _nights(np.asarray(times, dtype=float))
    names = np.unique(labels)
    n_nights = names.size
    if n_nights == 1:
        flags.append("single_night")
    night_means = np.array([f[labels == k].mean() for k in names])
    if n_nights >= _MIN_NIGHTS_FOR_SCATTER:
        # Student's t for the few nights behind the scatter keeps the 68 % coverage
        between = (night_means.std(ddof=1) / np.sqrt(n_nights)
                   * stats.t.ppf(0.8413, n_nights - 1))
        return mean, float(max(formal, between)), tuple(flags)
    s_rot = np.sqrt(max(0.0, f.var(ddof=1) - np.mean(sf**2))) if n > 1 else 0.0
    rotational = 2 * np.sqrt(2) * s_rot / (2 * np.sqrt(3 * n_nights))
    return mean, float(max(formal, rotational)), tuple(flags)
