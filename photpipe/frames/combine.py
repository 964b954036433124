"""Combining a stack of frames pixel by pixel, rejecting outliers.

Each method takes a block of the stack laid out as ``(rows, nx, n_frames)`` (frames on the
last axis, so each pixel's values are contiguous) and returns a `Combined`. The methods are
listed by name in `COMBINE_METHODS`; :func:`~photpipe.frames.build_masters` calls them one
block of rows at a time, which keeps memory bounded whatever the number of frames.
"""

from dataclasses import dataclass

import numpy as np

__all__ = ["Combined", "clipped_mean", "median_combine", "COMBINE_METHODS"]

#: Gaussian sigma per unit of median absolute deviation (common practice).
MAD_TO_SIGMA = 1.482602218505602


@dataclass(frozen=True)
class Combined:
    """Result of combining one block.

    Attributes
    ----------
    value : ndarray, shape (rows, nx), float32
        Combined value per pixel (NaN where no frame had a finite value).
    n_used : ndarray, shape (rows, nx), int16
        Frames kept per pixel.
    n_rejected : int
        Finite values rejected in the block.
    variance_factor : float
        Variance of ``value`` is ``variance_factor * sigma**2 / n_used`` for frames of noise
        ``sigma`` (1 for a mean, pi/2 for a median).
    """

    value: np.ndarray
    n_used: np.ndarray
    n_rejected: int
    variance_factor: float = 1.0


def _pick(sorted_stack, index):
    return np.take_along_axis(sorted_stack, index[..., None], axis=-1)[..., 0]


def _median_of_range(s, lo, hi):
    a = _pick(s, np.maximum((lo + hi - 1) // 2, 0))
    b = _pick(s, np.minimum((lo + hi) // 2, s.shape[-1] - 1))
    return 0.5 * (a + b)


def clipped_mean(stack, *, sigma=3.0, maxiters=5, noise_var=None):
    """Mean of each pixel's values after iterative sigma clipping about the median.

    Parameters
    ----------
    stack : ndarray, shape (rows, nx, n)
        Values of ``n`` frames per pixel; NaN and inf are ignored.
    sigma : float, optional
        Clipping threshold in units of the noise scale.
    maxiters : int, optional
        Largest number of clipping passes.
    noise_var : callable, optional
        ``noise_var(center) -> variance`` of a single frame's value at level ``center`` (the
        CCD noise model). The clipping scale is the larger of its square root and the robust
        scale of the data (1.4826 times the median absolute deviation), so neither a
        wrong gain nor a chance small spread of a few frames clips good values.

    Returns
    -------
    Combined

    Notes
    -----
    The values kept by a symmetric clip about a centre form a contiguous run of each pixel's
    sorted values, so the stack is sorted once and every pass only moves the run's two ends;
    the mean of the run comes from a cumulative sum. Each pass costs O(n) per pixel and gives
    the same result as clipping with masked arrays (the slow oracle in the tests).

    Examples
    --------
    >>> import numpy as np
    >>> stack = np.array([[[10., 11., 9., 10., 500.]]])
    >>> out = clipped_mean(stack, noise_var=lambda c: np.ones_like(c))
    >>> float(out.value[0, 0]), int(out.n_used[0, 0]), out.n_rejected
    (10.0, 4, 1)
    """
    if sigma <= 0:
        msg = f"'sigma' must be positive, got {sigma}"
        raise ValueError(msg)
    stack = np.asarray(stack, dtype=np.float32)
    s = np.sort(stack, axis=-1)  # NaN sorts last
    finite = np.isfinite(s)
    s = np.where(finite, s, np.inf).astype(np.float32, copy=False)  # keep -inf out of the run
    nfin = finite.sum(axis=-1)
    lo = np.zeros(nfin.shape, dtype=np.intp)
    hi = nfin.astype(np.intp)
    empty = hi == 0
    hi_safe = np.maximum(hi, 1)
    center = _median_of_range(s, lo, hi_safe)
    with np.errstate(invalid="ignore"):  # inf - inf where a pixel has no finite value
        dev = np.where(finite, np.abs(s - center[..., None]), np.inf)
    dev.sort(axis=-1)
    mad = _median_of_range(dev, lo, hi_safe)
    del dev
    robust = MAD_TO_SIGMA * np.where(np.isfinite(mad), mad, 0.0)
    for _ in range(maxiters):
        scale = robust
        if noise_var is not None:
            scale = np.maximum(scale, np.sqrt(np.maximum(noise_var(center), 0.0)))
        with np.errstate(invalid="ignore"):
            lower = (center - sigma * scale)[..., None]
            upper = (center + sigma * scale)[..., None]
        new_lo = np.count_nonzero(s < lower, axis=-1)
        new_hi = np.minimum(np.count_nonzero(s <= upper, axis=-1), nfin)
        bad = new_hi <= new_lo
        new_lo = np.where(bad, lo, new_lo)
        new_hi = np.where(bad, hi, new_hi)
        if np.array_equal(new_lo, lo) and np.array_equal(new_hi, hi):
            break
        lo, hi = new_lo, new_hi
        center = _median_of_range(s, lo, np.maximum(hi, 1))
    csum = np.zeros(s.shape[:-1] + (s.shape[-1] + 1,), dtype=np.float64)
    np.cumsum(np.where(finite, s, 0.0), axis=-1, out=csum[..., 1:])
    n_used = hi - lo
    total = _pick(csum, hi) - _pick(csum, lo)
    with np.errstate(invalid="ignore", divide="ignore"):
        value = (total / np.maximum(n_used, 1)).astype(np.float32)
    value[empty] = np.nan
    n_rejected = int(nfin.sum() - n_used.sum())
    return Combined(value=value, n_used=n_used.astype(np.int16), n_rejected=n_rejected)


def median_combine(stack, *, sigma=3.0, maxiters=5, noise_var=None):
    """Median of each pixel's finite values (no rejection; ``sigma`` etc. are ignored).

    Notes
    -----
    For Gaussian noise the variance of the median of ``n`` values is about
    ``(pi / 2) sigma**2 / n`` for large ``n`` (common practice), hence ``variance_factor``.

    Examples
    --------
    >>> import numpy as np
    >>> float(median_combine(np.array([[[1., 2., 300.]]])).value[0, 0])
    2.0
    """
    stack = np.asarray(stack, dtype=np.float32)
    finite = np.isfinite(stack)
    s = np.sort(np.where(finite, stack, np.inf), axis=-1)
    nfin = finite.sum(axis=-1)
    value = _median_of_range(s, np.zeros_like(nfin), np.maximum(nfin, 1)).astype(np.float32)
    value[nfin == 0] = np.nan
    return Combined(value=value, n_used=nfin.astype(np.int16), n_rejected=0,
                    variance_factor=float(np.pi / 2))


#: Combination methods by name.
COMBINE_METHODS = {"clipped_mean": clipped_mean, "median": median_combine}
