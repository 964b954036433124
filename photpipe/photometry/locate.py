"""Finding the comet's photocentre near its predicted position, without straying to a star."""

import numpy as np
from photutils.aperture import CircularAperture

__all__ = ["refine_comet_centre"]


def refine_comet_centre(data, mask, x_pred, y_pred, *, sky, box, max_shift, iterations=20):
    """Centre-of-light of the comet in a box, bounded to ``max_shift`` from the prediction.

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        Calibrated frame.
    mask : ndarray of bool, shape (ny, nx)
        True for pixels to ignore: bad pixels and the field stars near the comet.
    x_pred, y_pred : float
        Predicted position (0-based pixels).
    sky : float
        Sky level per pixel.
    box : int
        Odd box size in pixels.
    max_shift : float
        Largest allowed distance from the prediction, in pixels.
    iterations : int, optional
        Re-centrings of the box.

    Returns
    -------
    x, y : float
        Refined position (the prediction if no acceptable centroid was found).
    status : str
        ``"ok"``, ``"at_limit"`` (a step would have gone further than ``max_shift`` and the last
        accepted position is returned) or ``"failed"`` (no light in the box).

    Notes
    -----
    Centre of light of the sky-subtracted, non-negative signal inside a circular window of radius
    ``box // 2 + 0.5`` that moves with the estimate; the window's pixel weights are the exact
    overlaps from photutils (``CircularAperture.to_mask(method="exact")``). Because the window is
    always centred on the current estimate, the fixed point of the iteration is the centre of any
    symmetric profile, even one with the heavy 1/ρ wings of a coma that bias a fixed box toward its
    own centre. A masked pixel's mirror image through the current centre is left out too, so the
    window stays symmetric around masked stars and bad pixels. Stars are masked by the caller,
    and the bound keeps the position from walking to a brighter neighbour (common practice).

    Examples
    --------
    >>> import numpy as np
    >>> yy, xx = np.mgrid[:41, :41]
    >>> img = 10.0 + 500 * np.exp(-((xx - 21.4) ** 2 + (yy - 19.2) ** 2) / 4.0)
    >>> x, y, s = refine_comet_centre(img, np.zeros(img.shape, bool), 20.0, 20.0, sky=10.0,
    ...                               box=11, max_shift=5.0)
    >>> round(x, 2), round(y, 2), s
    (21.4, 19.2, 'ok')
    """
    radius = max(int(box) // 2, 2) + 0.5
    # work on a cutout that holds every window the bounded iteration can reach
    reach = int(np.ceil(max_shift + radius)) + 2
    ny, nx = data.shape
    x0, y0 = max(int(x_pred) - reach, 0), max(int(y_pred) - reach, 0)
    x1, y1 = min(int(x_pred) + reach + 2, nx), min(int(y_pred) + reach + 2, ny)
    cut = np.asarray(data[y0:y1, x0:x1], dtype=float)
    hidden = mask[y0:y1, x0:x1] | ~np.isfinite(cut)
    work = np.where(hidden, 0.0, np.clip(cut - sky, 0.0, None))
    hny, hnx = hidden.shape
    x, y = float(x_pred) - x0, float(y_pred) - y0
    xp, yp = x, y
    status = "ok"
    for _ in range(iterations):
        weights = CircularAperture((x, y), r=radius).to_mask(method="exact")
        cut = weights.cutout(work, fill_value=0.0)
        if cut is None:
            return float(x_pred), float(y_pred), "failed"
        bb = weights.bbox
        yy, xx = np.mgrid[bb.iymin:bb.iymax, bb.ixmin:bb.ixmax]
        # drop each hidden pixel's mirror image through the current centre as well, so that a
        # masked star or bad column does not pull the centre of light to the other side
        xr = np.round(2 * x - xx).astype(int)
        yr = np.round(2 * y - yy).astype(int)
        inside = (xr >= 0) & (xr < hnx) & (yr >= 0) & (yr < hny)
        mirror = np.ones(xx.shape, bool)
        mirror[inside] = hidden[yr[inside], xr[inside]]
        w = weights.data * cut * ~mirror
        total = w.sum()
        if not total > 0:
            return x + x0, y + y0, (status if (x, y) != (xp, yp) else "failed")
        xn, yn = float((w * xx).sum() / total), float((w * yy).sum() / total)
        if np.hypot(xn - xp, yn - yp) > max_shift:
            return x + x0, y + y0, "at_limit"
        done = np.hypot(xn - x, yn - y) < 0.002
        x, y = xn, yn
        if done:
            break
    return x + x0, y + y0, status
