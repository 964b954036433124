"""Analytic PSF: an elliptical Moffat fitted to all the field stars at once."""

import numpy as np

from .psf_joint import fit_stars_jointly

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


def fit_moffat_shape(stamps, *, fwhm_guess=3.0, beta_guess=3.0, trail=(0.0, 0.0)):
    """Moffat shape (major-axis FWHM, β, ellipticity, angle) from star stamps.

    The stars are fitted jointly (`~photpipe.nucleus.psf_joint.fit_stars_jointly`: one shape,
    each star's position, flux and sloping sky); each star's own shape (FWHM, β and the
    ellipticity components q = e (cos 2θ, sin 2θ)) is refined from the joint one and gives the
    shape's uncertainty from the scatter between the stars. Stars trailed by ``trail`` = (dx, dy)
    pixels (a telescope tracking the comet) are fitted as the Moffat core averaged along that
    segment, so the shape returned is the core's.

    Returns a dict with keys ``fwhm, beta, ellipticity, angle`` (pixels, radians; the joint
    fit's), ``n_used``, ``star_shapes`` (each star's FWHM, β, q1, q2, shape (n, 4)), ``fit``
    (the `~photpipe.nucleus.psf_joint.JointMoffatFit`) and ``fwhm_err, beta_err``: the standard
    errors 1.2533 × (robust scatter of the stars) / √n (the median's efficiency for a normal
    sample, Kendall & Stuart 1977, 10.10), NaN for fewer than 3 stars.
    """
    fit = fit_stars_jointly(stamps, fwhm_guess=fwhm_guess, beta_guess=beta_guess,
                            offsets=trail_points(trail))
    fwhm, beta, e, angle = fit.shape()
    rows = fit.star_shapes()
    n = len(rows)
    if n >= 3:
        # robust scatter: 1.4826 × median absolute deviation (common practice)
        mad = 1.4826 * np.median(np.abs(rows - np.median(rows, axis=0)), axis=0)
        err = 1.2533 * mad / np.sqrt(n)
    else:
        err = np.full(rows.shape[1], np.nan)
    return {"fwhm": fwhm, "beta": beta, "ellipticity": e, "angle": angle, "n_used": n,
            "fwhm_err": float(err[0]), "beta_err": float(err[1]), "star_shapes": rows,
            "fit": fit}
