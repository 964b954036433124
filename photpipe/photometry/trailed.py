"""Field stars trailed by the telescope following the comet: centres and stadium apertures.

On a frame tracked on the comet every star is its PSF smeared uniformly along the same segment,
the comet's motion over the exposure reversed. A circular aperture either cuts the trail's ends
or, made large enough, takes in much sky; the aperture here follows the trail instead: all
points within ``r`` of the segment (a stadium: a rectangle of length L and width 2r capped by
two half discs, area π r² + 2 r L), and its sky comes from the ring between two such shapes.
The centre of a trailed star is its mid-exposure position, the first moment of its light, which
is where the WCS (and the catalogue) put it; a peak-based centroid lands anywhere along a flat
trail. A trail is found by `~photpipe.photometry.detect_sources` as one or several peaks; the
fainter ones lying on a brighter star's trail are dropped (`merge_trail_detections`).
"""

import numpy as np
from astropy.table import QTable
from scipy.spatial import cKDTree

from .starphot import clipped_rings

__all__ = ["segment_distance", "merge_trail_detections", "trail_centroids",
           "measure_trailed_fluxes"]


def segment_distance(dx, dy, trail):
    """Distance of points (dx, dy) from the segment -trail/2 .. +trail/2 (pixels).

    Examples
    --------
    >>> segment_distance([0.0, 5.0, 0.0], [2.0, 0.0, 0.0], (6.0, 0.0)).tolist()
    [2.0, 2.0, 0.0]
    """
    dx = np.asarray(dx, dtype=float)
    dy = np.asarray(dy, dtype=float)
    length = float(np.hypot(*trail))
    if length == 0:
        return np.hypot(dx, dy)
    ux, uy = trail[0] / length, trail[1] / length
    t = np.clip(dx * ux + dy * uy, -0.5 * length, 0.5 * length)
    return np.hypot(dx - t * ux, dy - t * uy)


def merge_trail_detections(x, y, trail, *, radius):
    """Which detections to keep: fainter peaks on a brighter star's trail are dropped.

    Parameters
    ----------
    x, y : array-like
        Detections, brightest first.
    trail : tuple of float
        The stars' trail (dx, dy), pixels.
    radius : float
        A detection within this distance of a kept brighter one's trail is part of it.

    Returns
    -------
    keep : ndarray of bool

    Examples
    --------
    >>> merge_trail_detections([10.0, 12.5, 30.0], [10.0, 10.2, 10.0], (6.0, 0.0),
    ...                        radius=2.0).tolist()
    [True, False, True]
    """
    xy = np.column_stack([np.asarray(x, float), np.asarray(y, float)])
    keep = np.ones(len(xy), bool)
    if len(xy) < 2:
        return keep
    reach = 0.5 * float(np.hypot(*trail)) + radius
    tree = cKDTree(xy)
    for i in range(len(xy)):
        if not keep[i]:
            continue
        near = [j for j in tree.query_ball_point(xy[i], reach) if j > i and keep[j]]
        if near:
            near = np.asarray(near)
            d = segment_distance(xy[near, 0] - xy[i, 0], xy[near, 1] - xy[i, 1], trail)
            keep[near[d < radius]] = False
    return keep


def _box(shape, x, y, reach):
    ny, nx = shape
    x0, x1 = max(int(np.floor(x - reach)), 0), min(int(np.ceil(x + reach)) + 1, nx)
    y0, y1 = max(int(np.floor(y - reach)), 0), min(int(np.ceil(y + reach)) + 1, ny)
    return x0, x1, y0, y1


def trail_centroids(data, good, x, y, trail, *, radius, iterations=4, max_move=None):
    """First moments of trailed stars inside a stadium about each, iterated.

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        The frame (sky included: each star's sky is the median of a ring 2-5 pixels outside
        its stadium).
    good : ndarray of bool, shape (ny, nx)
    x, y : array-like
        Starting positions (a peak anywhere along the trail).
    trail : tuple of float
        (dx, dy), pixels.
    radius : float
        Stadium radius (about 1.5 FWHM).
    iterations : int, optional
        Each moves the centre towards the trail's middle; a start at one end needs about
        three.
    max_move : float, optional
        Largest move from the start (default half the trail plus a pixel).

    Returns
    -------
    x, y : ndarray
        The centres (the starting position where the star could not be measured, or where
        the centre would move more than half the trail plus a pixel: a neighbour's light).

    Examples
    --------
    >>> yy, xx = np.mgrid[:40, :60].astype(float)
    >>> img = 10.0 + sum(np.exp(-((xx - x0) ** 2 + (yy - 20.0) ** 2) / 2.0)
    ...                  for x0 in np.linspace(27.0, 33.0, 61))
    >>> cx, cy = trail_centroids(img, img > 0, [32.0], [20.5], (6.0, 0.0), radius=3.0)
    >>> round(float(cx[0]), 1), round(float(cy[0]), 1)
    (30.0, 20.0)
    """
    x = np.array(x, dtype=float)
    y = np.array(y, dtype=float)
    reach = 0.5 * float(np.hypot(*trail)) + radius + 6.0
    if max_move is None:
        max_move = 0.5 * float(np.hypot(*trail)) + 1.0
    for i in range(len(x)):
        x0, x1, y0, y1 = _box(data.shape, x[i], y[i], reach)
        img = data[y0:y1, x0:x1].astype(float)
        ok = good[y0:y1, x0:x1]
        yy, xx = np.mgrid[y0:y1, x0:x1].astype(float)
        cx, cy = x[i], y[i]
        for _ in range(int(iterations)):
            d = segment_distance(xx - cx, yy - cy, trail)
            ring = ok & (d > radius + 2.0) & (d <= radius + 5.0)
            inside = ok & (d <= radius)
            if np.count_nonzero(ring) < 8 or np.count_nonzero(inside) < 4:
                break
            w = np.clip(img[inside] - np.median(img[ring]), 0.0, None)
            total = w.sum()
            if not total > 0:
                break
            cx, cy = float(np.sum(w * xx[inside]) / total), float(np.sum(w * yy[inside]) / total)
        # a star is at most half its trail from any of its peaks; a larger move went to a
        # neighbour
        if np.hypot(cx - x[i], cy - y[i]) <= max_move:
            x[i], y[i] = cx, cy
    return x, y


def _stadium_weights(shape, x, y, trail, radii, reach, subsample):
    """Sub-pixel-sampled weights of stadiums of ``radii`` about one star, in its box."""
    x0, x1, y0, y1 = _box(shape, x, y, reach)
    s = (np.arange(subsample) + 0.5) / subsample - 0.5
    yy = (np.arange(y0, y1)[:, None] + s[None, :]).ravel()
    xx = (np.arange(x0, x1)[:, None] + s[None, :]).ravel()
    d = segment_distance(xx[None, :] - x, yy[:, None] - y, trail)
    d = d.reshape(y1 - y0, subsample, x1 - x0, subsample)
    weights = [np.mean(d <= r, axis=(1, 3)) for r in radii]
    return (x0, x1, y0, y1), weights


def _ring_sky(data, mask, x, y, trail, annulus):
    """Pixels (centre inside) between two stadiums: their values, for a clipped median."""
    x0, x1, y0, y1 = _box(data.shape, x, y, annulus[1] + 0.5 * float(np.hypot(*trail)) + 1)
    yy, xx = np.mgrid[y0:y1, x0:x1].astype(float)
    d = segment_distance(xx - x, yy - y, trail)
    ring = (d > annulus[0]) & (d <= annulus[1]) & ~mask[y0:y1, x0:x1]
    return data[y0:y1, x0:x1][ring]


def measure_trailed_fluxes(data, variance, mask, x, y, *, trail, radii, annulus, subsample=5):
    """Sky-subtracted fluxes of trailed stars in stadium apertures along their trail.

    Parameters
    ----------
    data, variance : ndarray, shape (ny, nx)
        Calibrated frame and variance (electrons, electrons²).
    mask : ndarray of bool, shape (ny, nx)
        True where pixels are unusable.
    x, y : array-like
        Mid-exposure positions of the stars (the middle of each trail).
    trail : tuple of float
        The stars' motion (dx, dy) over the exposure, pixels.
    radii : sequence of float
        Stadium radii (distance from the trail), increasing.
    annulus : tuple of float
        (inner, outer) distance from the trail of the sky ring.
    subsample : int, optional
        Sub-pixels per pixel side for the aperture's edge.

    Returns
    -------
    table : `~astropy.table.QTable`
        The columns of `~photpipe.photometry.measure_star_fluxes`: ``x, y, sky, sky_err,
        n_masked`` and ``flux_k, flux_err_k`` per radius.

    Notes
    -----
    The CCD equation with the variance plane as for circular apertures (Merline & Howell 1995,
    Exp. Astron. 6, 163): σ_F² = Σ w var + A² σ_sky² / n_sky, with w the fraction of each
    pixel inside and A = Σ w (π r² + 2 r L up to the sampling of the edge).

    Examples
    --------
    >>> img = np.full((40, 60), 10.0)
    >>> img[20, 27:34] += 100.0 / 7
    >>> t = measure_trailed_fluxes(img, np.ones_like(img), np.zeros(img.shape, bool), [30.0],
    ...                            [20.0], trail=(6.0, 0.0), radii=[2.0], annulus=(6.0, 10.0))
    >>> round(float(t["flux_0"][0]), 6), round(float(t["sky"][0]), 6)
    (100.0, 10.0)
    """
    xs = np.asarray(x, dtype=float)
    ys = np.asarray(y, dtype=float)
    radii = np.asarray(radii, dtype=float)
    n, k = len(xs), len(radii)
    flux, flux_var = np.full((n, k), np.nan), np.full((n, k), np.nan)
    area = np.full((n, k), np.nan)
    n_masked = np.zeros(n, int)
    rings = []
    reach = 0.5 * float(np.hypot(*trail)) + radii[-1] + 1.0 if k else 0.0
    safe = np.where(mask, 0.0, data)
    for i in range(n):
        (x0, x1, y0, y1), weights = _stadium_weights(data.shape, xs[i], ys[i], trail, radii,
                                                     reach, subsample)
        img, var = safe[y0:y1, x0:x1], variance[y0:y1, x0:x1]
        bad = mask[y0:y1, x0:x1]
        for j, w in enumerate(weights):
            w = np.where(bad, 0.0, w)
            flux[i, j] = float(np.sum(w * img))
            flux_var[i, j] = float(np.sum(w * np.where(bad, 0.0, var)))
            area[i, j] = float(np.sum(w))
        n_masked[i] = int(np.count_nonzero(bad & (weights[-1] >= 0.5)))
        rings.append(_ring_sky(data, mask, xs[i], ys[i], trail, annulus))
    sky, sky_std, n_sky = clipped_rings(rings)
    sky_err = sky_std / np.sqrt(np.clip(n_sky, 1.0, None))
    out = QTable({"x": xs, "y": ys})
    for j in range(k):
        out[f"flux_{j}"] = flux[:, j] - sky * area[:, j]
        out[f"flux_err_{j}"] = np.sqrt(flux_var[:, j] + (area[:, j] * sky_err) ** 2)
    out["sky"] = sky
    out["sky_err"] = sky_err
    out["n_masked"] = n_masked
    return out
