"""Recovery of the named night cases: the nucleus path run on each frame, scored against the truth.

The same code serves tests (tests/nucleus/test_case_pulls.py) and the benchmark
(``benchmarks/recovery.py``), so both judge the fit the same way.
"""

import inspect
import warnings

import numpy as np
from astropy import units as u

from photpipe._warnings import PoorResultWarning

from .cases import NIGHT_CASES, render_case

__all__ = ["fit_case_frame", "recover_case", "robust_sigma", "summarise_recovery",
           "coma_afrho_ratio", "AFRHO_RADIUS_PIX"]

#: Aperture radius (pixels) of the coma-only A(0)fρ check: 10", a few FWHM, where the nucleus
#: still holds a good share of the light.
AFRHO_RADIUS_PIX = 10.0


def robust_sigma(values):
    """1.4826 × the median absolute deviation from the median (common practice).

    Examples
    --------
    >>> round(robust_sigma([-1.0, 0.0, 1.0]), 4)
    1.4826
    """
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return np.nan
    return float(1.4826 * np.median(np.abs(v - np.median(v))))


def fit_case_frame(cf, *, cutout=81, **options):
    """Measure the PSF and fit the nucleus of one `CaseFrame` as the campaign does.

    The PSF is the Moffat alone: the cases' stars are Moffat profiles, so the ePSF could only
    fit noise, and building it (photutils, 5-30 s on some frames) would dominate the run.
    The stars' trail, the comet's rate and the exposure time go in when the fitter takes them.
    Returns the `~photpipe.nucleus.NucleusFit` (or the exception's text as a string).
    """
    from photpipe.nucleus import fit_nucleus, measure_psf

    psf_kw = {}
    if "star_trail" in inspect.signature(measure_psf).parameters:
        psf_kw["star_trail"] = cf.star_trail
    fit_kw = dict(options)
    if "comet_trail" in inspect.signature(fit_nucleus).parameters:
        fit_kw["comet_trail"] = cf.comet_trail
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PoorResultWarning)
        try:
            psf = measure_psf(cf.frame, cf.star_xy, exclude_xy=(cf.x_start, cf.y_start),
                              exclude_radius=20.0, fallback_fwhm=cf.fwhm_pix,
                              methods=("moffat",), **psf_kw)
            return fit_nucleus(cf.frame, cf.x_start, cf.y_start, psf,
                               pixel_scale=cf.pixel_scale_arcsec * u.arcsec / u.pix,
                               cutout=cutout, star_xy=cf.star_xy, profile=False,
                               **fit_kw)
        except ValueError as exc:
            return str(exc)


def _true_coma_in_aperture(cf, radius):
    """Noise-free coma electrons inside ``radius`` of the true nucleus (re-rendered)."""
    from photutils.aperture import CircularAperture

    from .comet import render_comet
    from .psf import TrailedMoffat

    psf = TrailedMoffat(cf.fwhm_pix, cf.beta, cf.ellipticity, np.deg2rad(cf.angle_deg),
                        cf.comet_trail)
    coma = render_comet(cf.frame.data.shape, cf.x, cf.y, nucleus_flux=0.0, coma_k=cf.coma_k_e,
                        psf_kernel=psf.stamp(0.0, 0.0), stamp_of=None,
                        fine_kernel_of=psf.fine_kernel)
    ap = CircularAperture((cf.x, cf.y), r=radius)
    return float(ap.to_mask(method="exact").get_values(coma).sum())


def coma_afrho_ratio(cf, fit, *, radius=AFRHO_RADIUS_PIX):
    """Coma-only A(0)fρ over its truth in one aperture, and its relative error.

    The aperture sum (fitted sky taken off, centred on the fitted nucleus) goes through
    `~photpipe.nucleus.coma_only_afrho` as a measurement row whose Afρ is the sum itself: Afρ
    is proportional to the coma's flux for a given geometry (A'Hearn et al. 1984, eq. 4), so
    the ratio of the coma-only value to the true coma's flux in the same aperture is the
    coma-only A(0)fρ over its truth. The aperture error is the pixel variances' sum.
    """
    from astropy.table import QTable
    from photutils.aperture import CircularAperture

    from photpipe.nucleus import coma_only_afrho

    if not (cf.coma_k_e > 0) or isinstance(fit, str):
        return np.nan, np.nan
    mask = CircularAperture((fit.x, fit.y), r=radius).to_mask(method="exact")
    total = float(mask.get_values(cf.frame.data - fit.sky).sum())
    err = float(np.sqrt(mask.get_values(cf.frame.variance).sum()))
    if not total > 0:
        return np.nan, np.nan
    zp = 25.0
    row = QTable({"rho_arcsec": [radius * cf.pixel_scale_arcsec] * u.arcsec,
                  "mag": [zp - 2.5 * np.log10(total / cf.exptime_s)] * u.mag,
                  "zp_mag": [zp] * u.mag, "afrho_cm": [total] * u.cm,
                  "afrho_err_cm": [err] * u.cm, "a0frho_cm": [total] * u.cm,
                  "a0frho_err_cm": [err] * u.cm})
    nuc = max(fit.nucleus_flux_e, 0.0) / cf.exptime_s
    out = coma_only_afrho(row, nuc * u.electron / u.s, fit.psf,
                          pixel_scale=cf.pixel_scale_arcsec * u.arcsec / u.pix,
                          nucleus_flux_err=fit.nucleus_flux_err_e / cf.exptime_s
                          * u.electron / u.s)
    truth = _true_coma_in_aperture(cf, radius)
    value = float(out["a0frho_coma_cm"][0].to_value(u.cm))
    return value / truth, float(out["a0frho_coma_err_cm"][0].to_value(u.cm)) / truth


def recover_case(name, seeds, *, shape=(161, 161), n_catalogued=12, afrho=False, **options):
    """Fit ``seeds`` frames of case ``name``; one dict per frame (truth and result).

    ``shape`` and ``n_catalogued`` go to `render_case`, ``options`` to `fit_case_frame`. With
    ``afrho`` each row also holds ``afrho_ratio`` and ``afrho_rel_err`` (`coma_afrho_ratio`,
    NaN without a coma).
    """
    rows = []
    for seed in seeds:
        cf = render_case(NIGHT_CASES[name], int(seed), shape=shape, n_catalogued=n_catalogued)
        fit = fit_case_frame(cf, **options)
        row = {"seed": int(seed), "truth_e": cf.nucleus_flux_e, "coma_k_true": cf.coma_k_e,
               "fraction_true": cf.nucleus_fraction}
        if isinstance(fit, str):
            row.update(flux_e=np.nan, err_e=np.nan, upper_limit=False, flags=fit,
                       coma_k=np.nan, coma_k_err=np.nan)
        else:
            row.update(flux_e=fit.nucleus_flux_e, err_e=fit.nucleus_flux_err_e,
                       upper_limit=fit.is_upper_limit, flags=",".join(fit.flags),
                       limit_e=fit.upper_limit_e, coma_k=fit.coma_k_e_s * fit.exptime_s,
                       coma_k_err=fit.coma_k_err_e_s * fit.exptime_s)
        if afrho:
            row["afrho_ratio"], row["afrho_rel_err"] = coma_afrho_ratio(cf, fit)
        rows.append(row)
    return rows


def summarise_recovery(rows):
    """Bias (mag), scatter (mag), robust pull σ, upper-limit share and coma K ratio of a case.

    The bias and scatter are in magnitudes, from the fitted fluxes over the truth of every
    frame, detected or not (NaN without a nucleus); the pull (F - F_true) / σ_F is over
    every frame with a finite error, detected or not, since an error bar must hold whether or
    not the value is then shown as a limit. "limit_violations" counts the frames whose upper
    limit lies below the true flux.
    """
    flux = np.array([r["flux_e"] for r in rows], float)
    err = np.array([r["err_e"] for r in rows], float)
    truth = np.array([r["truth_e"] for r in rows], float)
    ul = np.array([r["upper_limit"] for r in rows], bool)
    limit = np.array([r.get("limit_e", np.nan) for r in rows], float)
    ok = np.isfinite(flux) & np.isfinite(err) & (err > 0)
    pull = (flux[ok] - truth[ok]) / err[ok]
    # over every fitted frame, detected or not (the detections alone are a biased selection
    # near the limit): the median flux ratio in magnitudes, the scatter from its robust σ
    has = ok & (truth > 0)
    ratio = flux[has] / truth[has]
    k = np.array([r["coma_k"] for r in rows], float)
    kt = np.array([r["coma_k_true"] for r in rows], float)
    kr = k[kt > 0] / kt[kt > 0]
    return {"n": len(rows), "n_failed": int(np.sum(~np.isfinite(flux))),
            "bias_mag": float(-2.5 * np.log10(np.median(ratio))) if ratio.size else np.nan,
            "scatter_mag": 2.5 / np.log(10) * robust_sigma(ratio) if ratio.size > 2 else np.nan,
            "pull_sigma": robust_sigma(pull) if pull.size > 2 else np.nan,
            "pull_median": float(np.median(pull)) if pull.size else np.nan,
            "upper_limit_fraction": float(np.mean(ul)),
            "limit_violations": int(np.sum(ul & (limit < truth))),
            "coma_k_ratio": float(np.median(kr)) if kr.size else np.nan}
