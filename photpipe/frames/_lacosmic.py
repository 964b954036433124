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

from ._medians import Buffers, separable_median

__all__ = ["laplacian_cosmics"]

_NOISE_FLOOR = 1e-5      # electron**2: keeps the square root and the division finite
_FINE_FLOOR = 0.01       # fine-structure floor of the paper's script
_CHUNK = 16384           # candidates whose fine structure is formed at once (memory ~ 30 MB)


def _clipped_laplacian(image, rows=32):
    """``L+`` of the 2x2 sub-sampled image, block-averaged back to the frame's pixels.

    Worked in blocks of ``rows`` rows, each copied with a one-pixel edge (the frame's edge
    pixels repeated), so the temporary arrays stay in the processor's cache.
    """
    total = np.empty_like(image)
    ny, nx = image.shape
    p = np.empty((rows + 2, nx + 2), image.dtype)
    centre = np.empty((rows, nx), image.dtype)
    term = np.empty_like(centre)
    acc = np.empty_like(centre)
    for r0 in range(0, ny, rows):
        r1 = min(ny, r0 + rows)
        n = r1 - r0
        # rows r0 - 1 .. r1 of the frame, edge rows and columns repeated past the frame
        block = p[:n + 2]
        src = np.clip(np.arange(r0 - 1, r1 + 1), 0, ny - 1)
        block[:, 1:-1] = image[src]
        block[:, 0], block[:, -1] = block[:, 1], block[:, -2]
        c, t, a = centre[:n], term[:n], acc[:n]
        np.multiply(image[r0:r1], 2.0, out=c)
        up, down = block[:-2, 1:-1], block[2:, 1:-1]
        left, right = block[1:-1, :-2], block[1:-1, 2:]
        a[...] = 0.0
        for vertical in (up, down):
            for horizontal in (left, right):
                np.subtract(c, vertical, out=t)
                t -= horizontal
                np.maximum(t, 0.0, out=t)
                a += t
        np.divide(a, 4.0, out=total[r0:r1])
    return total


def _reflected(index, n):
    """Indices past ``0 .. n-1`` mirrored about the end pixels (`numpy.pad` mode "reflect")."""
    index = np.abs(index)
    return np.where(index > n - 1, 2 * (n - 1) - index, index)


def _fine_structure(image, ys, xs):
    """``M3(I) - M7(M3(I))`` at the pixels ``(ys, xs)``, with exact medians.

    Each pixel's 9x9 neighbourhood is gathered by index (mirrored past the frame's edges), so
    no padded copy of the frame is made.
    """
    ny, nx = image.shape
    offsets = np.arange(-4, 5)
    out = np.empty(len(ys), dtype=np.float64)
    for start in range(0, len(ys), _CHUNK):
        rows = _reflected(ys[start:start + _CHUNK, None] + offsets, ny)
        cols = _reflected(xs[start:start + _CHUNK, None] + offsets, nx)
        block = image[rows[:, :, None], cols[:, None, :]]                          # (n, 9, 9)
        m3 = np.median(sliding_window_view(block, (3, 3), axis=(1, 2)), axis=(-2, -1))
        out[start:start + _CHUNK] = m3[:, 3, 3] - np.median(m3, axis=(1, 2))
    return out


def _neighbourhood(ys, xs, shape, reach):
    """The (2 reach + 1)**2 pixels around each pixel: rows, columns (clipped), inside frame."""
    offsets = np.arange(-reach, reach + 1)
    rows, cols = np.broadcast_arrays(ys[:, None, None] + offsets[None, :, None],
                                     xs[:, None, None] + offsets[None, None, :])
    inside = (rows >= 0) & (rows < shape[0]) & (cols >= 0) & (cols < shape[1])
    return np.clip(rows, 0, shape[0] - 1), np.clip(cols, 0, shape[1] - 1), inside


def _replace_hits(image, hits, usable, fallback):
    """Set the pixels ``hits`` (coordinates) of ``image`` to their 5x5 neighbours' mean, in place.

    Only neighbours inside the frame where ``usable`` is true count; a pixel with none takes
    ``fallback()`` (the frame's median). Every value is computed before any is set.
    """
    ys, xs = hits
    rows, cols, weight = _neighbourhood(ys, xs, image.shape, 2)
    weight &= usable[rows, cols]
    count = weight.sum(axis=(1, 2))
    total = np.where(weight, image[rows, cols], 0.0).sum(axis=(1, 2))
    with np.errstate(invalid="ignore", divide="ignore"):
        values = total / count
    if not np.all(count):
        values[count == 0] = fallback()
    image[ys, xs] = values
    return image


def _grown(ys, xs, shape, allowed):
    """Pixels next to ``(ys, xs)`` (8-connected, themselves included) where ``allowed`` holds.

    Returned as sorted unique coordinates; ``allowed(rows, cols)`` gives a boolean per pixel.
    """
    rows, cols, inside = _neighbourhood(ys, xs, shape, 1)
    flat = np.unique(rows[inside] * shape[1] + cols[inside])
    gy, gx = np.divmod(flat, shape[1])
    ok = allowed(gy, gx)
    return gy[ok], gx[ok]


def _median_of(values, usable, default):
    """A function giving the median of ``values[usable]`` when first asked.

    Taken on every 4th row and column (a 16th of the pixels): it only fills the inside of large
    bad areas, which are never searched, and the whole frame's median costs ~0.1 s at 2048x2048.
    """
    cache = []

    def get():
        if not cache:
            sub, ok = values[::4, ::4], usable[::4, ::4]
            if not ok.any():
                sub, ok = values, usable
            cache.append(float(np.median(sub[ok])) if ok.any() else default)
        return cache[0]
    return get


def laplacian_cosmics(data, variance, bad, *, sigclip=4.5, sigfrac=0.3, objlim=5.0, niter=4,
                      overwrite_input=False):
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
    overwrite_input : bool, optional
        Work in ``data`` and ``variance`` themselves (float32 arrays the caller no longer
        needs: hits and bad pixels are replaced in them) instead of in copies.

    Returns
    -------
    ndarray of bool
    """
    # hits are replaced in place: in copies unless the caller gives its arrays up
    take = np.asarray if overwrite_input else np.array
    image, var = take(data, dtype=np.float32), take(variance, dtype=np.float32)
    bad = np.asarray(bad, dtype=bool)
    good = ~bad
    hits = np.zeros(image.shape, dtype=bool)
    fallback_image = _median_of(image, good, 0.0)
    fallback_var = _median_of(var, good, 1.0)
    if bad.any():  # filled from their neighbours, so their edges do not look like hits
        where = np.nonzero(bad)
        _replace_hits(image, where, good, fallback_image)
        _replace_hits(var, where, good, fallback_var)
    buffers = Buffers()     # the medians' work arrays, allocated once for all passes
    for _ in range(int(niter)):
        noise = separable_median(var, 5, buffers=buffers)
        np.sqrt(np.maximum(noise, _NOISE_FLOOR, out=noise), out=noise)
        sp = _clipped_laplacian(image)
        sp /= 2.0 * noise
        smooth = separable_median(sp, 5, buffers=buffers)
        sp -= smooth
        buffers.give(smooth)
        ys, xs = np.nonzero(sp > sigclip)
        ys, xs = ys[good[ys, xs]], xs[good[ys, xs]]
        if len(ys):
            fine = _fine_structure(image, ys, xs) / noise[ys, xs]
            fine = np.maximum(fine, _FINE_FLOOR)
            keep = sp[ys, xs] / fine > objlim
            ys, xs = ys[keep], xs[keep]
        buffers.give(noise)
        ys, xs = _grown(ys, xs, image.shape, lambda y, x: good[y, x] & (sp[y, x] > sigclip))
        ys, xs = _grown(ys, xs, image.shape,
                        lambda y, x: good[y, x] & (sp[y, x] > sigfrac * sigclip))
        if hits[ys, xs].all():
            break
        hits[ys, xs] = True
        where = np.nonzero(hits)
        _replace_hits(image, where, good & ~hits, fallback_image)
        _replace_hits(var, where, good & ~hits, fallback_var)
    return hits
