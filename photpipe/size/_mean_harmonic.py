"""Rotation-averaged magnitude as the constant term of a Fourier series fitted in flux."""

import numpy as np

__all__ = ["harmonic_mean"]


def harmonic_mean(mag, err, *, times=None, period=None, n_bins=None, n_harmonics=4):
    """Return ``(mean flux, its error, flags)`` from a weighted Fourier fit at the period.

    ``F(t) = c0 + Σ_k a_k cos(2π k t / P) + b_k sin(2π k t / P)``, k = 1..K, fitted by weighted
    linear least squares (weights 1/σ_F²). The rotation mean is c0 exactly, however unevenly the
    rotation was sampled, as long as K harmonics describe the lightcurve (Harris et al. 1989,
    Icarus 77, 171, fit lightcurves the same way). K drops until there are at least two more
    points than parameters (flag ``few_points_for_harmonics`` when it had to). The error of c0
    is scaled by sqrt(χ²_red) when that exceeds 1.
    """
    if times is None or period is None:
        msg = "the harmonic mean needs the observation times and the rotation period"
        raise ValueError(msg)
    f = 10.0 ** (-0.4 * mag)
    sf = np.maximum(0.4 * np.log(10.0) * f * err, 1e-12 * f)
    n = f.size
    k_max = int(n_harmonics)
    flags = ()
    while k_max > 0 and n < 2 * k_max + 3:
        k_max -= 1
        flags = ("few_points_for_harmonics",)
    w = 2.0 * np.pi * (times - times.min()) / period
    cols = [np.ones(n)]
    for k in range(1, k_max + 1):
        cols += [np.cos(k * w), np.sin(k * w)]
    design = np.column_stack(cols) / sf[:, None]
    coef, *_ = np.linalg.lstsq(design, f / sf, rcond=None)
    cov = np.linalg.pinv(design.T @ design)
    dof = n - design.shape[1]
    chi2 = float(np.sum((design @ coef - f / sf) ** 2))
    scale = max(1.0, chi2 / dof) if dof > 0 else 1.0
    return coef[0], float(np.sqrt(cov[0, 0] * scale)), flags
