"""Running medians of 3, 5, 7 and 9 pixels by comparator networks (fast on whole frames).

A comparator sorts two values (min, max). The networks below leave the median of their inputs in
their middle wire; each comparator is one `numpy.minimum` and one `numpy.maximum` over the whole
frame, so a running median of 5 along one axis of a 1024x1024 frame costs 7 comparators instead of
a sort per pixel. They are checked exhaustively on 0/1 inputs in tests/frames/test_medians.py:
a comparator network commutes with every monotone map, so one that puts the median on its middle
wire for every 0/1 input does so for every input (the 0-1 principle, Knuth 1998, The Art of
Computer Programming vol. 3, sect. 5.3.4; from memory).
"""

import numpy as np

__all__ = ["Buffers", "running_median", "separable_median"]

# (wire, wire) comparators; after them the median is on wire n // 2. The networks are from memory
# (3, 7, 13 and 19 comparators) and proven by the exhaustive 0/1 test, not by a citation.
_NETWORKS = {
    3: ((0, 1), (1, 2), (0, 1)),
    5: ((0, 1), (3, 4), (0, 3), (1, 4), (1, 2), (2, 3), (1, 2)),
    7: ((0, 5), (0, 3), (1, 6), (2, 4), (0, 1), (3, 5), (2, 6), (2, 3), (3, 6), (4, 5),
        (1, 4), (1, 3), (3, 4)),
    9: ((1, 2), (4, 5), (7, 8), (0, 1), (3, 4), (6, 7), (1, 2), (4, 5), (7, 8), (0, 3),
        (5, 8), (4, 7), (3, 6), (1, 4), (2, 5), (4, 7), (4, 2), (6, 4), (4, 2)),
}


class Buffers:
    """Spare arrays for the networks, reused between calls so no comparator allocates a frame.

    `take` returns a spare array of the asked shape and dtype (or a new one), `give` hands one
    back. A caller that keeps one object over many medians of the same frame size allocates
    the arrays once.
    """

    def __init__(self):
        self._free = {}

    def take(self, shape, dtype):
        """A spare array of ``shape`` and ``dtype`` (its values are undefined)."""
        stack = self._free.get((tuple(shape), np.dtype(dtype)))
        return stack.pop() if stack else np.empty(shape, dtype)

    def give(self, *arrays):
        """Hand arrays back for reuse (they must not be used by the caller afterwards)."""
        for a in arrays:
            self._free.setdefault((a.shape, a.dtype), []).append(a)


def _network_median(values, size, buffers=None):
    """Median of ``size`` same-shaped arrays (a list), element by element, by `_NETWORKS`.

    The inputs are only read; each comparator writes into arrays taken from ``buffers``, in
    place once a wire holds its own array.
    """
    buffers = Buffers() if buffers is None else buffers
    wires = list(values)
    owned = [False] * size
    shape, dtype = wires[0].shape, np.result_type(*wires)
    for i, j in _NETWORKS[size]:
        a, b = wires[i], wires[j]
        low = np.minimum(a, b, out=buffers.take(shape, dtype))
        if owned[j]:
            high = np.maximum(a, b, out=b)
            if owned[i]:
                buffers.give(a)
        elif owned[i]:
            high = np.maximum(a, b, out=a)
        else:
            high = np.maximum(a, b, out=buffers.take(shape, dtype))
        wires[i], wires[j] = low, high
        owned[i] = owned[j] = True
    middle = size // 2
    buffers.give(*(w for k, w in enumerate(wires) if owned[k] and k != middle))
    return wires[middle]


def running_median(data, size, axis, *, buffers=None):
    """Median of ``size`` neighbouring pixels along one axis, edges extended by their values.

    Parameters
    ----------
    data : ndarray
        Image.
    size : {3, 5, 7}
        Window length (odd).
    axis : int
        Axis along which the window runs.
    buffers : Buffers, optional
        Spare arrays to work in (kept by the caller over several medians of one frame size).

    Returns
    -------
    ndarray
        Same shape and dtype as ``data``.

    Examples
    --------
    >>> running_median(np.array([1.0, 9.0, 2.0, 3.0, 8.0]), 3, axis=0)
    array([1., 2., 3., 3., 8.])
    """
    if size not in _NETWORKS:
        msg = f"running median size must be one of {sorted(_NETWORKS)}, got {size}"
        raise ValueError(msg)
    buffers = Buffers() if buffers is None else buffers
    half = size // 2
    n = data.shape[axis]
    shape = list(data.shape)
    shape[axis] += 2 * half
    padded = buffers.take(shape, data.dtype)
    inner = [slice(None)] * data.ndim
    inner[axis] = slice(half, half + n)
    padded[tuple(inner)] = data
    for lo, hi, src in ((0, half, 0), (half + n, n + 2 * half, n - 1)):
        edge = [slice(None)] * data.ndim
        edge[axis] = slice(lo, hi)
        from_ = [slice(None)] * data.ndim
        from_[axis] = slice(src, src + 1)
        padded[tuple(edge)] = data[tuple(from_)]
    views = []
    for k in range(size):
        index = [slice(None)] * data.ndim
        index[axis] = slice(k, k + n)
        views.append(padded[tuple(index)])
    out = _network_median(views, size, buffers)
    buffers.give(padded)
    return out


#: Rows per block of `separable_median`: a block's work arrays stay in the processor's cache.
_BLOCK_ROWS = 32


def separable_median(data, size, *, buffers=None):
    """Running median of ``size`` along rows, then of ``size`` along columns.

    Close to the ``size`` x ``size`` median filter on smooth images and on isolated outliers (a
    single bad pixel never survives), at a fraction of its cost (common practice). The frame is
    worked in blocks of rows, so the comparators run on arrays that fit the processor's cache;
    the result equals the two running medians over the whole frame.

    Examples
    --------
    >>> image = np.zeros((6, 6)); image[2, 3] = 50.0
    >>> float(separable_median(image, 3).max())
    0.0
    """
    if data.ndim != 2:
        return running_median(running_median(data, size, axis=1, buffers=buffers), size, axis=0,
                              buffers=buffers)
    buffers = Buffers() if buffers is None else buffers
    half = size // 2
    ny, nx = data.shape
    out = np.empty_like(data)
    for r0 in range(0, ny, _BLOCK_ROWS):
        r1 = min(ny, r0 + _BLOCK_ROWS)
        a0, a1 = max(0, r0 - half), min(ny, r1 + half)
        rows = running_median(data[a0:a1], size, axis=1, buffers=buffers)
        # rows r0 - half .. r1 + half, the frame's first and last rows repeated past its edges
        padded = buffers.take((r1 - r0 + 2 * half, nx), rows.dtype)
        top = a0 - (r0 - half)
        padded[top:top + (a1 - a0)] = rows
        padded[:top] = rows[0]
        padded[top + (a1 - a0):] = rows[-1]
        buffers.give(rows)
        views = [padded[k:k + r1 - r0] for k in range(size)]
        block = _network_median(views, size, buffers)
        out[r0:r1] = block
        buffers.give(padded, block)
    return out
