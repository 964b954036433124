"""The odd-harmonic F test behind the single- versus double-peaked choice.

At a trial frequency ``f`` with ``2m`` harmonics, the odd harmonics are what make the two halves
of the cycle differ; without them the curve repeats at ``2f`` with ``m`` harmonics. The test
compares the two nested linear models, each with a free zero point per site-night.
"""

import numpy as np
from scipy import stats

from photpipe.rotation.fourier_model import design_matrix

__all__ = ["odd_harmonics_f_test", "zero_points_f_test", "repeat_f_test"]


def _weighted_chi2_and_rank(a, y, sw):
    """χ² and column rank of a weighted linear least-squares fit (SVD, relative cut 1e-10)."""
    aw = a * sw[:, None]
    coef, _, rank, _ = np.linalg.lstsq(aw, y * sw, rcond=1e-10)
    resid = y * sw - aw @ coef
    return float(resid @ resid), int(rank)


def _fit_with_offsets(labels, harmonics, y, sw):
    """χ² and rank of the fit of one zero point per label plus ``harmonics``.

    The zero points are projected out exactly first (weighted means per label subtracted from
    the data and every column; Frisch & Waugh 1933, Lovell 1963, from memory), so the least
    squares runs on the harmonic columns only: the same χ² as fitting the one-hot zero-point
    columns beside them, without hundreds of columns for hundreds of site-nights.
    """
    w = sw**2
    n_labels = int(labels.max()) + 1
    wsum = np.bincount(labels, weights=w, minlength=n_labels)

    def centred(v):
        means = np.bincount(labels, weights=w * v, minlength=n_labels) / wsum
        return v - means[labels]

    y_c = centred(y)
    if harmonics.shape[1] == 0:
        return float(np.sum(w * y_c**2)), n_labels
    h_c = np.column_stack([centred(harmonics[:, j]) for j in range(harmonics.shape[1])])
    chi2, rank = _weighted_chi2_and_rank(h_c, y_c, sw)
    return chi2, n_labels + rank


def odd_harmonics_f_test(t, y, dy, frequency, order, *, blocks=None, fitted_params=1):
    """Return the p-value that the odd harmonics at ``frequency`` are noise, and the F test.

    Parameters
    ----------
    t, y, dy : ndarray, shape (n,)
        Epochs (days), magnitudes and their 1-σ errors.
    frequency : float or sequence of float
        Frequency of the curve with two possibly different halves (1/day): the double-peaked
        interpretation. Given several (e.g. the best frequency of each model fitted on its
        own), each model keeps the one that fits it best, so neither is judged at a frequency
        tuned to the other.
    order : int
        Harmonics ``m`` of the single-peaked curve at ``2 * frequency``; the double-peaked one
        has ``2m``.
    blocks : ndarray of int, shape (n,), optional
        Site-night of each point (see :func:`~photpipe.rotation.fit.night_blocks`). Each block
        gets its own zero point in both models; None gives one zero point for all points.
    fitted_params : int, optional
        Parameters fitted besides the linear ones (the frequency), taken off the degrees of
        freedom.

    Returns
    -------
    p : float
        ``P(F >= F_obs)`` under the single-peaked model; NaN when the odd harmonics add no
        direction the zero points and even harmonics do not already span, or no degrees of
        freedom are left.
    f_stat : float
        The F statistic (NaN when untestable).
    dof : tuple of int
        ``(numerator, denominator)`` degrees of freedom.

    Notes
    -----
    The extra-sum-of-squares F test of nested linear least-squares models (common practice;
    e.g. Draper & Smith 1998, Applied Regression Analysis, 3rd ed., ch. 6, from memory)::

        F = [(χ²_single - χ²_double) / ν1] / [χ²_double / ν2]

    with ``ν1`` the rank the odd harmonics add and ``ν2 = n - rank(double) - fitted_params``.
    F follows the F(ν1, ν2) distribution only when the residuals are independent. A zero-point
    error shared by a site-night (a calibration or extinction error the stated errors leave
    out) breaks that: the odd harmonics of a long period can take up part of the nightly
    offsets, F grows, and the period is wrongly doubled. Fitting a free zero point per
    night, as Harris et al. (1989, Icarus 77, 171) do in their Fourier-series lightcurve fit
    (from memory), removes those offsets from both models before the harmonics are compared;
    the odd harmonics are then detected only from the shape they give within and across
    nights, and the residuals left are close to independent again.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(2)
    >>> t = np.sort(rng.uniform(0, 6, 300))
    >>> blocks = np.floor(t).astype(int)
    >>> even = 0.2 * np.cos(4 * np.pi * 1.3 * t) + rng.normal(0, 0.02, 300)
    >>> odd = even + 0.05 * np.cos(2 * np.pi * 1.3 * t)
    >>> bool(odd_harmonics_f_test(t, even, np.full(300, 0.02), 1.3, 1, blocks=blocks)[0] > 1e-3)
    True
    >>> bool(odd_harmonics_f_test(t, odd, np.full(300, 0.02), 1.3, 1, blocks=blocks)[0] < 1e-6)
    True
    """
    fits = {"double": [], "single": []}
    y = np.asarray(y, dtype=float)
    for f in np.atleast_1d(np.asarray(frequency, dtype=float)):
        sw, offsets, harmonics, k = _columns(t, dy, f, order, blocks)
        fits["double"].append(_fit_with_offsets(offsets, harmonics, y, sw))
        fits["single"].append(_fit_with_offsets(offsets, harmonics[:, k % 2 == 0], y, sw))
    return _nested_f_test(min(fits["double"]), min(fits["single"]), y.size, fitted_params)


def repeat_f_test(t, y, dy, frequency, order, repeats, *, blocks=None, fitted_params=1):
    """Return the p-value that the curve at ``frequency`` is ``repeats`` identical parts.

    The curve with ``order`` harmonics of ``frequency`` is compared with the same curve keeping
    only the harmonics that are multiples of ``repeats`` (the curve at ``repeats * frequency``);
    the extra-sum-of-squares F test of :func:`odd_harmonics_f_test` (which is the case
    ``repeats = 2``) decides. Returns ``(p, f_stat, dof)``; NaN when untestable.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(2)
    >>> t = np.sort(rng.uniform(0, 6, 300))
    >>> y = 0.2 * np.cos(2 * np.pi * 3 * 1.3 * t) + rng.normal(0, 0.02, 300)
    >>> bool(repeat_f_test(t, y, np.full(300, 0.02), 1.3, 3, 3)[0] > 1e-3)
    True
    >>> y = y + 0.05 * np.cos(2 * np.pi * 1.3 * t)
    >>> bool(repeat_f_test(t, y, np.full(300, 0.02), 1.3, 3, 3)[0] < 1e-6)
    True
    """
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    sw = 1.0 / np.asarray(dy, dtype=float)
    harmonics = design_matrix(t, frequency, order, t0=float(np.mean(t)))[:, 1:]
    k = np.repeat(np.arange(1, order + 1), 2)
    offsets = _offsets(t, blocks)
    full = _fit_with_offsets(offsets, harmonics, y, sw)
    kept = _fit_with_offsets(offsets, harmonics[:, k % repeats == 0], y, sw)
    return _nested_f_test(full, kept, y.size, fitted_params)


def _offsets(t, blocks):
    """Zero-point label of each point: 0 for all, or its block numbered from 0."""
    if blocks is None:
        return np.zeros(t.size, dtype=int)
    _, inverse = np.unique(np.asarray(blocks), return_inverse=True)
    return inverse.ravel()


def zero_points_f_test(t, y, dy, frequency, order, blocks, *, fitted_params=1):
    """Return the p-value that all site-nights share one zero point, and the F test.

    The curve at ``frequency`` with ``2 * order`` harmonics is fitted with one zero point and
    with one per block; the same extra-sum-of-squares F test as
    :func:`odd_harmonics_f_test` compares the two. Parameters and returns as there.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(2)
    >>> t = np.sort(rng.uniform(0, 6, 300))
    >>> blocks = np.floor(t).astype(int)
    >>> y = 0.2 * np.cos(4 * np.pi * 1.3 * t) + rng.normal(0, 0.02, 300)
    >>> bool(zero_points_f_test(t, y, np.full(300, 0.02), 1.3, 1, blocks)[0] > 1e-3)
    True
    >>> y = y + np.array([0.0, 0.03, -0.02, 0.01, 0.04, -0.03])[blocks]
    >>> bool(zero_points_f_test(t, y, np.full(300, 0.02), 1.3, 1, blocks)[0] < 1e-6)
    True
    """
    sw, offsets, harmonics, _ = _columns(t, dy, frequency, order, blocks)
    y = np.asarray(y, dtype=float)
    per_block = _fit_with_offsets(offsets, harmonics, y, sw)
    one = _fit_with_offsets(np.zeros(sw.size, dtype=int), harmonics, y, sw)
    return _nested_f_test(per_block, one, y.size, fitted_params)


def _columns(t, dy, frequency, order, blocks):
    """Weights, zero-point columns, harmonic columns and each harmonic column's number."""
    t = np.asarray(t, dtype=float)
    sw = 1.0 / np.asarray(dy, dtype=float)
    harmonics = design_matrix(t, frequency, 2 * order, t0=float(np.mean(t)))[:, 1:]
    offsets = _offsets(t, blocks)
    return sw, offsets, harmonics, np.repeat(np.arange(1, 2 * order + 1), 2)


def _nested_f_test(big, small, n_points, fitted_params):
    """Extra-sum-of-squares F test from the (χ², rank) of a model and one nested in it."""
    (chi2_big, rank_big), (chi2_small, rank_small) = big, small
    nu1 = rank_big - rank_small
    nu2 = n_points - rank_big - fitted_params
    if nu1 <= 0 or nu2 <= 0 or not chi2_big > 0:
        return float("nan"), float("nan"), (nu1, nu2)
    f_stat = (max(chi2_small - chi2_big, 0.0) / nu1) / (chi2_big / nu2)
    return float(stats.f.sf(f_stat, nu1, nu2)), float(f_stat), (nu1, nu2)
