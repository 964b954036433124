"""Sums and values in many circles and annuli of one frame, as photutils gives them, faster.

photutils' ``aperture_photometry`` and ``ApertureMask.get_values`` build a few Python objects
per star and aperture (bounding box, mask, slices), which cost more than the sums on a frame of
a thousand stars. These functions take the same bounding boxes (`_box`), the same pixel weights
(``photutils.geometry.circular_overlap_grid``, exact or by pixel centre) and the same
arithmetic, so they return the same numbers; `tests/photometry/test_circles.py` checks them
against photutils.
"""

import math

import numpy as np
from photutils.geometry import circular_overlap_grid

__all__ = ["circle_sums", "ring_values", "masked_in_circles"]


def _box(x, y, r, shape):
    """Photutils' bounding box of a circle: frame slice, box slice, edges; None off the frame."""
    ixmin, ixmax = math.floor(x - r + 0.5), math.ceil(x + r + 0.5)
    iymin, iymax = math.floor(y - r + 0.5), math.ceil(y + r + 0.5)
    ny, nx = shape
    if ixmin >= nx or iymin >= ny or ixmax <= 0 or iymax <= 0:
        return None
    large = (slice(max(iymin, 0), min(iymax, ny)), slice(max(ixmin, 0), min(ixmax, nx)))
    small = (slice(max(-iymin, 0), min(iymax - iymin, ny - iymin)),
             slice(max(-ixmin, 0), min(ixmax - ixmin, nx - ixmin)))
    edges = (ixmin - 0.5 - x, ixmax - 0.5 - x, iymin - 0.5 - y, iymax - 0.5 - y)
    return large, small, edges, (ixmax - ixmin, iymax - iymin)


def _weights(box, r, exact):
    _, small, edges, (nx, ny) = box
    return circular_overlap_grid(*edges, nx, ny, r, 1 if exact else 0, 1)[small]


def circle_sums(data, variance, mask, xy, radii):
    """Exact-overlap sums of ``data`` and their errors in circles of each radius about ``xy``.

    The numbers of ``aperture_photometry(data, CircularAperture(xy, r), error=sqrt(max(variance,
    0)), mask=mask, method="exact")`` for each r of ``radii``: masked pixels left out, NaN for
    a circle off the frame. Each star's pixels are cut once, in the largest circle's box; the
    weights of a smaller circle computed there differ from photutils' (its own smaller box) by
    rounding only (~1e-16).

    Returns
    -------
    sums, errors : ndarray, shape (len(radii), len(xy))
    """
    radii = [float(r) for r in np.atleast_1d(radii)]
    sums = np.full((len(radii), len(xy)), np.nan)
    errors = np.full((len(radii), len(xy)), np.nan)
    with np.errstate(invalid="ignore"):     # photutils ignores products with non-finite data
        for i, (x, y) in enumerate(xy):
            box = _box(float(x), float(y), max(radii), data.shape)
            if box is None:
                continue
            large = box[0]
            values, free = data[large], ~mask[large]
            error2 = np.sqrt(np.clip(variance[large], 0, None)) ** 2   # photutils' error plane
            for k, r in enumerate(radii):
                if r < max(radii) and _box(float(x), float(y), r, data.shape) is None:
                    continue                    # this circle's own box is off the frame
                weights = _weights(box, r, exact=True)
                use = (weights > 0) & free
                sums[k, i] = (values * weights)[use].sum()
                errors[k, i] = np.sqrt((error2 * weights)[use].sum())
    return sums, errors


def ring_values(data, mask, xy, r_in, r_out):
    """The pixels whose centres lie in each annulus, NaN where masked (one array per centre).

    As ``CircularAnnulus(xy, r_in, r_out).to_mask(method="center")`` and ``get_values``.
    """
    rings = []
    for x, y in xy:
        box = _box(float(x), float(y), float(r_out), data.shape)
        if box is None:
            rings.append(np.zeros(0))
            continue
        large = box[0]
        weights = _weights(box, r_out, exact=False) - _weights(box, r_in, exact=False)
        use = weights > 0
        with np.errstate(invalid="ignore"):
            values = (data[large] * weights)[use]
        rings.append(np.where((mask[large] * weights)[use] > 0, np.nan, values))
    return rings


def masked_in_circles(mask, xy, r):
    """Masked pixels whose centres lie in each circle (``to_mask(method="center")``)."""
    counts = np.zeros(len(xy))
    for i, (x, y) in enumerate(xy):
        box = _box(float(x), float(y), float(r), mask.shape)
        if box is not None:
            weights = _weights(box, r, exact=False)
            counts[i] = (mask[box[0]] * weights)[weights > 0].sum()
    return counts
