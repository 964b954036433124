"""The comet's own light under the PSF stars (private helper of `psf`).

Field stars near a comet sit on its coma. A sloping sky plane under each star follows the
coma's level and gradient but not its curvature: Σ = K/ρ curves by K/ρ³ (the Laplacian of
1/ρ in the plane), so the light between a star's core and the edge of its stamp is less than
the plane says, and the fitted Moffat wings fall too fast. Measured on the named night cases
with noise-free frames: the Moffat β came out 0.07 high (3.07 for 3.00) where the coma holds
90 % of the light in the nucleus's core, 0.01 high on the nominal case, and unbiased with the
coma taken away; the nucleus fit passes such a β to the nucleus, 0.04 mag faint.

So before the stars are fitted, the comet's light is taken out of their stamps: the median of
the frame in annuli about the comet (the catalogued stars' discs left out), interpolated in
ρ. The median of a monotonic function of ρ over an annulus is its value at the annulus's
median ρ, so for a coma falling with ρ the interpolation nodes are exact without noise. The
sky is in the medians too; each star's sloping sky still takes what is left (a tail, an
asymmetric coma, the median's noise).
"""

import numpy as np

from photpipe.photometry.coma_background import ring_medians

__all__ = ["comet_light_profile", "comet_light_image", "MIN_ANNULUS_PIXELS"]

#: Annuli with fewer usable pixels than this give no node.
MIN_ANNULUS_PIXELS = 12

#: Annulus width: this share of ρ, and at least `_MIN_WIDTH` pixels.
_WIDTH_SHARE = 0.08
_MIN_WIDTH = 1.5


#: Largest number of pixels in the rings; a larger box is sub-sampled on a regular grid (a
#: 2048x2048 frame's PSF stars span the whole frame: every pixel cost 1.5 s a frame).
_MAX_PIXELS = 1_000_000


def _mask_disc(use, sx, sy, radius):
    """Clear ``use`` inside a disc (box coordinates), touching only the disc's own square."""
    ny, nx = use.shape
    xa, xb = max(int(np.floor(sx - radius)), 0), min(int(np.ceil(sx + radius)) + 1, nx)
    ya, yb = max(int(np.floor(sy - radius)), 0), min(int(np.ceil(sy + radius)) + 1, ny)
    if xb <= xa or yb <= ya:
        return
    yy, xx = np.mgrid[ya:yb, xa:xb]
    use[ya:yb, xa:xb] &= np.hypot(xx - sx, yy - sy) > radius


def _edges(r_lo, r_hi):
    """Annulus edges from ``r_lo`` to ``r_hi``, each max(1.5, 0.08 ρ) pixels wide."""
    edges = [max(r_lo, 0.0)]
    while edges[-1] < r_hi:
        edges.append(edges[-1] + max(_MIN_WIDTH, _WIDTH_SHARE * edges[-1]))
    return np.array(edges)


def comet_light_profile(data, good, centre, *, r_lo, r_hi, mask_xy=(), mask_radius=0.0):
    """Median of the image in annuli about ``centre``: nodes (ρ, value) of the comet's light.

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        The frame (sky included).
    good : ndarray of bool, shape (ny, nx)
        Usable pixels.
    centre : tuple of float
        (x, y) of the comet, pixels.
    r_lo, r_hi : float
        Range of ρ needed, pixels.
    mask_xy : array-like, shape (n, 2), optional
        Stars whose discs of ``mask_radius`` are left out of the medians.
    mask_radius : float, optional
        Pixels.

    Returns
    -------
    rho, value : ndarray
        The annuli's median ρ and median value (empty when no annulus has enough pixels).

    Examples
    --------
    A pure 1/ρ image gives nodes on the curve itself (to 1e-5: an even count of pixels
    averages the two middle ones):

    >>> yy, xx = np.mgrid[0:101, 0:101]
    >>> img = 100.0 / np.maximum(np.hypot(xx - 50.0, yy - 50.0), 0.5)
    >>> rho, val = comet_light_profile(img, np.ones(img.shape, bool), (50.0, 50.0),
    ...                                r_lo=10.0, r_hi=40.0)
    >>> bool(np.allclose(val * rho, 100.0, rtol=1e-4))
    True
    """
    ny, nx = data.shape
    cx, cy = (float(v) for v in centre)
    x0, x1 = max(int(np.floor(cx - r_hi)), 0), min(int(np.ceil(cx + r_hi)) + 1, nx)
    y0, y1 = max(int(np.floor(cy - r_hi)), 0), min(int(np.ceil(cy + r_hi)) + 1, ny)
    if x1 <= x0 or y1 <= y0:
        return np.zeros(0), np.zeros(0)
    yy, xx = np.mgrid[y0:y1, x0:x1]
    use = good[y0:y1, x0:x1] & np.isfinite(data[y0:y1, x0:x1])
    for sx, sy in np.asarray(mask_xy, dtype=float).reshape(-1, 2):
        if abs(sx - cx) <= r_hi + mask_radius and abs(sy - cy) <= r_hi + mask_radius:
            _mask_disc(use, sx - x0, sy - y0, mask_radius)
    step = max(1, int(np.ceil(np.sqrt(use.size / _MAX_PIXELS))))
    use, xx, yy = use[::step, ::step], xx[::step, ::step], yy[::step, ::step]
    rho = np.hypot(xx - cx, yy - cy)
    edges = _edges(r_lo, r_hi)
    use &= (rho >= edges[0]) & (rho < edges[-1])
    rho, val = rho[use], data[y0:y1:step, x0:x1:step][use].astype(float)
    ring = np.searchsorted(edges, rho, side="right") - 1
    return ring_medians(ring, rho, val, MIN_ANNULUS_PIXELS)


def comet_light_image(profile, shape, origin, centre):
    """The profile's light on a stamp of ``shape`` whose pixel [0, 0] is frame pixel ``origin``.

    Linear in ρ between the nodes, constant beyond the first and last.

    Examples
    --------
    >>> img = comet_light_image((np.array([1.0, 3.0]), np.array([10.0, 30.0])), (1, 3), (0, 0),
    ...                         (0.0, 0.0))
    >>> img.tolist()
    [[10.0, 10.0, 20.0]]
    """
    rho_n, val_n = profile
    ny, nx = shape
    yy, xx = np.mgrid[0:ny, 0:nx]
    rho = np.hypot(xx + origin[0] - centre[0], yy + origin[1] - centre[1])
    return np.interp(rho, rho_n, val_n)
