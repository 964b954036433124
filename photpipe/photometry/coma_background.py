"""The comet's azimuthally symmetric light as a background model for the field-star photometry.

On a small frame every field star sits on the coma. A steady coma falls as 1/ρ, and the local sky
of a star, the median of an annulus a few FWHM wide around it, misses the coma light inside the
aperture: the median of a ring lying across a radial 1/ρ field is close to the value at the ring's
points square to the direction of the nucleus, which for a star at distance d from the nucleus and
an annulus of radius a is K/√(d² + a²), below the K/d under the star. Summed over a large
aperture that shortfall is as large as a faint star, so the curve of growth keeps rising, the
aperture correction and the zero point come out wrong and the fitted PSF wing is spurious.

Taking out the median in rings about the comet first leaves the stars on a nearly flat residual,
whose level the stars' own annuli then measure.
"""

import numpy as np

__all__ = ["azimuthal_median_model", "ring_profile", "ring_medians", "subtract_rings_near"]

#: Largest number of pixels whose ring medians are taken (larger frames are sub-sampled).
_MAX_PIXELS = 1_000_000


def azimuthal_median_model(data, good, x0, y0, *, width=2.0, min_pixels=8):
    """Median of the frame in rings about ``(x0, y0)``, as an image.

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        Calibrated frame (electrons).
    good : ndarray of bool, shape (ny, nx)
        Usable pixels.
    x0, y0 : float
        Ring centre (the comet), 0-based pixels.
    width : float, optional
        Ring width in pixels.
    min_pixels : int, optional
        Rings with fewer usable pixels get no median of their own (interpolated from the rings
        beside them).

    Returns
    -------
    model : ndarray, shape (ny, nx)
        The ring medians interpolated linearly in ρ to every pixel (constant beyond the first and
        last ring with a median); sky plus the symmetric part of the coma.

    Raises
    ------
    ValueError
        If ``width`` is not positive or no ring has ``min_pixels`` usable pixels.

    Notes
    -----
    The rings are those of `ring_profile`; `subtract_rings_near` takes the same model out only
    around given positions (the field stars), which is all their photometry reads.

    Examples
    --------
    >>> import numpy as np
    >>> yy, xx = np.mgrid[:64, :64]
    >>> img = 100.0 + 500.0 / np.maximum(np.hypot(xx - 32, yy - 32), 1.0)
    >>> model = azimuthal_median_model(img, np.ones(img.shape, bool), 32.0, 32.0, width=1.0)
    >>> bool(np.abs(img - model)[np.hypot(xx - 32, yy - 32) > 10].max() < 1.0)
    True
    """
    centres, medians = ring_profile(data, good, x0, y0, width=width, min_pixels=min_pixels)
    ny, nx = np.shape(data)
    rho = np.hypot(np.arange(nx)[None, :] - float(x0), np.arange(ny)[:, None] - float(y0))
    return np.interp(rho, centres, medians)


def ring_profile(data, good, x0, y0, *, width=2.0, min_pixels=8):
    """Median radius and median value of the frame in rings about ``(x0, y0)``.

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        Calibrated frame (electrons).
    good : ndarray of bool, shape (ny, nx)
        Usable pixels.
    x0, y0 : float
        Ring centre (the comet), 0-based pixels.
    width : float, optional
        Ring width in pixels.
    min_pixels : int, optional
        Rings with fewer usable pixels get no median of their own (interpolated from the rings
        beside them).

    Returns
    -------
    radii, medians : ndarray
        Each ring's median radius and median value (rings with ``min_pixels`` usable pixels);
        the model of `azimuthal_median_model` interpolates them linearly in ρ (constant
        beyond the first and last), sky plus the symmetric part of the coma.

    Raises
    ------
    ValueError
        If ``width`` is not positive or no ring has ``min_pixels`` usable pixels.

    Notes
    -----
    The median of each ring is robust to the field stars that cross it. Dividing or subtracting
    the azimuthal average or median about the nucleus is a standard way to take out a coma's
    symmetric light (Samarasinha & Larson 2014, Icarus 239, 168, from memory). Frames with more
    than a million usable pixels are sub-sampled on a regular grid for the medians.

    Examples
    --------
    >>> import numpy as np
    >>> yy, xx = np.mgrid[:64, :64]
    >>> img = 100.0 + 500.0 / np.maximum(np.hypot(xx - 32, yy - 32), 1.0)
    >>> radii, medians = ring_profile(img, np.ones(img.shape, bool), 32.0, 32.0, width=1.0)
    >>> bool(np.all(np.diff(medians[radii > 2]) < 0))
    True
    """
    if not (np.isfinite(width) and width > 0):
        msg = f"ring 'width' must be positive, got {width}"
        raise ValueError(msg)
    data = np.asarray(data)
    ny, nx = data.shape
    ok = np.asarray(good, bool) & np.isfinite(data)
    step = max(1, int(np.ceil(np.sqrt(np.count_nonzero(ok) / _MAX_PIXELS))))
    rows, cols = np.arange(0, ny, step), np.arange(0, nx, step)
    rho_sub = np.hypot(cols[None, :] - float(x0), rows[:, None] - float(y0))
    ok_sub = ok[::step, ::step]
    r_used = rho_sub[ok_sub]
    values = data[::step, ::step][ok_sub].astype(np.float64)
    ring = (r_used / width).astype(np.int64)
    centres, medians = ring_medians(ring, r_used, values, min_pixels)
    if not centres.size:
        msg = f"no ring of width {width} pix about ({x0:.1f}, {y0:.1f}) has {min_pixels} pixels"
        raise ValueError(msg)
    return centres, medians


def subtract_rings_near(data, profile, x0, y0, xy, half):
    """The frame minus the ring model of `ring_profile`, taken out only near given positions.

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        Calibrated frame.
    profile : tuple of ndarray
        (ring radii, ring medians) from `ring_profile`.
    x0, y0 : float
        The rings' centre.
    xy : ndarray, shape (n, 2), or None
        Positions (the field stars) around which the model is subtracted; None: everywhere.
    half : int
        Half side, pixels, of the square about each position where it is subtracted.

    Returns
    -------
    ndarray of float64, shape (ny, nx)
        ``data - model`` inside the squares (the same values as with `azimuthal_median_model`),
        ``data`` elsewhere: only the squares are to be measured on it.

    Examples
    --------
    >>> yy, xx = np.mgrid[:64, :64]
    >>> img = 100.0 + 500.0 / np.maximum(np.hypot(xx - 32, yy - 32), 1.0)
    >>> prof = ring_profile(img, np.ones(img.shape, bool), 32.0, 32.0, width=1.0)
    >>> near = subtract_rings_near(img, prof, 32.0, 32.0, np.array([[50.0, 20.0]]), 5)
    >>> full = img - azimuthal_median_model(img, np.ones(img.shape, bool), 32.0, 32.0, width=1.0)
    >>> bool(np.array_equal(near[15:26, 45:56], full[15:26, 45:56])), bool(near[0, 0] == img[0, 0])
    (True, True)
    """
    out = np.array(data, dtype=np.float64)
    ny, nx = out.shape
    if xy is None:
        rho = np.hypot(np.arange(nx)[None, :] - float(x0), np.arange(ny)[:, None] - float(y0))
        out -= np.interp(rho, *profile)
        return out
    done = np.zeros(out.shape, bool)     # squares overlap: each pixel is taken out once
    for x, y in np.asarray(xy, dtype=float).reshape(-1, 2):
        if np.isfinite(x) and np.isfinite(y):
            ix, iy = int(round(x)), int(round(y))
            square = (slice(max(iy - half, 0), max(iy + half + 1, 0)),
                      slice(max(ix - half, 0), max(ix + half + 1, 0)))
            ys, xs = np.nonzero(~done[square])
            ys, xs = ys + square[0].start, xs + square[1].start
            out[ys, xs] -= np.interp(np.hypot(xs - float(x0), ys - float(y0)), *profile)
            done[square] = True
    return out


def ring_medians(ring, radius, values, min_pixels):
    """Median radius and median value of each ring holding at least ``min_pixels`` pixels.

    Parameters
    ----------
    ring : ndarray of int
        Ring number (0, 1, ...) of each pixel, in any order.
    radius, values : ndarray of float
        Each pixel's distance from the centre and its value.
    min_pixels : int
        Rings with fewer pixels give no median.

    Returns
    -------
    radii, medians : ndarray
        Per ring with enough pixels, in ring order.

    Notes
    -----
    The pixels are put in ring order by one sort of the integer ring numbers (a radix sort);
    each ring's two middle values then come from a partial sort of the ring alone.
    """
    if not ring.size:
        return np.zeros(0), np.zeros(0)
    counts = np.bincount(ring)
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
    full = np.flatnonzero(counts >= min_pixels)
    # ring numbers fit 16 bits on any frame up to ~90,000 pixels across, and numpy sorts
    # those by radix (stable, the same order), several times faster than 64-bit ones
    order = np.argsort(ring.astype(np.uint16) if counts.size <= 2**16 else ring, kind="stable")
    by_ring = (radius[order], values[order])
    out = np.empty((2, full.size))
    for k, i in enumerate(full):
        a, n = starts[i], counts[i]
        lo, hi = (n - 1) // 2, n // 2
        for j, sorted_ in enumerate(by_ring):
            part = np.partition(sorted_[a:a + n], (lo, hi))
            out[j, k] = 0.5 * (part[lo] + part[hi])
    return out[0], out[1]
