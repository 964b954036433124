"""Nucleus and coma separated by a PSF-convolved fit to one frame (`fit_nucleus`).

How the error is formed, and why. The statistical part is the covariance (JᵀJ)⁻¹ of all
parameters (Kay 1993, eq. 3.31 at the fit), scaled by the larger of 1, χ²_red of the box
and χ²_red within 2 FWHM of the nucleus: a PSF that is slightly wrong shows as excess
residual where the nucleus's information is, and the box-wide χ²_red, diluted by thousands
of sky pixels, would not see it. The second part is the PSF's own uncertainty, measured from
the stars: the flux is refitted with the Moffat FWHM and β moved by their standard errors
from the scatter of the star-by-star fits (`psf_shape_error`), and the two are added in
quadrature. A residual bootstrap alone would miss that second part (it resamples the
residuals of a fit made with the same PSF), and was the stage's main cost; it stays as an
option. The pulls (F - F_true)/σ_F over the named cases of `photpipe.scenario.NIGHT_CASES`
(24 seeds each) have a pooled σ of 0.97 and median -0.08 (tests/nucleus/test_case_pulls.py
gives the figures per case).
"""

import inspect
import warnings
from dataclasses import dataclass

import lmfit
import numpy as np
from photutils.aperture import CircularAperture

from photpipe._warnings import PoorResultWarning

from ._cutout import cut_comet_box
from ._fit_steps import (
    core_bad_share,
    find_peak,
    find_residual_sources,
    psf_shape_error,
    refine_source,
)
from ._render import ComponentRenderer
from ._separable import _solve, fit_separable, weighted_jacobian
from .fit_options import DETECTION_SIGMA, FitOptions, checked_options, option_parameters
from .profile import fit_radial_profile
from .result import WARN_FLAGS, NucleusFit

__all__ = ["fit_nucleus", "GAMMA_BOUNDS", "FitOptions", "DETECTION_SIGMA"]

#: Range of the coma index when it is fitted (the pixel integral diverges at γ = 2).
GAMMA_BOUNDS = (0.3, 1.9)

#: Flags that make the nucleus an upper limit whatever its significance.
_FORCE_LIMIT = ("psf_fallback", "star_near_nucleus", "fit_at_bound")
#: Share of unusable pixels within one FWHM beyond which the nucleus is left out.
_CORE_BAD_SHARE = 0.25
#: At most this many uncatalogued stars are masked or fitted in the box.
_MAX_EXTRA = 6

_STEPS = {"x0": 1e-3, "y0": 1e-3, "gamma": 1e-3}
# 2.5 / ln 10: magnitude error per unit relative flux error (common practice)
_MAG_PER_REL = 2.5 / np.log(10.0)


def _bootstrap(data, sigma, model, basis_fn, params, names, n, rng):
    """Residual bootstrap: refit model + resampled normalised residuals ``n`` times.

    Each refit is a full non-linear fit; it starts from the best fit moved by one Gauss-Newton
    step for the resampled data, taken with the Jacobian at the best fit (computed once), so that
    it starts close to its own minimum.
    """
    r = (data - model) / sigma
    varying = [k for k, p in params.items() if p.vary]
    theta = params.valuesdict()
    coef = _solve(basis_fn(theta), model, sigma)
    jac = weighted_jacobian(basis_fn, theta, coef, sigma, {k: _STEPS[k] for k in varying})
    solve = np.linalg.pinv(jac)[len(names):]
    out = []
    for _ in range(n):
        noise = sigma * rng.choice(r, size=r.size, replace=True)
        start = params.copy()
        for k, step in zip(varying, solve @ (noise / sigma)):
            p = start[k]
            p.value = float(np.clip(p.value + step, p.min, p.max))
        res = fit_separable(model + noise, sigma, basis_fn, start, names, steps=_STEPS,
                            max_nfev=80, xtol=1e-4, covariance=False)
        out.append([res.values["nucleus_flux"], res.values["coma_k"], res.values["gamma"]])
    return np.array(out)


def _aperture_weights(shape, x, y, radius):
    ap = CircularAperture((x, y), r=radius)
    return ap.to_mask(method="exact").to_image(shape)


def _start_position(frame, x0, y0, psf, star_xy, opt):
    """Where the fit starts: the comet's peak within the search radius of the given position.

    The given position can be off by the header WCS error or a centroid pulled by a trail; the
    model's centre may move only ``max_shift`` pixels from the start, so the start is found
    first (catalogued stars within 2 FWHM do not count as the peak).
    """
    r = int(np.ceil(opt.search_radius + 2 * psf.fwhm_pix))
    box = cut_comet_box(frame, x0, y0, 2 * r + 1, star_radius=0.0, keep_radius=0.0)
    # a catalogued star on the start itself is not avoided: the box flags it (star_near_nucleus)
    avoid = [] if star_xy is None else [
        (sx - box.x_origin, sy - box.y_origin)
        for sx, sy in np.asarray(star_xy, float).reshape(-1, 2)
        if np.hypot(sx - x0, sy - y0) > 2.0 * psf.fwhm_pix]
    xs, ys = find_peak(box.data, box.good, x0 - box.x_origin, y0 - box.y_origin,
                       radius=opt.search_radius, fwhm=max(psf.fwhm_pix, 1.0),
                       avoid_xy=avoid, avoid_radius=2.0 * psf.fwhm_pix)
    return xs + box.x_origin, ys + box.y_origin


@dataclass(frozen=True, eq=False)
class _ModelFit:
    """One fit of the model to the cutout and what is needed to reuse it."""

    res: object
    renderer: ComponentRenderer
    basis_fn: object
    params: object
    d: np.ndarray
    s: np.ndarray
    names: list
    extra: np.ndarray


def _fit_model(box, psf, xl, yl, opt, *, gamma_free, gamma, extra=None, max_shift=None):
    """Variable-projection fit of nucleus + coma (+ fixed-position extra point sources)."""
    good = box.good
    renderer = ComponentRenderer(good.shape, psf, order=opt.modulation)
    gflat = good.ravel()
    d = box.data.ravel()[gflat]
    s = np.sqrt(box.variance.ravel()[gflat])
    n_amp = len(renderer.names)
    extra = np.zeros((0, int(gflat.sum()))) if extra is None else extra
    names = list(renderer.names) + [f"source{i + 1}" for i in range(len(extra))]

    def basis_fn(theta):
        comps = renderer.components(theta["x0"], theta["y0"], theta["gamma"])
        return np.vstack([comps.reshape(n_amp, -1)[:, gflat], extra])

    shift = opt.max_shift if max_shift is None else max_shift
    params = lmfit.Parameters()
    params.add("x0", value=xl, min=xl - shift, max=xl + shift)
    params.add("y0", value=yl, min=yl - shift, max=yl + shift)
    params.add("gamma", value=gamma, min=GAMMA_BOUNDS[0], max=GAMMA_BOUNDS[1], vary=gamma_free)
    res = fit_separable(d, s, basis_fn, params, names, steps=_STEPS, max_nfev=opt.max_nfev)
    return _ModelFit(res, renderer, basis_fn, params, d, s, names, extra)


def _extra_sources(box, fit, psf_star, opt, flags):
    """Uncatalogued stars in the first fit's residual: masked when far, fitted when near.

    Far (beyond 3 FWHM of the nucleus) a disc of 2 FWHM plus the trail is masked and the
    star's light past it (4 % of a β = 3 Moffat's beyond 2 FWHM) is fitted as a point source of
    the stars' PSF with a free flux, fixed by the pixels outside the disc; nearer, the point
    source is fitted whole (masking it would take the nucleus's own wings away). Returns the
    images of the fitted sources on the usable pixels (rows) and updates ``box.good`` in place
    for the masked ones.
    """
    v = fit.res.values
    fwhm = psf_star.fwhm_pix
    resid = np.zeros(box.good.shape)
    resid[box.good] = (fit.d - fit.res.model) / fit.s
    found = find_residual_sources(resid, box.good, v["x0"], v["y0"], fwhm=fwhm,
                                  keep_radius=1.5 * fwhm)
    if not found:
        return None
    yy, xx = np.mgrid[0:box.good.shape[0], 0:box.good.shape[1]]
    sources = []
    resid_e = np.zeros(box.good.shape)
    resid_e[box.good] = fit.d - fit.res.model
    sig = np.sqrt(box.variance)
    for sx, sy, _ in found[:_MAX_EXTRA]:
        if np.hypot(sx - v["x0"], sy - v["y0"]) <= 3.0 * fwhm:
            sx, sy = refine_source(resid_e, sig, box.good, sx, sy, psf_star, radius=1.5 * fwhm)
        sources.append((sx, sy))
        if np.hypot(sx - v["x0"], sy - v["y0"]) > 3.0 * fwhm:
            box.good[np.hypot(xx - sx, yy - sy) < 2.0 * fwhm + 0.5 * psf_star.trail_length_pix] \
                = False
            flags.append("uncatalogued_star_masked")
        else:
            flags.append("uncatalogued_star_fitted")
    gflat = box.good.ravel()
    rows = [psf_star.render(box.good.shape, sx, sy).ravel()[gflat] for sx, sy in sources]
    rows = [r for r in rows if r.sum() > 1e-3]
    return np.array(rows).reshape(-1, int(gflat.sum()))


def _core_chi2(fit, good, x, y, radius):
    """χ² per degree of freedom of the fit within ``radius`` of the nucleus (a PSF misfit).

    The core's degrees of freedom are its pixels less their leverage, the share of the
    parameters they fix (`SeparableFit.leverage`): the nucleus's flux and centre live there,
    the sky, the coma and the stars mostly outside. Counting every parameter against the core
    made a correct model's χ² 1.13 on average (measured on the bare-nucleus case) and the
    errors 6 % too large.
    """
    ny, nx = good.shape
    yy, xx = np.mgrid[0:ny, 0:nx]
    core = (np.hypot(xx - x, yy - y) <= radius)[good]
    r = (fit.d - fit.res.model) / fit.s
    n_par = len(fit.res.names)
    if core.sum() <= 2 * n_par:
        return np.nan
    used = float(np.sum(fit.res.leverage()[core]))
    if not np.isfinite(used):
        used = float(n_par)
    return float(np.sum(r[core] ** 2) / max(core.sum() - used, 1.0))


def _flux_for_psf(fit, box, psf, opt):
    """Nucleus flux refitted with another PSF, the centre and γ held at the best fit."""
    v = fit.res.values
    r = ComponentRenderer(box.good.shape, psf, order=opt.modulation)
    gflat = box.good.ravel()
    comps = r.components(v["x0"], v["y0"], v["gamma"]).reshape(len(r.names), -1)[:, gflat]
    b = np.vstack([comps, fit.extra])
    coef = _solve(b, fit.d, fit.s)
    return float(coef[0])


def _nucleus_error(fit, box, psf, opt, free_gamma):
    """Adopted nucleus-flux error and its parts (see `fit_nucleus` Notes)."""
    res = fit.res
    v = res.values
    err_cov = res.sigma("nucleus_flux", scale=False)
    chi2_core = _core_chi2(fit, box.good, v["x0"], v["y0"], 2.0 * psf.fwhm_pix)
    scale2 = np.nanmax([1.0, res.chi2_red, chi2_core])
    err_stat = err_cov * np.sqrt(scale2)
    err_psf = psf_shape_error(lambda p: _flux_for_psf(fit, box, p, opt), psf)
    return float(np.hypot(err_stat, err_psf)), float(err_cov), float(err_psf), float(scale2)


def _decide(flux, err, flags, opt):
    """Detected, upper limit or left out; returns (reported flux in electrons, limit)."""
    if "core_masked" in flags or not (np.isfinite(flux) and np.isfinite(err) and err > 0):
        if "core_masked" not in flags:
            flags.append("no_error")
        return np.nan, np.nan
    forced = [f for f in _FORCE_LIMIT if f in flags]
    if flux > opt.detection_sigma * err and not forced:
        return flux, np.nan
    flags.append("upper_limit")
    upper = max(flux, 0.0) + opt.detection_sigma * err
    return upper, upper


def _star_wings(box, psf_star):
    """Images, on the usable pixels, of the masked catalogued stars' light past their discs.

    A Moffat star (β = 3) keeps about 1 % of its light beyond the 3-FWHM mask, most of it just
    outside: left unmodelled, the light of a few bright stars in the box goes into the broad
    coma, whose free γ then steals from the nucleus (-1.3 % in the nominal case's median, from
    masked stars alone). Each star whose disc or wings reach the box gets a point source of the
    stars' PSF at its catalogued position with a free flux, fixed only by the wing pixels;
    stars that put less than 0.1 % of their light on usable pixels are left out (no
    information, and a near-empty column).
    """
    gflat = box.good.ravel()
    rows = []
    for sx, sy in box.masked_star_xy:
        img = psf_star.render(box.good.shape, sx, sy).ravel()[gflat]
        if img.sum() > 1e-3:
            rows.append(img)
    return np.array(rows).reshape(-1, int(gflat.sum()))


def _fit_with_sources(box, psf, psf_star, xl, yl, opt, flags):
    """The model fit: a first fit, uncatalogued stars found in its residual, a refit with them.

    The masked catalogued stars' wings are fitted throughout (`_star_wings`). A coma that the
    data do not show (K below 2σ, γ at a bound or not constrained) leaves γ free to wander:
    the fit is then repeated with γ = 1 (flag ``gamma_fixed``), so that a bare nucleus fits
    cleanly with the coma consistent with zero.
    """
    gamma_free = opt.free_gamma
    fit = _fit_model(box, psf, xl, yl, opt, gamma_free=gamma_free, gamma=opt.gamma,
                     extra=_star_wings(box, psf_star))
    near = _extra_sources(box, fit, psf_star, opt, flags)
    extra = fit.extra
    if near is not None:
        # the good pixels may have changed (far stars masked): the wings are redone on them
        extra = np.vstack([near, _star_wings(box, psf_star)])
        fit = _fit_model(box, psf, fit.res.values["x0"], fit.res.values["y0"], opt,
                         gamma_free=gamma_free, gamma=fit.res.values["gamma"], extra=extra,
                         max_shift=0.5)
    if gamma_free and not _coma_seen(fit.res):
        flags.append("gamma_fixed")
        fit = _fit_model(box, psf, xl, yl, opt, gamma_free=False, gamma=1.0, extra=extra)
    return fit


def _coma_seen(res):
    """True when the fit constrains γ: K above 2σ, γ off its bounds and a finite error."""
    k, k_err = res.values["coma_k"], res.sigma("coma_k", scale=False)
    g_err = res.sigma("gamma", scale=False) if "gamma" in res.names else np.nan
    return (np.isfinite(k_err) and k > 2.0 * k_err and np.isfinite(g_err)
            and "gamma" not in res.at_bound)


def fit_nucleus(frame, x0, y0, psf, *, pixel_scale, zero_point=None, zero_point_err=None,
                star_xy=None, comet_trail=(0.0, 0.0), star_trail=(0.0, 0.0), rng=None,
                **options):
    """Separate nucleus and coma in one frame by a PSF-convolved 2-D fit.

    Parameters
    ----------
    frame : `~photpipe.frames.CalibratedFrame`
        Calibrated frame (electrons over the exposure, sky not subtracted).
    x0, y0 : float
        Starting nucleus position in frame pixels (the photometry stage's refined centroid);
        it may be a few arcsec off (``search_radius``).
    psf : `~photpipe.nucleus.PSFModel`
        The frame's core PSF (`measure_psf`, de-trailed when the stars trail).
    pixel_scale : `~astropy.units.Quantity` [arcsec / pix]
        Pixel scale.
    zero_point, zero_point_err : `~astropy.units.Quantity` [mag] or float, optional
        Zero point (mag of 1 electron/s) and its error; without it magnitudes are NaN.
    star_xy : array-like, shape (n, 2), optional
        Field-star positions to mask.
    comet_trail : tuple of float, optional
        (dx, dy), pixels: the comet's motion on the detector during the exposure (sky-plane
        rate × exposure time, through the WCS; (0, 0) when the telescope tracks the comet).
        The nucleus and coma are modelled with the PSF averaged along it.
    star_trail : tuple of float, optional
        The stars' motion during the exposure (tracking on the comet), used for the PSF of
        uncatalogued stars found in the cutout.
    rng : `numpy.random.Generator`, optional
        For the bootstrap.
    **options
        How the fit runs, by name (``gamma, cutout, bootstrap, modulation, max_shift,
        search_radius, detection_sigma, fraction_radius, star_mask_radius, profile,
        max_nfev``): the fields of `FitOptions`, described there with their defaults.

    Returns
    -------
    NucleusFit
        ``flags`` holds the words of `NUCLEUS_FLAGS` that apply. The nucleus is an upper limit
        (flag ``upper_limit`` with the reason) below the detection threshold, with the PSF a
        fallback, with a catalogued star on the nucleus, or with the centre at its bound; it is
        left out (NaN, flag ``core_masked`` or ``no_error``) when the core is unusable.

    Raises
    ------
    TypeError
        For a frame or PSF of the wrong kind.
    ValueError
        For a bad option, a nucleus off the frame, or too few usable pixels.

    Warns
    -----
    PoorResultWarning
        When the result carries a flag of `WARN_FLAGS`.

    Notes
    -----
    The model (see `photpipe.nucleus.models`) is fitted with lmfit, weighting each pixel by the
    inverse of the variance plane. The centre and γ are varied by Levenberg-Marquardt; the
    amplitudes (F_n, K, azimuthal terms, sky, uncatalogued stars) are solved linearly at every
    step (variable projection, Golub & Pereyra 1973). The error: see the module's notes.

    Examples
    --------
    >>> import numpy as np
    >>> from astropy import units as u
    >>> from astropy.time import Time
    >>> from photpipe.frames.types import CalibratedFrame, FrameInfo
    >>> from photpipe.nucleus import PSFModel, nucleus_coma_image
    >>> psf = PSFModel.from_moffat(3.0)
    >>> truth = nucleus_coma_image((81, 81), 40.2, 39.7, nucleus_flux=2e4, coma_k=50.0,
    ...                            psf=psf, sky=100.0)
    >>> rng = np.random.default_rng(3)
    >>> var = truth + 25.0
    >>> info = FrameInfo("demo.fits", "science", Time("2026-01-01"), 100 * u.s, "R",
    ...                  1 * u.electron / u.adu, 5 * u.electron, 60000 * u.adu, (1, 1), (81, 81))
    >>> frame = CalibratedFrame(info, truth + rng.normal(size=var.shape) * np.sqrt(var), var,
    ...                         np.zeros((81, 81), np.uint16))
    >>> fit = fit_nucleus(frame, 40.0, 40.0, psf, pixel_scale=1.0 * u.arcsec / u.pix,
    ...                   cutout=61, gamma=1.0, bootstrap=0)
    >>> bool(abs(fit.nucleus_flux_e / 2e4 - 1) < 3 * fit.nucleus_flux_err_e / 2e4)
    True
    """
    options = FitOptions.from_keywords(**options)
    opt = checked_options(frame, psf, x0, y0, pixel_scale=pixel_scale, zero_point=zero_point,
                          zero_point_err=zero_point_err, options=options)
    psf_comet = psf.with_trail(comet_trail) if any(comet_trail) else psf
    psf_star = psf.with_trail(star_trail) if any(star_trail) else psf
    box, xl, yl, flags = _prepare_box(frame, x0, y0, psf, psf_comet, psf_star, star_xy, opt)
    fit = _fit_with_sources(box, psf_comet, psf_star, xl, yl, opt, flags)
    errors = _errors(fit, box, psf_comet, opt, flags, options.bootstrap,
                     np.random.default_rng() if rng is None else rng)
    images = _images(fit, box.good)
    prof = _profile_check(fit, box, errors, flags) if options.profile else None
    reported, upper = _decide(fit.res.values["nucleus_flux"], errors["err"], flags, opt)
    flags = list(dict.fromkeys(flags))
    if any(f in flags for f in WARN_FLAGS):
        warnings.warn(f"frame {opt.name!r}: nucleus fit flagged {','.join(flags)}",
                      PoorResultWarning, stacklevel=2)
    return _assemble(frame, psf, psf_comet, opt, box, fit, errors, images, prof, reported,
                     upper, flags)


def _flat_signature():
    """``fit_nucleus``'s signature with every option of `FitOptions` and its default."""
    sig = inspect.signature(fit_nucleus)
    named = [p for p in sig.parameters.values() if p.kind is not inspect.Parameter.VAR_KEYWORD]
    return sig.replace(parameters=named + option_parameters())


# introspection (help, editors, the configuration's check of defaults) sees every keyword
fit_nucleus.__signature__ = _flat_signature()


def _prepare_box(frame, x0, y0, psf, psf_comet, psf_star, star_xy, opt):
    """The start position, the cutout with catalogued stars masked, and the first flags."""
    fwhm = float(psf.fwhm_pix)
    xs, ys = _start_position(frame, float(x0), float(y0), psf_comet, star_xy, opt)
    box = cut_comet_box(frame, xs, ys, opt.cutout, star_xy=star_xy,
                        star_radius=opt.star_radius + 0.5 * psf_star.trail_length_pix,
                        keep_radius=2.0 * fwhm, wing_radius=float(psf_star.half_size),
                        core_radius=fwhm)
    if box.good.mean() < 0.5:
        msg = (f"frame {opt.name!r}: only {box.good.mean():.0%} of the {opt.cutout}x"
               f"{opt.cutout} box around the nucleus is usable")
        raise ValueError(msg)
    flags = list(psf.flags) + list(box.flags)
    xl, yl = xs - box.x_origin, ys - box.y_origin
    if core_bad_share(box.good, xl, yl, fwhm) > _CORE_BAD_SHARE:
        flags.append("core_masked")
    return box, xl, yl, flags


def _errors(fit, box, psf_comet, opt, flags, bootstrap, rng):
    """Errors of flux, K and γ (the optional bootstrap can only raise them); fit flags."""
    res, v = fit.res, fit.res.values
    if not res.success:
        flags.append("no_convergence")
    if any(k in res.at_bound for k in ("x0", "y0")):
        flags.append("fit_at_bound")
    err, err_cov, err_psf, scale2 = _nucleus_error(fit, box, psf_comet, opt, opt.free_gamma)
    out = {"err": err, "err_cov": err_cov, "err_psf": err_psf, "err_boot": np.nan,
           "k_err": res.sigma("coma_k", scale=False) * np.sqrt(scale2),
           "g_err": res.sigma("gamma", scale=False) * np.sqrt(scale2)
           if "gamma" in res.names else 0.0}
    if bootstrap and bootstrap > 1:
        best = fit.params.copy()
        for key in ("x0", "y0", "gamma"):
            best[key].value = v[key]
        best["gamma"].vary = "gamma" in res.names
        boot = _bootstrap(fit.d, fit.s, res.model, fit.basis_fn, best, fit.names,
                          int(bootstrap), rng)
        out["err_boot"] = float(np.std(boot[:, 0], ddof=1))
        out["k_err"] = max(out["k_err"], float(np.std(boot[:, 1], ddof=1)))
        if "gamma" in res.names:
            out["g_err"] = max(out["g_err"], float(np.std(boot[:, 2], ddof=1)))
        out["err"] = float(np.nanmax([err, out["err_boot"]]))
    return out


def _images(fit, good):
    """Model (with any fitted uncatalogued stars), unit point source and coma images."""
    v = fit.res.values
    renderer = fit.renderer
    n_amp = len(renderer.names)
    comps = renderer.components(v["x0"], v["y0"], v["gamma"])
    amps = np.array([v[n] for n in renderer.names])
    model_img = np.tensordot(amps, comps, axes=1)
    if len(fit.extra):
        extra_img = np.zeros(good.size)
        extra_img[good.ravel()] = np.array([v[n] for n in fit.names[n_amp:]]) @ fit.extra
        model_img = model_img + extra_img.reshape(good.shape)
    return {"model": model_img, "point": comps[0],
            "coma": np.tensordot(amps[1:-1], comps[1:-1], axes=1)}


def _profile_check(fit, box, errors, flags):
    """The 1-D profile estimate; flag ``profile_disagrees`` beyond 3σ of the 2-D fit."""
    v = fit.res.values
    prof = fit_radial_profile(box.data, box.variance, box.good, v["x0"], v["y0"], fit.renderer,
                              gamma="free" if "gamma" in fit.res.names else float(v["gamma"]),
                              gamma_bounds=GAMMA_BOUNDS)
    tol = 3.0 * np.hypot(errors["err"], prof.nucleus_flux_err)
    if not np.isfinite(tol) or abs(v["nucleus_flux"] - prof.nucleus_flux) > tol:
        flags.append("profile_disagrees")
    return prof


def _assemble(frame, psf, psf_comet, opt, box, fit, errors, images, prof, reported, upper,
              flags):
    """The `NucleusFit`: magnitudes, the nucleus's share of the light and every value."""
    res, v = fit.res, fit.res.values
    good = box.good
    flux = v["nucleus_flux"]
    fwhm = float(psf.fwhm_pix)
    mag, mag_err = _magnitude(reported, flux, errors["err"], "upper_limit" in flags, opt)
    w = _aperture_weights(good.shape, v["x0"], v["y0"], opt.fraction_radius * fwhm)
    pn = np.sum(w * max(flux, 0.0) * images["point"])
    pc = np.sum(w * images["coma"])
    fraction = float(pn / (pn + pc)) if (pn + pc) > 0 else np.nan
    modul = {}
    for m in range(1, opt.modulation + 1):
        for tag, key in (("a", f"coma_k_cos{m}"), ("b", f"coma_k_sin{m}")):
            modul[f"{tag}{m}"] = v[key] / v["coma_k"] if v["coma_k"] != 0 else np.nan
    model_img = images["model"]
    return NucleusFit(
        frame=opt.name, mjd_utc_mid=float(frame.info.time_mid.utc.mjd),
        nucleus_flux_e=float(flux), nucleus_flux_err_e=float(errors["err"]),
        nucleus_flux_err_cov_e=float(errors["err_cov"]),
        nucleus_flux_err_boot_e=float(errors["err_boot"]),
        nucleus_flux_err_psf_e=float(errors["err_psf"]), upper_limit_e=float(upper),
        nucleus_flux_e_s=float(reported / opt.exptime), nucleus_mag=float(mag),
        nucleus_mag_err=float(mag_err), coma_k_e_s=float(v["coma_k"] / opt.exptime),
        coma_k_err_e_s=float(errors["k_err"] / opt.exptime), coma_gamma=float(v["gamma"]),
        coma_gamma_err=float(errors["g_err"]), modulation=modul,
        x=float(v["x0"] + box.x_origin), y=float(v["y0"] + box.y_origin), sky=float(v["sky"]),
        chi2_red=float(res.chi2_red), fwhm_arcsec=float(fwhm * opt.scale),
        nucleus_fraction=fraction, method=f"2d:{psf.method}", flags=tuple(flags),
        nfev=res.nfev, n_model_evaluations=fit.renderer.n_evaluations,
        exptime_s=float(opt.exptime), profile=prof, data=np.where(good, box.data, np.nan),
        model=model_img, residual=np.where(good, box.data - model_img, np.nan), good=good,
        x_origin=box.x_origin, y_origin=box.y_origin, psf=psf_comet)


def _magnitude(reported, flux, err, is_limit, opt):
    """Magnitude of the reported flux (a limit's magnitude for limits) and its error."""
    rate = reported / opt.exptime
    if opt.zp is None or not (np.isfinite(rate) and rate > 0):
        return np.nan, np.nan
    mag = opt.zp - 2.5 * np.log10(rate)
    if is_limit:
        return mag, np.nan
    return mag, float(np.hypot(_MAG_PER_REL * err / flux, opt.zp_err))
