"""Analytic PSF: an elliptical Moffat fitted star by star, combined by medians."""

import numpy as np
from scipy import ndimage
from scipy.optimize import least_squares

from photpipe.models.moffat import moffat_pixel_image

from ._stamps import fit_linear, sky_plane

__all__ = ["fit_moffat_shape", "shape_from_q", "trail_points"]


def shape_from_q(q1, q2):
    """Ellipticity and major-axis angle (radians) from q = e (cos 2θ, sin 2θ)."""
    e = float(np.hypot(q1, q2))
    angle = 0.5 * float(np.arctan2(q2, q1))
    return e, angle


def trail_points(trail, *, step=0.3):
    """Midpoints of equal parts (at most ``step`` pixels) of the trail segment, centred on 0."""
    length = float(np.hypot(*trail))
    n = max(1, int(np.ceil(length / step)))
    t = (np.arange(n) + 0.5) / n - 0.5
    return np.column_stack([t * trail[0], t * trail[1]])


def _trailed_image(shape, x, y, offsets, **shape_args):
    img = np.zeros(shape)
    for ox, oy in offsets:
        img += moffat_pixel_image(shape, x + ox, y + oy, nodes=3 if len(offsets) == 1 else 2,
                                  **shape_args)
    return img / len(offsets)


#: Pixels more than this many σ above a star's first fit (a neighbour below the catalogue
#: limit, a cosmic-ray hit) are masked, grown by `_GROW` pixels, and the star is fitted again.
_NEIGHBOUR_SIGMA = 5.0
_GROW = 2


def _fit_one(stamp, *, fwhm_guess, beta_guess, offsets):
    shape = stamp.data.shape
    good = stamp.good.copy()
    p0 = np.array([stamp.x_local, stamp.y_local, fwhm_guess, beta_guess, 0.0, 0.0])
    lo = np.array([p0[0] - 2, p0[1] - 2, 0.8, 1.3, -0.6, -0.6])
    hi = np.array([p0[0] + 2, p0[1] + 2, 0.45 * shape[0], 15.0, 0.6, 0.6])
    for attempt in range(2):
        g = good
        d = stamp.data[g]
        s = stamp.sigma[g]
        ones = sky_plane(g)

        def resid(p, g=g, d=d, s=s, ones=ones):
            x, y, fwhm, beta, q1, q2 = p
            e, ang = shape_from_q(q1, q2)
            img = _trailed_image(shape, x, y, offsets, fwhm=fwhm, beta=beta,
                                 ellipticity=min(e, 0.9), angle=ang)[g]
            b = np.vstack([img, ones])
            coef = fit_linear(b, d, s)
            return (d - coef @ b) / s

        res = least_squares(resid, p0, bounds=(lo, hi),
                            x_scale=[0.1, 0.1, 0.1, 0.3, 0.05, 0.05], diff_step=1e-3)
        if attempt:
            break
        r = np.zeros(shape)
        r[g] = res.fun
        yy, xx = np.mgrid[0:shape[0], 0:shape[1]]
        outside = np.hypot(xx - res.x[0], yy - res.x[1]) > 1.5 * res.x[2]
        bad = ndimage.binary_dilation((r > _NEIGHBOUR_SIGMA) & outside, iterations=_GROW)
        if not np.any(bad & good):
            break
        good = good & ~bad
        p0 = res.x
    return res.x, bool(res.success)


def fit_moffat_shape(stamps, *, fwhm_guess=3.0, beta_guess=3.0, trail=(0.0, 0.0)):
    """Moffat shape (major-axis FWHM, β, ellipticity, angle) from star stamps.

    Each star is fitted alone (position, flux, sky, FWHM, β and the ellipticity components
    q = e (cos 2θ, sin 2θ)); the frame's shape is the median of each parameter over the stars, the
    ellipticity through its components so that the angle stays well defined near round. Stars
    trailed by ``trail`` = (dx, dy) pixels (a telescope tracking the comet) are fitted as the
    Moffat core averaged along that segment, so the shape returned is the core's.

    Returns a dict with keys ``fwhm, beta, ellipticity, angle`` (pixels, radians), ``n_used``
    ``star_shapes`` (each star's FWHM, β, q1, q2, shape (n, 4)) and ``fwhm_err, beta_err``:
    the standard errors of the medians, 1.2533 × (robust scatter
    of the stars) / √n (the median's efficiency for a normal sample, Kendall & Stuart 1977,
    10.10), NaN for fewer than 3 stars.
    """
    offsets = trail_points(trail)
    rows = []
    for st in stamps:
        p, ok = _fit_one(st, fwhm_guess=fwhm_guess, beta_guess=beta_guess, offsets=offsets)
        if ok:
            rows.append(p)
    if not rows:
        msg = "no star stamp could be fitted with a Moffat profile"
        raise ValueError(msg)
    rows = np.array(rows)
    med = np.median(rows, axis=0)
    e, ang = shape_from_q(med[4], med[5])
    n = len(rows)
    if n >= 3:
        # robust scatter: 1.4826 × median absolute deviation (common practice)
        mad = 1.4826 * np.median(np.abs(rows - med), axis=0)
        err = 1.2533 * mad / np.sqrt(n)
    else:
        err = np.full(rows.shape[1], np.nan)
    return {"fwhm": float(med[2]), "beta": float(med[3]), "ellipticity": e, "angle": ang,
            "n_used": n, "fwhm_err": float(err[2]), "beta_err": float(err[3]),
            "star_shapes": rows[:, 2:].copy()}
