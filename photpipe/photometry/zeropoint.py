"""The frame's zero point (and optional colour term) from field-star photometry."""

from dataclasses import asdict, dataclass

import numpy as np

__all__ = ["ZeroPoint", "fit_zero_point"]


@dataclass(frozen=True)
class ZeroPoint:
    """Photometric zero point of one frame: mag = zp - 2.5 log10(flux / (electron/s)) + c·colour.

    Attributes
    ----------
    zp, zp_err : float
        Zero point and its uncertainty (mag).
    colour_term, colour_term_err : float
        Colour coefficient c and its uncertainty (0 and NaN when not fitted).
    n_stars : int
        Stars used in the final fit.
    n_rejected : int
        Stars clipped out.
    rms : float
        RMS of the residuals of the used stars (mag).
    chi2_red : float
        Reduced χ² of the final fit.
    band, colour : str
        Catalogue band and colour index.
    aperture_correction : float
        Curve-of-growth factor applied to the star fluxes.
    aperture_correction_err : float
        Its relative uncertainty (included in ``zp_err``).
    """

    zp: float
    zp_err: float
    colour_term: float = 0.0
    colour_term_err: float = float("nan")
    n_stars: int = 0
    n_rejected: int = 0
    rms: float = float("nan")
    chi2_red: float = float("nan")
    band: str = ""
    colour: str = ""
    aperture_correction: float = 1.0
    aperture_correction_err: float = 0.0

    def to_dict(self):
        """Return the fields as a plain dict."""
        return asdict(self)


def _weighted_fit(y, w, colour, fit_colour):
    a = np.column_stack([np.ones_like(y), colour]) if fit_colour else np.ones((y.size, 1))
    aw = a * w[:, None]
    cov = np.linalg.inv(a.T @ aw)
    beta = cov @ (aw.T @ y)
    return beta, cov, a @ beta


def fit_zero_point(inst_mag, inst_err, cat_mag, cat_err, colour, *, fit_colour_term=False,
                   clip_sigma=3.0, max_iter=5, error_floor=0.01, band="", colour_name="",
                   aperture_correction=1.0, aperture_correction_err=0.0):
    """Sigma-clipped, weighted least-squares zero point (and optional colour term).

    Parameters
    ----------
    inst_mag, inst_err : array-like
        Instrumental magnitudes -2.5 log10(flux in electron/s) and their errors.
    cat_mag, cat_err : array-like
        Catalogue magnitudes and errors (NaN errors count as 0).
    colour : array-like
        Catalogue colour of each star (used only with ``fit_colour_term``).
    fit_colour_term : bool, optional
        Fit cat - inst = zp + c · colour instead of a constant.
    clip_sigma : float, optional
        Reject stars whose normalised residual exceeds this many robust standard deviations.
    max_iter : int, optional
        Clipping iterations.
    error_floor : float, optional
        Added in quadrature to each star's error (mag; covers flat-field and catalogue systematics,
        common practice).
    band, colour_name : str, optional
        Recorded in the result.
    aperture_correction : float, optional
        Recorded in the result.
    aperture_correction_err : float, optional
        Relative uncertainty of the aperture correction. It scales every star alike, so it adds
        in quadrature to the zero point's error, 2.5 / ln 10 × σ_c / c (mag).

    Returns
    -------
    zero_point : ZeroPoint
    used : ndarray of bool
        Stars kept by the clipping.
    residual : ndarray
        cat - inst - model for every star (mag).

    Raises
    ------
    ValueError
        If no star has finite values.

    Notes
    -----
    Weighted linear least squares with weights 1/σ², σ² = σ_inst² + σ_cat² + floor²; the
    parameter covariance is scaled by max(1, χ²_red) so that scatter beyond the errors widens the
    zero-point uncertainty (common practice; Press et al. 2007, Numerical Recipes, 15.4). Clipping
    uses the normalised residuals' robust scatter 1.4826 × MAD.

    Examples
    --------
    >>> import numpy as np
    >>> inst = np.array([-10.0, -11.0, -12.0, -9.0])
    >>> zp, used, res = fit_zero_point(inst, np.full(4, 0.01), inst + 25.0, np.zeros(4),
    ...                                np.zeros(4))
    >>> round(zp.zp, 6), zp.n_stars
    (25.0, 4)
    """
    inst = np.asarray(inst_mag, dtype=float)
    ie = np.asarray(inst_err, dtype=float)
    cat = np.asarray(cat_mag, dtype=float)
    ce = np.nan_to_num(np.asarray(cat_err, dtype=float), nan=0.0)
    col = np.asarray(colour, dtype=float)
    y = cat - inst
    finite = np.isfinite(y) & np.isfinite(ie) & (np.isfinite(col) | (not fit_colour_term))
    if not np.any(finite):
        msg = "no star with finite instrumental and catalogue magnitudes"
        raise ValueError(msg)
    col = np.where(np.isfinite(col), col, 0.0)
    var = ie**2 + ce**2 + error_floor**2
    used = finite.copy()
    fit_colour = bool(fit_colour_term) and np.count_nonzero(used) >= 3
    for _ in range(max_iter):
        beta, cov, model = _weighted_fit(y[used], 1.0 / var[used], col[used], fit_colour)
        full_model = beta[0] + (beta[1] * col if fit_colour else 0.0)
        z = (y - full_model) / np.sqrt(var)
        if np.count_nonzero(used) < 3:
            break
        zu = z[used]
        scale = 1.4826 * np.median(np.abs(zu - np.median(zu)))
        scale = max(scale, 1.0)
        new_used = finite & (np.abs(z) <= clip_sigma * scale)
        if np.count_nonzero(new_used) < 2 or np.array_equal(new_used, used):
            break
        used = new_used
        fit_colour = bool(fit_colour_term) and np.count_nonzero(used) >= 3
    beta, cov, model = _weighted_fit(y[used], 1.0 / var[used], col[used], fit_colour)
    full_model = beta[0] + (beta[1] * col if fit_colour else 0.0)
    residual = y - full_model
    n = int(np.count_nonzero(used))
    dof = n - len(beta)
    chi2_red = float(np.sum(residual[used] ** 2 / var[used]) / dof) if dof > 0 else float("nan")
    inflate = max(1.0, chi2_red) if np.isfinite(chi2_red) else 1.0
    err = np.sqrt(np.diag(cov) * inflate)
    apcorr_err = float(aperture_correction_err) if np.isfinite(aperture_correction_err) else 0.0
    zp = ZeroPoint(
        zp=float(beta[0]), zp_err=float(np.hypot(err[0], 2.5 / np.log(10.0) * apcorr_err)),
        colour_term=float(beta[1]) if fit_colour else 0.0,
        colour_term_err=float(err[1]) if fit_colour else float("nan"),
        n_stars=n, n_rejected=int(np.count_nonzero(finite) - n),
        rms=float(np.sqrt(np.mean(residual[used] ** 2))), chi2_red=chi2_red,
        band=band, colour=colour_name, aperture_correction=float(aperture_correction),
        aperture_correction_err=apcorr_err)
    return zp, used, residual
