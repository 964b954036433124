"""Private: match two point sets by their triangles, knowing the scale but not the rotation.

Each point and its nearest neighbours make triangles; a triangle is described by its side
ratios (b/a, c/a, with a ≥ b ≥ c), which do not change under shift, rotation and mirroring, and
by the log of its longest side, which the known pixel scale fixes (Groth 1986, AJ 91, 1244;
Valdes et al. 1995, PASP 107, 1119, for triangle-space matching of star lists). Every pair of
similar triangles proposes a similarity transform (with or without a mirror); the proposal that
brings the most points of one set onto the other wins.
"""

import numpy as np
from scipy.spatial import cKDTree

__all__ = ["triangles", "triangle_features", "propose_transforms", "count_inliers",
           "Similarity"]


class Similarity:
    """p' = s R(θ) M p + t, with M = diag(1, -1) when ``mirrored`` (a point-set transform).

    Parameters
    ----------
    matrix : ndarray, shape (2, 2)
        The linear part s R M.
    shift : ndarray, shape (2,)
        The shift t.
    """

    def __init__(self, matrix, shift):
        self.matrix = np.asarray(matrix, dtype=float)
        self.shift = np.asarray(shift, dtype=float)

    def apply(self, xy):
        """Transform an (n, 2) array of points."""
        return np.asarray(xy, dtype=float) @ self.matrix.T + self.shift

    @property
    def mirrored(self):
        """True when the transform reverses handedness."""
        return bool(np.linalg.det(self.matrix) < 0)


def triangles(xy, *, k=5):
    """Index triples of the triangles each point makes with pairs of its ``k`` nearest neighbours.

    Examples
    --------
    >>> import numpy as np
    >>> triangles(np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]]), k=2).tolist()
    [[0, 1, 2]]
    """
    xy = np.asarray(xy, dtype=float)
    n = len(xy)
    if n < 3:
        return np.zeros((0, 3), int)
    kk = min(k, n - 1)
    _, nbr = cKDTree(xy).query(xy, k=kk + 1)
    nbr = nbr[:, 1:]
    ia, ib = np.triu_indices(kk, 1)
    tri = np.column_stack([np.repeat(np.arange(n), len(ia)), nbr[:, ia].ravel(),
                           nbr[:, ib].ravel()])
    tri = np.sort(tri, axis=1)
    return np.unique(tri, axis=0)


def triangle_features(xy, tri):
    """Side ratios, longest side and vertices in a canonical order for each triangle.

    Returns
    -------
    features : ndarray, shape (m, 3)
        ``b/a, c/a, ln a`` with sides a ≥ b ≥ c.
    ordered : ndarray of int, shape (m, 3)
        Vertex indices ordered as: opposite a, opposite b, opposite c.
    parity : ndarray of float, shape (m,)
        Sign of the signed area with the vertices so ordered (mirror images have opposite sign).
    """
    xy = np.asarray(xy, dtype=float)
    p = xy[tri]  # (m, 3, 2)
    # side opposite vertex i joins the other two vertices
    opp = np.stack([np.hypot(*(p[:, 1] - p[:, 2]).T), np.hypot(*(p[:, 0] - p[:, 2]).T),
                    np.hypot(*(p[:, 0] - p[:, 1]).T)], axis=1)
    order = np.argsort(-opp, axis=1)
    sides = np.take_along_axis(opp, order, axis=1)
    ordered = np.take_along_axis(tri, order, axis=1)
    q = xy[ordered]
    d1, d2 = q[:, 1] - q[:, 0], q[:, 2] - q[:, 0]
    parity = np.sign(d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0])
    with np.errstate(divide="ignore", invalid="ignore"):
        feats = np.column_stack([sides[:, 1] / sides[:, 0], sides[:, 2] / sides[:, 0],
                                 np.log(sides[:, 0])])
    return feats, ordered, parity


def _similarity_from_pairs(src, dst, mirrored):
    """Least-squares similarity (optionally mirrored) taking (m, 3, 2) ``src`` onto ``dst``."""
    s = src.copy()
    if mirrored is not None:
        s[mirrored, :, 1] *= -1.0
    sm, dm = s.mean(axis=1, keepdims=True), dst.mean(axis=1, keepdims=True)
    a, b = s - sm, dst - dm
    # complex form: b = z a with z = s e^{iθ} (Umeyama 1991, IEEE PAMI 13, 376, in 2-d)
    za = a[..., 0] + 1j * a[..., 1]
    zb = b[..., 0] + 1j * b[..., 1]
    z = np.sum(np.conj(za) * zb, axis=1) / np.sum(np.abs(za) ** 2, axis=1)
    mats = np.empty((len(z), 2, 2))
    mats[:, 0, 0], mats[:, 0, 1] = z.real, -z.imag
    mats[:, 1, 0], mats[:, 1, 1] = z.imag, z.real
    if mirrored is not None:
        mats[mirrored, :, 1] *= -1.0
    shifts = dm[:, 0] - np.einsum("mij,mj->mi", mats, src.mean(axis=1))
    return mats, shifts


def propose_transforms(ref_xy, det_xy, *, k=5, ratio_tol=0.015, log_scale_tol=0.06,
                       max_proposals=400):
    """Transforms ref -> det proposed by pairs of similar triangles of equal size.

    Parameters
    ----------
    ref_xy, det_xy : ndarray, shape (n, 2)
        Reference points (already in detector pixel units) and detected points.
    k : int, optional
        Neighbours per point that form triangles.
    ratio_tol : float, optional
        Largest difference of the side ratios.
    log_scale_tol : float, optional
        Largest difference of ln(longest side): the allowed scale error.
    max_proposals : int, optional
        Keep the closest pairs only.

    Returns
    -------
    matrices : ndarray, shape (m, 2, 2)
    shifts : ndarray, shape (m, 2)
    """
    tri_r, tri_d = triangles(ref_xy, k=k), triangles(det_xy, k=k)
    if len(tri_r) == 0 or len(tri_d) == 0:
        return np.zeros((0, 2, 2)), np.zeros((0, 2))
    f_r, o_r, par_r = triangle_features(ref_xy, tri_r)
    f_d, o_d, par_d = triangle_features(det_xy, tri_d)
    ok_r = np.isfinite(f_r).all(axis=1) & (f_r[:, 1] > 0.1)  # near-flat triangles are fragile
    ok_d = np.isfinite(f_d).all(axis=1) & (f_d[:, 1] > 0.1)
    f_r, o_r, par_r = f_r[ok_r], o_r[ok_r], par_r[ok_r]
    f_d, o_d, par_d = f_d[ok_d], o_d[ok_d], par_d[ok_d]
    if len(f_r) == 0 or len(f_d) == 0:
        return np.zeros((0, 2, 2)), np.zeros((0, 2))
    w = ratio_tol / log_scale_tol
    scale = np.array([1.0, 1.0, w])
    tree = cKDTree(f_r * scale)
    dist, j = tree.query(f_d * scale, k=3, distance_upper_bound=ratio_tol * np.sqrt(2.0))
    i_d, col = np.nonzero(np.isfinite(dist))
    j_r = j[i_d, col]
    if len(i_d) == 0:
        return np.zeros((0, 2, 2)), np.zeros((0, 2))
    keep = np.argsort(dist[i_d, col])[:max_proposals]
    i_d, j_r = i_d[keep], j_r[keep]
    src = np.asarray(ref_xy, float)[o_r[j_r]]
    dst = np.asarray(det_xy, float)[o_d[i_d]]
    mirrored = par_r[j_r] != par_d[i_d]
    return _similarity_from_pairs(src, dst, mirrored)


def count_inliers(matrices, shifts, ref_xy, det_xy, *, tolerance):
    """Count, per proposed transform (ref -> det), the detections it brings onto references.

    A detection counts when, taken back to the reference frame, it lies within ``tolerance``
    (detector pixels) of a reference point.
    """
    if len(matrices) == 0:
        return np.zeros(0, int)
    det = np.asarray(det_xy, float)
    inv = np.linalg.inv(matrices)
    back = np.einsum("mij,mnj->mni", inv, det[None, :, :] - shifts[:, None, :])
    scale = np.sqrt(np.abs(np.linalg.det(inv)))[:, None]
    dist, _ = cKDTree(ref_xy).query(back.reshape(-1, 2))
    return (dist.reshape(len(matrices), len(det)) <= tolerance * scale).sum(axis=1)
