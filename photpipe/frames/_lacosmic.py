"""L.A.Cosmic (van Dokkum 2001, PASP 113, 1420): cosmic-ray hits by Laplacian edge detection.

Written here from the paper, with the frame's own variance plane as the noise model. Each pass:

1. ``L+``: the Laplacian of the image sub-sampled 2x2, negative values set to zero, block-averaged
   back (paper eq. 5-6). Sub-sampling makes every sub-pixel's Laplacian ``2 p - p_v - p_h``, with
   ``p_v`` and ``p_h`` the pixel's neighbours on the sub-pixel's sides, so ``L+`` is the mean of
   four clipped combinations, computed on the frame itself (no sub-sampled copy).
2. ``S = L+ / (2 N)``, ``N`` the square root of the median-filtered variance (eq. 7; the 2 is the
   sub-sampling factor); ``S' = S - M5(S)`` removes sampling structure of smooth sources (eq. 8).
3. Candidates ``S' > sigclip``; kept where ``S' / F > objlim``, ``F = (M3(I) - M7(M3(I))) / N``
   the fine-structure image (eq. 9), floored at 0.01. Dividing ``F`` by the noise and comparing
   with ``S'`` rather than ``L+`` follows the paper's released IRAF script (common practice).
   ``F`` is computed only at candidates, with exact 3x3 and 7x7 medians.
4. Neighbours of hits are added where ``S' > sigclip``, then their neighbours where
   ``S' > sigfrac * sigclip`` (the paper's growth step).
5. Hits are replaced by the mean of their unflagged 5x5 neighbours and the next pass starts.

Bad pixels are filled the same way before the first pass, so their edges are not taken for hits.

The 5x5 medians of steps 2 are separable (rows then columns, `photpipe.frames._medians`), a common
speed-up.
"""

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from ._medians import separable_median

__all__ = ["laplacian_cosmics"]

_NOISE_FLOOR = 1e-5      # electron**2: keeps the square root and the division finite
_FINE_FLOOR = 0.01       # fine-structure floor of the paper's script
_CHUNK = 16384           # candidates whose fine structure is formed at once (memory ~ 30 MB)


def _clipped_laplacian(image):
    """``L+`` of the 2x2 sub-sampled image, block-averaged back to the frame's pixels."""
    p = np.pad(image, 1, mode="edge")
    centre = 2.0 * image
    up, down = p[:-2, 1:-1], p[2:, 1:-1]
    left, right = p[1:-1, :-2], p[1:-1, 2:]
    total = np.zeros_like(image)
    for vertical in (up, down):
        for horizontal in (left, right):
            total += np.maximum(centre - vertical - horizontal, 0.0)
    return total / 4.0


def _fine_structure(image, ys, xs):
    """``M3(I) - M7(M3(I))`` at the pixels ``(ys, xs)``, with exact medians."""
    padded = np.pad(image, 4, mode="reflect")
    windows = sliding_window_view(padded, (9, 9))
    out = np.empty(len(ys), dtype=np.float64)
    for start in range(0, len(ys), _CHUNK):
        block = windows[ys[start:start + _CHUNK], xs[start:start + _CHUNK]]      # (n, 9, 9)
        m3 = np.median(sliding_window_view(block, (3, 3), axis=(1, 2)), axis=(-2, -1))
        out[start:start + _CHUNK] = m3[:, 3, 3] - np.median(m3, axis=(1, 2))
    return out


def _replace_hits(image, hits, usable, fallback):
    """``image`` with the pixels ``hits`` (coordinates) set to the mean of their 5x5 neighbours.

    Only ``usable`` neighbours count; a pixel with none takes ``fallback()`` (the frame's median).
    """
    ys, xs = hits
    padded = sliding_window_view(np.pad(image, 2, mode="edge"), (5, 5))[ys, xs]
    weight = sliding_window_view(np.pad(usable, 2, mode="constant"), (5, 5))[ys, xs]
    count = weight.sum(axis=(1, 2))
    total = np.where(weight, padded, 0.0).sum(axis=(1, 2))
    out = image.copy()
    with np.errstate(invalid="ignore", divide="ignore"):
        values = total / count
    if not np.all(count):
        values[count == 0] = fallback()
    out[ys, xs] = values
    return out


def _grown(mask, allowed):
    """Pixels of ``allowed`` within one pixel (8-connected) of a pixel of ``mask``."""
    ys, xs = np.nonzero(mask)
    out = np.zeros_like(mask)
    ny, nx = mask.shape
    for dy in (-1, 0, 1):
        for dx in (-1, 0, 1):
            out[np.clip(ys + dy, 0, ny - 1), np.clip(xs + dx, 0, nx - 1)] = True
    return out & allowed


def _median_of(values, usable, default):
    """A function giving the median of ``values[usable]`` when first asked (it costs ~15 ms)."""
    cache = []

    def get():
        if not cache:
            cache.append(float(np.median(values[usable])) if usable.any() else default)
        return cache[0]
    return get


def laplacian_cosmics(data, variance, bad, *, sigclip=4.5, sigfrac=0.3, objlim=5.0, niter=4):
    """Boolean mask of cosmic-ray hits by L.A.Cosmic.

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        Image in electrons, sky included, finite everywhere (bad pixels set to anything finite).
    variance : ndarray, shape (ny, nx)
        Its variance in electron**2, finite everywhere.
    bad : ndarray of bool, shape (ny, nx)
        Pixels that are never hits and never used to replace one.
    sigclip : float, optional
        Detection limit on ``S'`` in units of the noise.
    sigfrac : float, optional
        Fraction of ``sigclip`` for the neighbours of hits.
    objlim : float, optional
        Minimum contrast of a hit against the fine-structure image (spares stars).
    niter : int, optional
        Largest number of passes; the search stops early when a pass finds nothing new.

    Returns
    -------
    ndarray of bool
    """
    image = np.asarray(data, dtype=np.float32)
    var = np.asarray(variance, dtype=np.float32)
    bad = np.asarray(bad, dtype=bool)
    good = ~bad
    hits = np.zeros(image.shape, dtype=bool)
    fallback_image = _median_of(image, good, 0.0)
    fallback_var = _median_of(var, good, 1.0)
    if bad.any():  # filled from their neighbours, so their edges do not look like hits
        where = np.nonzero(bad)
        image = _replace_hits(image, where, good, fallback_image)
        var = _replace_hits(var, where, good, fallback_var)
    for _ in range(int(niter)):
        noise = np.sqrt(np.maximum(separable_median(var, 5), _NOISE_FLOOR))
        s = _clipped_laplacian(image) / (2.0 * noise)
        sp = s - separable_median(s, 5)
        del s
        candidates = (sp > sigclip) & good
        ys, xs = np.nonzero(candidates)
        if len(ys):
            fine = _fine_structure(image, ys, xs) / noise[ys, xs]
            fine = np.maximum(fine, _FINE_FLOOR)
            keep = sp[ys, xs] / fine > objlim
            candidates[ys[~keep], xs[~keep]] = False
        found = _grown(candidates, good & (sp > sigclip))
        found = _grown(found, good & (sp > sigfrac * sigclip))
        if not (found & ~hits).any():
            break
        hits |= found
        where, usable = np.nonzero(hits), good & ~hits
        image = _replace_hits(image, where, usable, fallback_image)
        var = _replace_hits(var, where, usable, fallback_var)
    return hits
