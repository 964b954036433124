"""Analytic PSF: an elliptical Moffat fitted star by star, combined by medians."""

import numpy as np
from scipy.optimize import least_squares

from ._stamps import fit_linear
from .moffat import moffat_pixel_image

__all__ = ["fit_moffat_shape"]


def _shape_from_q(q1, q2):
    e = float(np.hypot(q1, q2))
    angle = 0.5 * float(np.arctan2(q2, q1))
    return e, angle


def _fit_one(stamp, *, fwhm_guess, beta_guess):
    g = stamp.good
    d = stamp.data[g]
    s = stamp.sigma[g]
    shape = stamp.data.shape
    ones = np.ones(d.size)

    def resid(p):
        x, y, fwhm, beta, q1, q2 = p
        e, ang = _shape_from_q(q1, q2)
        img = moffat_pixel_image(shape, x, y, fwhm=fwhm, beta=beta, ellipticity=min(e, 0.9),
                                 angle=ang, nodes=3)[g]
        b = np.vstack([img, ones])
        coef = fit_linear(b, d, s)
        return (d - coef @ b) / s

    p0 = np.array([stamp.x_local, stamp.y_local, fwhm_guess, beta_guess, 0.0, 0.0])
    lo = np.array([p0[0] - 2, p0[1] - 2, 0.8, 1.3, -0.6, -0.6])
    hi = np.array([p0[0] + 2, p0[1] + 2, 0.45 * shape[0], 15.0, 0.6, 0.6])
    res = least_squares(resid, p0, bounds=(lo, hi), x_scale=[0.1, 0.1, 0.1, 0.3, 0.05, 0.05],
                        diff_step=1e-3)
    return res.x, bool(res.success)


def fit_moffat_shape(stamps, *, fwhm_guess=3.0, beta_guess=3.0):
    """Moffat shape (major-axis FWHM, β, ellipticity, angle) from star stamps.

    Each star is fitted alone (position, flux, sky, FWHM, β and the ellipticity components
    q = e (cos 2θ, sin 2θ)); the frame's shape is the median of each parameter over the stars, the
    ellipticity through its components so that the angle stays well defined near round.

    Returns a dict with keys ``fwhm, beta, ellipticity, angle`` (pixels, radians) and ``n_used``.
    """
    rows = []
    for st in stamps:
        p, ok = _fit_one(st, fwhm_guess=fwhm_guess, beta_guess=beta_guess)
        if ok:
            rows.append(p)
    if not rows:
        msg = "no star stamp could be fitted with a Moffat profile"
        raise ValueError(msg)
    rows = np.array(rows)
    med = np.median(rows, axis=0)
    e, ang = _shape_from_q(med[4], med[5])
    return {"fwhm": float(med[2]), "beta": float(med[3]), "ellipticity": e, "angle": ang,
            "n_used": len(rows)}
