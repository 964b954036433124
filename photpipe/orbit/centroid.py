"""The error of the comet's centre of light, as the photometry stage measures it.

The photometry stage finds the comet's centre as the fixed point of a centre-of-light iteration
in a circular window that moves with the estimate (`photpipe.photometry.refine_comet_centre`).
Its error is not the fixed-box formula: the window's own motion matters wherever the light at its
edge is not negligible, as in a coma.
"""

import numpy as np
from photutils.aperture import CircularAperture

__all__ = ["centre_of_light_covariance"]


def _moment(work, hidden, x, y, radius):
    """g(c) = Σ w_i (p_i - c) s_i and the weighted pixel offsets, with the mirror rule."""
    mask = CircularAperture((x, y), r=radius).to_mask(method="exact")
    cut = mask.cutout(work, fill_value=0.0)
    if cut is None:
        return None
    bb = mask.bbox
    yy, xx = np.mgrid[bb.iymin:bb.iymax, bb.ixmin:bb.ixmax]
    ny, nx = hidden.shape
    # as the centroid does: a hidden pixel's mirror image through the centre is left out too
    xr = np.round(2 * x - xx).astype(int)
    yr = np.round(2 * y - yy).astype(int)
    inside = (xr >= 0) & (xr < nx) & (yr >= 0) & (yr < ny)
    mirror = np.ones(xx.shape, bool)
    mirror[inside] = hidden[yr[inside], xr[inside]]
    weight = mask.data * ~mirror
    dx, dy = xx - x, yy - y
    g = np.array([np.sum(weight * cut * dx), np.sum(weight * cut * dy)])
    return g, weight, dx, dy, (slice(bb.iymin, bb.iymax), slice(bb.ixmin, bb.ixmax))


def _star_pull(x, y, weight, where, hidden, star_xy, star_flux, moffat):
    """G from catalogued stars' light left in the window, the mirror rule kept.

    Each star's light is spread with the frame's Moffat profile (α, β) when given, else put
    at its pixel.
    """
    g = np.zeros(2)
    if star_xy is None or len(star_xy) == 0:
        return g
    ys, xs = where
    yy, xx = np.mgrid[ys, xs]
    ny, nx = hidden.shape
    xr = np.round(2 * x - xx).astype(int)
    yr = np.round(2 * y - yy).astype(int)
    inside = (xr >= 0) & (xr < nx) & (yr >= 0) & (yr < ny)
    seen = weight * ~hidden[ys, xs]
    seen[inside] *= ~hidden[yr[inside], xr[inside]]
    for (sx, sy), flux in zip(np.asarray(star_xy, float), np.asarray(star_flux, float),
                              strict=True):
        if not (np.isfinite(sx) and np.isfinite(sy) and flux > 0):
            continue
        if moffat is None:
            ix, iy = int(round(sx)), int(round(sy))
            if not (xs.start <= ix < xs.stop and ys.start <= iy < ys.stop):
                continue
            light = np.zeros(seen.shape)
            light[iy - ys.start, ix - xs.start] = flux
        else:
            # Moffat (1969) profile normalised to the star's flux
            alpha, beta = moffat
            r2 = ((xx - sx) ** 2 + (yy - sy) ** 2) / alpha**2
            light = flux * (beta - 1) / (np.pi * alpha**2) * (1 + r2) ** -beta
        g += np.array([np.sum(seen * light * (xx - x)), np.sum(seen * light * (yy - y))])
    return g


def _mask_pull(work, hidden, weight, dx, dy, where):
    """G of the comet's own symmetric light through the window as masked.

    The mirror rule drops the pixel nearest to each hidden pixel's mirror image, not the image
    itself, so a masked star leaves the window slightly lopsided; a symmetric profile (the
    azimuthal mean of the data about the centre) shows by how much.
    """
    seen = weight * ~hidden[where]
    if np.all(seen == weight):
        return np.zeros(2)
    rho = np.hypot(dx, dy)
    light = work[where]
    ok = ~hidden[where]
    edges = np.arange(0.0, rho.max() + 1.0, 0.5)
    index = np.digitize(rho, edges)
    sums = np.bincount(index[ok], light[ok], minlength=edges.size + 1)
    counts = np.bincount(index[ok], minlength=edges.size + 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = sums / counts
    centres = np.concatenate([[0.0], 0.5 * (edges[1:] + edges[:-1]), [edges[-1]]])
    have = np.isfinite(mean)
    model = np.interp(rho, centres[have], mean[have]) if np.any(have) else np.zeros(rho.shape)
    return np.array([np.sum(seen * model * dx), np.sum(seen * model * dy)])


def centre_of_light_covariance(data, variance, x, y, *, sky, box, mask=None, star_xy=None,
                               star_flux=None, moffat=None, step=0.25):
    """Covariance of a self-centred centre-of-light position from the pixel noise.

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        The calibrated frame (electrons).
    variance : ndarray, shape (ny, nx)
        Its variance per pixel (electrons²).
    x, y : float
        The measured centre (0-based pixels), the fixed point of the iteration.
    sky : float
        The sky level the centroid subtracted (electrons per pixel).
    box : int
        The centroid's box size; the window radius is ``max(box // 2, 2) + 0.5`` as in
        `~photpipe.photometry.refine_comet_centre`.
    mask : ndarray of bool, optional
        Pixels the centroid ignored (bad pixels, field stars).
    star_xy : ndarray, shape (n, 2), optional
        Pixel positions of catalogued field stars near the comet.
    star_flux : ndarray, shape (n,), optional
        Their fluxes in the frame (electrons).
    moffat : (float, float), optional
        The frame's Moffat α (pixels) and β, to spread each star's light; without it a star
        counts only at its own pixel.
    step : float, optional
        Central-difference step (pixels) of the window's response.

    Returns
    -------
    cov : ndarray, shape (2, 2)
        Covariance of (x, y), pixels²; NaN when the window holds no light.

    Notes
    -----
    The centre c solves g(c) = Σ_i w_i(c) (p_i - c) s_i = 0 with s_i = max(d_i - sky, 0) and
    w_i(c) the exact overlap of pixel i with the window at c. To first order a change δs of the
    data moves it by δc = -J⁻¹ δg with J = ∂g/∂c, so cov(c) = J⁻¹ V J⁻ᵀ, where
    V = Σ_i w_i² (p_i - c)(p_i - c)ᵀ σ_i² is the covariance of g from independent pixel noise
    (first-order propagation, e.g. Bevington & Robinson 2003, Eq. 3.13; the implicit-function
    form is standard calculus). J is taken by central differences on the data. For a window
    fixed in place J = -F I (F the light in it) and this is the usual centroid error; for a
    self-centred window on a Σ ∝ 1/ρ coma the window's edge gives J = -F/2 and twice that error.
    Pixels with d_i ≤ sky carry no weight in s_i and no noise into g (the clip of the
    centroid). A sky error moves a symmetric window by nothing, to first order.

    A catalogued star inside the window and not masked pulls the centre by δ = -J⁻¹ g_star
    (its light at its position, weighted as the window weighs it); the pull is not taken out
    (a faint star's flux and position on the frame are uncertain) but counted as an error,
    cov += δ δᵀ. Stars fainter than the catalogue's limit are not counted.

    Examples
    --------
    >>> import numpy as np
    >>> yy, xx = np.mgrid[:41, :41]
    >>> star = 10.0 + 2000 * np.exp(-((xx - 20) ** 2 + (yy - 20) ** 2) / 4.0)
    >>> cov = centre_of_light_covariance(star, star, 20.0, 20.0, sky=10.0, box=11)
    >>> round(float(np.sqrt(cov[0, 0])), 4)  # sqrt(Σ Δx² σ²) / F ≈ sqrt(2F + 10 π r⁴/4) / F
    0.0095
    """
    data = np.asarray(data, dtype=float)
    variance = np.asarray(variance, dtype=float)
    hidden = ~np.isfinite(data) if mask is None else (np.asarray(mask, bool) | ~np.isfinite(data))
    work = np.where(hidden, 0.0, np.clip(data - sky, 0.0, None))
    radius = max(int(box) // 2, 2) + 0.5
    here = _moment(work, hidden, x, y, radius)
    if here is None:
        return np.full((2, 2), np.nan)
    _, weight, dx, dy, where = here
    pull = (_star_pull(x, y, weight, where, hidden, star_xy, star_flux, moffat)
            + _mask_pull(work, hidden, weight, dx, dy, where))
    signal = (work[where] > 0) & np.isfinite(variance[where])
    var = np.where(signal, variance[where], 0.0)
    wv = weight**2 * var
    cov_g = np.array([[np.sum(wv * dx * dx), np.sum(wv * dx * dy)],
                      [np.sum(wv * dx * dy), np.sum(wv * dy * dy)]])
    jac = np.empty((2, 2))
    for j, (hx, hy) in enumerate(((step, 0.0), (0.0, step))):
        plus = _moment(work, hidden, x + hx, y + hy, radius)
        minus = _moment(work, hidden, x - hx, y - hy, radius)
        if plus is None or minus is None:
            return np.full((2, 2), np.nan)
        jac[:, j] = (plus[0] - minus[0]) / (2 * step)
    try:
        inv = np.linalg.inv(jac)
    except np.linalg.LinAlgError:
        return np.full((2, 2), np.nan)
    shift = inv @ pull
    return inv @ cov_g @ inv.T + np.outer(shift, shift)
