"""Matching detected stars to the reference stars, and refining the WCS from the matches.

The header WCS is trusted only to a few pixels and a small rotation. The offset is found by
voting: every pair (detection, projected reference star) closer than ``max_offset`` votes for its
pixel offset in a 2-d histogram, and the fullest cell wins. Stars are then paired one to one within
a tolerance, and a rigid transform (shift plus rotation about the frame centre) is fitted by least
squares (the 2-d case of Kabsch 1976, Acta Cryst. A32, 922) and iterated once with a tighter
tolerance. No external plate solver is used.
"""

from dataclasses import asdict, dataclass

import numpy as np
from scipy.spatial import cKDTree

__all__ = ["RigidTransform", "vote_offset", "pair_nearest", "fit_rigid", "match_stars",
           "apply_to_wcs"]


@dataclass(frozen=True)
class RigidTransform:
    """Pixel transform p' = R(θ) (p - c) + c + t taking header-WCS pixels to true pixels.

    Attributes
    ----------
    dx, dy : float
        Shift t in pixels.
    rotation_deg : float
        Rotation θ (counter-clockwise in pixel coordinates), degrees.
    cx, cy : float
        Centre c of the rotation (0-based pixels).
    rms : float
        RMS of the matched residuals after the fit, in pixels.
    n_matched : int
        Number of star pairs used.
    """

    dx: float = 0.0
    dy: float = 0.0
    rotation_deg: float = 0.0
    cx: float = 0.0
    cy: float = 0.0
    rms: float = float("nan")
    n_matched: int = 0

    def apply(self, x, y):
        """Transform pixel positions; returns (x', y')."""
        th = np.radians(self.rotation_deg)
        c, s = np.cos(th), np.sin(th)
        px = np.asarray(x, dtype=float) - self.cx
        py = np.asarray(y, dtype=float) - self.cy
        return c * px - s * py + self.cx + self.dx, s * px + c * py + self.cy + self.dy

    def max_displacement(self, nx, ny):
        """Largest shift the transform gives at the frame's corners, in pixels."""
        xc = np.array([0.0, nx - 1.0, 0.0, nx - 1.0])
        yc = np.array([0.0, 0.0, ny - 1.0, ny - 1.0])
        x2, y2 = self.apply(xc, yc)
        return float(np.max(np.hypot(x2 - xc, y2 - yc)))

    def to_dict(self):
        """Return the fields as a plain dict."""
        return asdict(self)


def vote_offset(det_xy, ref_xy, *, max_offset, cell=2.0):
    """Most common pixel offset (detection - reference) among pairs closer than ``max_offset``.

    Parameters
    ----------
    det_xy, ref_xy : ndarray, shape (n, 2)
        Detected and projected reference positions.
    max_offset : float
        Largest offset considered, in pixels.
    cell : float, optional
        Histogram cell size in pixels.

    Returns
    -------
    offset : ndarray, shape (2,) or None
        Mean offset of the pairs in the winning 3 × 3 cells, or None if no pair was found.
    votes : int
        Number of pairs in the winning 3 × 3 cells.

    Examples
    --------
    >>> import numpy as np
    >>> ref = np.array([[10.0, 10.0], [50.0, 80.0], [90.0, 30.0]])
    >>> off, n = vote_offset(ref + [3.0, -2.0], ref, max_offset=10)
    >>> off.round(3).tolist(), n
    ([3.0, -2.0], 3)
    """
    if len(det_xy) == 0 or len(ref_xy) == 0:
        return None, 0
    tree = cKDTree(det_xy)
    pairs = tree.query_ball_point(ref_xy, r=max_offset)
    n_each = np.array([len(js) for js in pairs])
    if n_each.sum() == 0:
        return None, 0
    i_ref = np.repeat(np.arange(len(ref_xy)), n_each)
    i_det = np.concatenate([np.asarray(js, dtype=int) for js in pairs if js])
    d = det_xy[i_det] - ref_xy[i_ref]
    nbin = int(np.ceil(2 * max_offset / cell))
    edges = np.linspace(-max_offset, max_offset, nbin + 1)
    hist, _, _ = np.histogram2d(d[:, 0], d[:, 1], bins=[edges, edges])
    # votes of each cell and its eight neighbours, so that a cell edge cannot split a true offset
    padded = np.pad(hist, 1)
    near = sum(padded[1 + i:1 + i + nbin, 1 + j:1 + j + nbin]
               for i in (-1, 0, 1) for j in (-1, 0, 1))
    ix, iy = np.unravel_index(np.argmax(near), near.shape)
    votes = int(near[ix, iy])
    lo_x, hi_x = edges[max(ix - 1, 0)], edges[min(ix + 2, nbin)]
    lo_y, hi_y = edges[max(iy - 1, 0)], edges[min(iy + 2, nbin)]
    sel = (d[:, 0] >= lo_x) & (d[:, 0] <= hi_x) & (d[:, 1] >= lo_y) & (d[:, 1] <= hi_y)
    return np.median(d[sel], axis=0), votes


def pair_nearest(det_xy, ref_xy, *, tolerance):
    """One-to-one nearest pairs closer than ``tolerance``.

    Returns
    -------
    i_det, i_ref : ndarray of int
        Indices of the paired detections and reference stars.

    Examples
    --------
    >>> import numpy as np
    >>> pair_nearest(np.array([[0.0, 0.0], [5.0, 5.0]]), np.array([[5.2, 5.0]]), tolerance=1.0)
    (array([1]), array([0]))
    """
    if len(det_xy) == 0 or len(ref_xy) == 0:
        return np.zeros(0, int), np.zeros(0, int)
    dist, j = cKDTree(det_xy).query(ref_xy, distance_upper_bound=tolerance)
    i_ref = np.flatnonzero(np.isfinite(dist))
    i_det = j[i_ref]
    # one to one: where two references take the same detection keep the closer
    order = np.argsort(dist[i_ref])
    _, first = np.unique(i_det[order], return_index=True)
    keep = np.sort(order[first])
    return i_det[keep], i_ref[keep]


def fit_rigid(ref_xy, det_xy, *, center, rotation=True):
    """Least-squares shift and rotation about ``center`` taking ``ref_xy`` onto ``det_xy``.

    Notes
    -----
    With p' = p - p̄ and q' = q - q̄ (means over pairs, relative to the centre), the rotation that
    minimises Σ |R p' - q'|² is θ = atan2(Σ (q'_y p'_x - q'_x p'_y), Σ (q'_x p'_x + q'_y p'_y))
    (Kabsch 1976, in two dimensions); then t = q̄ - c - R (p̄ - c).

    Examples
    --------
    >>> import numpy as np
    >>> p = np.array([[0.0, 0.0], [100.0, 0.0], [0.0, 100.0]])
    >>> th = np.radians(0.5)
    >>> R = np.array([[np.cos(th), -np.sin(th)], [np.sin(th), np.cos(th)]])
    >>> q = (p - 50) @ R.T + 50 + [1.5, -0.5]
    >>> t = fit_rigid(p, q, center=(50.0, 50.0))
    >>> round(t.rotation_deg, 6), round(t.dx, 6), round(t.dy, 6)
    (0.5, 1.5, -0.5)
    """
    cx, cy = center
    p = np.asarray(ref_xy, dtype=float)
    q = np.asarray(det_xy, dtype=float)
    pm, qm = p.mean(axis=0), q.mean(axis=0)
    theta = 0.0
    if rotation and len(p) >= 2:
        pp, qq = p - pm, q - qm
        theta = np.arctan2(np.sum(qq[:, 1] * pp[:, 0] - qq[:, 0] * pp[:, 1]),
                           np.sum(qq[:, 0] * pp[:, 0] + qq[:, 1] * pp[:, 1]))
    c, s = np.cos(theta), np.sin(theta)
    rx = c * (pm[0] - cx) - s * (pm[1] - cy)
    ry = s * (pm[0] - cx) + c * (pm[1] - cy)
    t = RigidTransform(dx=float(qm[0] - cx - rx), dy=float(qm[1] - cy - ry),
                       rotation_deg=float(np.degrees(theta)), cx=float(cx), cy=float(cy),
                       n_matched=len(p))
    x2, y2 = t.apply(p[:, 0], p[:, 1])
    rms = float(np.sqrt(np.mean((x2 - q[:, 0]) ** 2 + (y2 - q[:, 1]) ** 2)))
    return RigidTransform(**{**t.to_dict(), "rms": rms})


def match_stars(det_xy, ref_xy, *, center, max_offset, tolerance, min_votes=3, n_vote=(300, 150)):
    """Pair detections with projected reference stars and fit the header-WCS error.

    Parameters
    ----------
    det_xy : ndarray, shape (n, 2)
        Detected star positions (0-based pixels), brightest first.
    ref_xy : ndarray, shape (m, 2)
        Reference stars projected with the header WCS, brightest first.
    center : tuple of float
        Rotation centre (usually the frame centre).
    max_offset : float
        Largest header-WCS error searched, in pixels.
    tolerance : float
        Final pairing radius in pixels (after the transform).
    min_votes : int, optional
        Fewest pairs agreeing on an offset for it to be believed.
    n_vote : tuple of int, optional
        How many of the first (brightest) detections and reference stars vote on the offset; a
        few hundred decide it as well as thousands, at a fraction of the cost.

    Returns
    -------
    i_det, i_ref : ndarray of int
        Paired indices (empty if no consistent offset was found).
    transform : RigidTransform
        Header pixels -> true pixels.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(3)
    >>> ref = rng.uniform(0, 1000, (40, 2))
    >>> i_d, i_r, t = match_stars(ref + [4.0, 1.0], ref, center=(500, 500), max_offset=20,
    ...                           tolerance=1.5)
    >>> len(i_d), round(t.dx, 3), round(t.dy, 3)
    (40, 4.0, 1.0)
    """
    det_xy = np.asarray(det_xy, dtype=float).reshape(-1, 2)
    ref_xy = np.asarray(ref_xy, dtype=float).reshape(-1, 2)
    empty = np.zeros(0, int)
    offset, votes = vote_offset(det_xy[:n_vote[0]], ref_xy[:n_vote[1]], max_offset=max_offset,
                                cell=max(tolerance, 1.0))
    if offset is None or votes < min(min_votes, len(ref_xy)):
        return empty, empty, RigidTransform(cx=center[0], cy=center[1])
    transform = RigidTransform(dx=float(offset[0]), dy=float(offset[1]),
                               cx=center[0], cy=center[1])
    # a wider first tolerance lets a small rotation be seen, then it tightens
    for tol in (3.0 * tolerance, 1.5 * tolerance, tolerance):
        x2, y2 = transform.apply(ref_xy[:, 0], ref_xy[:, 1])
        i_det, i_ref = pair_nearest(det_xy, np.column_stack([x2, y2]), tolerance=tol)
        if len(i_det) == 0:
            return empty, empty, transform
        transform = fit_rigid(ref_xy[i_ref], det_xy[i_det], center=center,
                              rotation=len(i_det) >= 3)
    return i_det, i_ref, transform


def apply_to_wcs(wcs, transform):
    """A copy of ``wcs`` corrected by a pixel transform (header pixels -> true pixels).

    Notes
    -----
    For a WCS with p = crpix + M⁻¹ ξ (M the pixel-scale matrix, ξ intermediate world coordinates),
    the corrected WCS has crpix' = R (crpix - c) + c + t and M' = M Rᵀ, so that
    p' = R (p - c) + c + t (Calabretta & Greisen 2002, A&A 395, 1077, for the linear part of a
    FITS WCS). Distortion terms, if any, are kept unchanged.

    Examples
    --------
    >>> from astropy.wcs import WCS
    >>> w = WCS(naxis=2)
    >>> w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    >>> w.wcs.crval = [10.0, 20.0]
    >>> w.wcs.crpix = [51.0, 51.0]
    >>> w.wcs.cdelt = [-1 / 3600, 1 / 3600]
    >>> w2 = apply_to_wcs(w, RigidTransform(dx=2.0, dy=-1.0, cx=50.0, cy=50.0))
    >>> [round(float(v), 6) for v in w2.world_to_pixel_values(10.0, 20.0)]
    [52.0, 49.0]
    """
    new = wcs.deepcopy()
    th = np.radians(transform.rotation_deg)
    rot = np.array([[np.cos(th), -np.sin(th)], [np.sin(th), np.cos(th)]])
    c = np.array([transform.cx, transform.cy])
    crpix0 = np.asarray(new.wcs.crpix, dtype=float) - 1.0
    new.wcs.crpix = rot @ (crpix0 - c) + c + [transform.dx, transform.dy] + 1.0
    if new.wcs.has_cd():
        new.wcs.cd = np.asarray(new.wcs.cd) @ rot.T
    else:
        cdelt = np.asarray(new.wcs.cdelt, dtype=float)
        m = cdelt[:, None] * np.asarray(new.wcs.get_pc())
        new.wcs.pc = (m @ rot.T) / cdelt[:, None]
    new.wcs.set()
    return new
