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
   Only the replaced pixels changed, so a later pass searches only the 32x32 blocks within 6
   pixels of them, each cut with an 8-pixel margin (`_detect_near`); it finds there what the
   whole frame would give, and elsewhere the whole frame would give the hits already flagged.

Bad pixels are filled the same way before the first pass, so their edges are not taken for hits.

The 5x5 medians of steps 2 are separable (rows then columns, `photpipe.frames._medians`), a common
speed-up.
"""

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from ._medians import Buffers, _network_median, separable_median

__all__ = ["laplacian_cosmics", "sparse_nonzero"]

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


def sparse_nonzero(mask):
    """``np.nonzero`` of a 2-D boolean array with few True values, ~5 times faster.

    The array is read 8 bytes at a time (as 64-bit words); only the words holding a True are
    looked into. The same coordinates in the same (row-major) order.
    """
    flat = np.ascontiguousarray(mask).reshape(-1)
    n8 = flat.size // 8 * 8
    words = np.flatnonzero(flat[:n8].view(np.uint64))
    near = (words[:, None] * 8 + np.arange(8)).ravel()
    found = np.concatenate([near[flat[near]], n8 + np.flatnonzero(flat[n8:])])
    return np.divmod(found, mask.shape[1])


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
        # medians of odd counts are their middle values: a network of 9, a partition of 49
        m3 = _network_median([block[:, dy:dy + 7, dx:dx + 7]
                              for dy in range(3) for dx in range(3)], 9)       # (n, 7, 7)
        m7 = np.partition(m3.reshape(len(rows), 49), 24, axis=-1)[:, 24]
        out[start:start + _CHUNK] = m3[:, 3, 3] - m7
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


def _detect(image, var, good, opts, buffers):
    """One pass of steps 2-4 on arrays of one frame or mosaic: the hit pixels found (ys, xs)."""
    sigclip, sigfrac, objlim = opts
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
    return _grown(ys, xs, image.shape, lambda y, x: good[y, x] & (sp[y, x] > sigfrac * sigclip))


#: Side of the blocks over which the first pass bounds the noise from below (`_screened`).
_SCREEN_BLOCK = 32
#: Above this share of the frame's pixels passing the screen, the first pass is worked densely
#: (the pixel-by-pixel medians would cost more than the whole-frame ones).
_SCREEN_MAX_SHARE = 0.02
_OFF5 = np.arange(-2, 3)


def _separable5(block):
    """Median of 5 along each block's rows, then of those 5 (as `separable_median`), (n, 5, 5)."""
    along_rows = _network_median([block[:, :, k] for k in range(5)], 5)
    return _network_median([along_rows[:, k] for k in range(5)], 5)


def _median5_at(windows, ys, xs):
    """`separable_median` of 5 (rows, then columns, edges repeated) at the pixels (ys, xs).

    ``windows`` are the 5x5 windows of the frame padded by 2 repeated edge pixels. The median
    of five values is one of them, so this equals the whole-frame median there.
    """
    return _separable5(windows[ys, xs])


class _SharpnessAt:
    """``N`` and ``S'`` of `_detect` at chosen pixels, equal to their whole-frame values.

    Every step of ``S' = L+ / (2 N) - M5(L+ / (2 N))`` is an elementwise float32 operation or
    a median (one of its inputs), so worked pixel by pixel it gives the same numbers.
    """

    def __init__(self, laplacian, var):
        self.laplacian, self.shape = laplacian, var.shape
        self._var_windows = sliding_window_view(np.pad(var, 2, mode="edge"), (5, 5))

    def noise(self, ys, xs):
        """``N``: square root of the 5x5 median of the variance (floored)."""
        median = _median5_at(self._var_windows, ys, xs)
        return np.sqrt(np.maximum(median, np.float32(_NOISE_FLOOR)))

    def sharpness(self, ys, xs):
        """``S' = S - M5(S)`` at the pixels (ys, xs)."""
        ny, nx = self.shape
        rows = np.clip(ys[:, None] + _OFF5, 0, ny - 1)
        cols = np.clip(xs[:, None] + _OFF5, 0, nx - 1)
        # S once per pixel of the windows (they overlap on a star)
        unique, inverse = np.unique(rows[:, :, None] * nx + cols[:, None, :], return_inverse=True)
        uy, ux = np.divmod(unique, nx)
        s = self.laplacian[uy, ux] / (2.0 * self.noise(uy, ux))
        block = s[inverse.reshape(len(ys), 5, 5)]                               # (n, 5, 5)
        return block[:, 2, 2] - _separable5(block)


def _noise_lower_bound(var):
    """A lower bound of ``N`` for each `_SCREEN_BLOCK`-square block of pixels.

    A pixel's 5x5 median is at least the least variance within 2 pixels of it, which lies in
    its block or the eight around it.
    """
    ny, nx = var.shape
    b = _SCREEN_BLOCK
    starts = np.arange(0, nx, b)
    least = np.array([np.minimum.reduceat(var[r0:r0 + b].min(axis=0), starts)
                      for r0 in range(0, ny, b)])
    padded = np.pad(least, 1, mode="edge")
    around = padded[1:-1, 1:-1].copy()
    for dy in (0, 1, 2):
        for dx in (0, 1, 2):
            np.minimum(around, padded[dy:dy + least.shape[0], dx:dx + least.shape[1]],
                       out=around)
    return np.sqrt(np.maximum(around, np.float32(_NOISE_FLOOR)))


def _screen(laplacian, var, sigclip):
    """Pixels (ys, xs) that may have ``S' > sigclip``: every one that does, and a few more.

    ``M5(S) >= 0`` (``L+`` is never negative), so ``S' <= S <= L+ / (2 N_low)`` with
    ``N_low`` the block's lower bound of the noise; the factor 0.999 covers float32 rounding.
    """
    bound = _noise_lower_bound(var) * np.float32(2.0 * sigclip * 0.999)
    b = _SCREEN_BLOCK
    nx = var.shape[1]
    found_y, found_x = [], []
    for i, r0 in enumerate(range(0, var.shape[0], b)):
        limit = np.repeat(bound[i], b)[:nx]
        ys, xs = sparse_nonzero(laplacian[r0:r0 + b] > limit)
        found_y.append(ys + r0)
        found_x.append(xs)
    return np.concatenate(found_y), np.concatenate(found_x)


def _detect_screened(image, var, good, opts, buffers):
    """`_detect` on the whole frame, with ``N`` and ``S'`` formed only where a hit may be.

    ``L+`` is made over the frame; the pixels `_screen` passes and the hits' neighbours get
    their ``N`` and ``S'`` from `_SharpnessAt`. The same hits as `_detect`; when the screen
    passes more than `_SCREEN_MAX_SHARE` of the frame, `_detect` itself runs.
    """
    sigclip, sigfrac, objlim = opts
    laplacian = _clipped_laplacian(image)
    ys, xs = _screen(laplacian, var, sigclip)
    if len(ys) > _SCREEN_MAX_SHARE * image.size:
        del laplacian
        return _detect(image, var, good, opts, buffers)
    at = _SharpnessAt(laplacian, var)
    if len(ys):
        keep = good[ys, xs]
        ys, xs = ys[keep], xs[keep]
        sp = at.sharpness(ys, xs)
        keep = sp > sigclip
        ys, xs, sp = ys[keep], xs[keep], sp[keep]
    if len(ys):
        fine = _fine_structure(image, ys, xs) / at.noise(ys, xs)
        fine = np.maximum(fine, _FINE_FLOOR)
        keep = sp / fine > objlim
        ys, xs = ys[keep], xs[keep]

    def above(level):
        def allowed(y, x):
            ok = good[y, x]
            ok[ok] = at.sharpness(y[ok], x[ok]) > level
            return ok
        return allowed
    ys, xs = _grown(ys, xs, image.shape, above(sigclip))
    return _grown(ys, xs, image.shape, above(sigfrac * sigclip))


#: Later passes are worked in blocks of `_BLOCK` x `_BLOCK` pixels about the pixels the previous
#: pass changed, each cut with a margin of `_MARGIN`: a pixel's hit decision reads the image
#: within 6 pixels (Laplacian 1, two 5x5 medians 2 + 2, growth 2) and the 9x9 fine structure, so
#: pixels `_MARGIN` inside a cut are decided exactly as on the whole frame, and a decision can
#: change only within `_REACH` of a changed pixel.
_BLOCK = 32
_MARGIN = 8
_REACH = 6


def _blocks_near(changed, shape):
    """Block indices (by, bx) within `_REACH` of the changed pixels (ys, xs)."""
    ys, xs = changed
    found = set()
    for dy in (-_REACH, _REACH):
        for dx in (-_REACH, _REACH):
            by = np.clip(ys + dy, 0, shape[0] - 1) // _BLOCK
            bx = np.clip(xs + dx, 0, shape[1] - 1) // _BLOCK
            found.update(zip(by.tolist(), bx.tolist()))
    return sorted(found)


def _detect_near(image, var, good, changed, opts, buffers):
    """`_detect` on the blocks about ``changed``: the same hits there as on the whole frame.

    Blocks whose cut stays inside the frame are laid side by side in one mosaic and searched
    at once (neighbours in the mosaic touch only each other's margins); a cut that reaches the
    frame's edge is searched alone, clipped there, so its edge is handled as the frame's.
    """
    ny, nx = image.shape
    side = _BLOCK + 2 * _MARGIN
    inner, edge = [], []
    for by, bx in _blocks_near(changed, image.shape):
        y0, x0 = by * _BLOCK, bx * _BLOCK
        y1, x1 = min(y0 + _BLOCK, ny), min(x0 + _BLOCK, nx)
        cut = (y0 - _MARGIN, y1 + _MARGIN, x0 - _MARGIN, x1 + _MARGIN)
        inside = cut[0] >= 0 and cut[2] >= 0 and cut[1] <= ny and cut[3] <= nx
        (inner if inside and y1 - y0 == x1 - x0 == _BLOCK else edge).append((y0, y1, x0, x1))
    found = []
    if inner:
        per_row = int(np.ceil(np.sqrt(len(inner))))
        rows = int(np.ceil(len(inner) / per_row))
        shape = (rows * side, per_row * side)
        m_image, m_var = np.zeros(shape, image.dtype), np.ones(shape, var.dtype)
        m_good = np.zeros(shape, bool)
        places = []
        for k, (y0, y1, x0, x1) in enumerate(inner):
            my, mx = (k // per_row) * side, (k % per_row) * side
            src = (slice(y0 - _MARGIN, y1 + _MARGIN), slice(x0 - _MARGIN, x1 + _MARGIN))
            dst = (slice(my, my + side), slice(mx, mx + side))
            m_image[dst], m_var[dst], m_good[dst] = image[src], var[src], good[src]
            places.append((my, mx, y0, x0))
        ys, xs = _detect_screened(m_image, m_var, m_good, opts, buffers)
        for my, mx, y0, x0 in places:
            sel = ((ys >= my + _MARGIN) & (ys < my + _MARGIN + _BLOCK)
                   & (xs >= mx + _MARGIN) & (xs < mx + _MARGIN + _BLOCK))
            found.append((ys[sel] - my - _MARGIN + y0, xs[sel] - mx - _MARGIN + x0))
    for y0, y1, x0, x1 in edge:
        a0, a1 = max(y0 - _MARGIN, 0), min(y1 + _MARGIN, ny)
        b0, b1 = max(x0 - _MARGIN, 0), min(x1 + _MARGIN, nx)
        sub = (slice(a0, a1), slice(b0, b1))
        ys, xs = _detect_screened(image[sub], var[sub], good[sub], opts, Buffers())
        ys, xs = ys + a0, xs + b0
        sel = (ys >= y0) & (ys < y1) & (xs >= x0) & (xs < x1)
        found.append((ys[sel], xs[sel]))
    if not found:
        return np.zeros(0, int), np.zeros(0, int)
    return (np.concatenate([f[0] for f in found]).astype(int),
            np.concatenate([f[1] for f in found]).astype(int))


def laplacian_cosmics(data, variance, bad, *, sigclip=4.5, sigfrac=0.3, objlim=5.0, niter=4,
                      overwrite_input=False, local_passes=True):
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
    local_passes : bool, optional
        Work the first pass's medians only at the pixels that may be hits (`_screen`) and
        search the later passes only about the pixels the previous pass replaced (the rest of
        the frame is unchanged, so it would give the hits it gave); False works every pass
        over the whole frame (the same mask, slower: the tests' oracle).

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
        where = sparse_nonzero(bad)
        _replace_hits(image, where, good, fallback_image)
        _replace_hits(var, where, good, fallback_var)
    buffers = Buffers()     # the medians' work arrays, allocated once for all passes
    opts = (sigclip, sigfrac, objlim)
    changed = None
    flat = np.zeros(0, int)
    for _ in range(int(niter)):
        if not local_passes:
            ys, xs = _detect(image, var, good, opts, buffers)
        elif changed is None:
            ys, xs = _detect_screened(image, var, good, opts, buffers)
        else:
            ys, xs = _detect_near(image, var, good, changed, opts, buffers)
        if hits[ys, xs].all():
            break
        hits[ys, xs] = True
        flat = np.union1d(flat, ys * image.shape[1] + xs)
        where = np.divmod(flat, image.shape[1])     # the hits so far, as np.nonzero gives them
        before = image[where], var[where]
        _replace_hits(image, where, good & ~hits, fallback_image)
        _replace_hits(var, where, good & ~hits, fallback_var)
        moved = (image[where] != before[0]) | (var[where] != before[1])
        changed = (where[0][moved], where[1][moved])
    return hits
