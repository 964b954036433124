"""Nucleus and coma separated by a PSF-convolved fit to one frame."""

import warnings
from dataclasses import dataclass, field

import lmfit
import numpy as np
from astropy import units as u
from astropy.io import fits
from photutils.aperture import CircularAperture

from photpipe._quantity import as_positive_value, as_value
from photpipe._warnings import PoorResultWarning
from photpipe.frames.types import CalibratedFrame

from ._cutout import cut_comet_box
from ._render import ComponentRenderer
from ._separable import fit_separable, weighted_jacobian
from .profile import fit_radial_profile
from .psf import PSFModel

__all__ = ["NucleusFit", "fit_nucleus", "GAMMA_BOUNDS", "NUCLEUS_COLUMNS"]

#: Range of the coma index when it is fitted (the pixel integral diverges at γ = 2).
GAMMA_BOUNDS = (0.3, 1.9)

#: Columns of ``nucleus.ecsv``, in order.
NUCLEUS_COLUMNS = ("frame", "mjd_utc_mid", "nucleus_mag", "nucleus_mag_err", "nucleus_flux_e_s",
                   "coma_k", "coma_gamma", "fwhm_arcsec", "nucleus_fraction", "chi2_red",
                   "method", "flags")

_STEPS = {"x0": 1e-3, "y0": 1e-3, "gamma": 1e-3}
# 2.5 / ln 10: magnitude error per unit relative flux error (common practice)
_MAG_PER_REL = 2.5 / np.log(10.0)


@dataclass(frozen=True, eq=False)
class NucleusFit:
    """Nucleus and coma of one frame.

    Fluxes are in electrons over the exposure unless the name ends in ``_e_s`` (electron/s).
    ``coma_k_e_s`` is K in Σ = K ρ^-γ with ρ in pixels and Σ in electron/s per pixel.

    Attributes
    ----------
    frame, mjd_utc_mid : str, float
        Frame name and mid-exposure MJD (UTC).
    nucleus_flux_e, nucleus_flux_err_e : float
        Fitted nucleus signal and its adopted error (larger of covariance and bootstrap).
    nucleus_flux_err_cov_e, nucleus_flux_err_boot_e : float
        The two error estimates (bootstrap NaN when not run).
    upper_limit_e : float
        Upper limit on the nucleus signal when ``upper_limit`` is flagged, else NaN.
    nucleus_flux_e_s, nucleus_mag, nucleus_mag_err : float
        Reported flux (the upper limit when flagged), magnitude (zero point convention of the
        photometry stage) and its error (NaN for limits or without a zero point).
    coma_k_e_s, coma_k_err_e_s, coma_gamma, coma_gamma_err : float
        Coma strength and index.
    modulation : dict
        Relative azimuthal amplitudes ``a1, b1, ...`` of the coma.
    x, y, sky, chi2_red : float
        Nucleus position in frame pixels, sky per pixel (electrons), reduced χ².
    fwhm_arcsec, nucleus_fraction : float
        PSF FWHM and the nucleus's share of the model flux within ``fraction_radius`` FWHM.
    method, flags : str, tuple of str
        ``"2d:<psf method>"`` and the flags.
    nfev, n_model_evaluations : int
        Minimiser evaluations of the main fit and model renderings in total.
    profile : `~photpipe.nucleus.ProfileFit` or None
        The 1-D estimate.
    data, model, residual, good : ndarray
        Cutouts (electrons; ``good`` the mask used).
    x_origin, y_origin : int
        Frame pixel of the cutout's [0, 0].
    psf : PSFModel
        The PSF used.
    """

    frame: str
    mjd_utc_mid: float
    nucleus_flux_e: float
    nucleus_flux_err_e: float
    nucleus_flux_err_cov_e: float
    nucleus_flux_err_boot_e: float
    upper_limit_e: float
    nucleus_flux_e_s: float
    nucleus_mag: float
    nucleus_mag_err: float
    coma_k_e_s: float
    coma_k_err_e_s: float
    coma_gamma: float
    coma_gamma_err: float
    modulation: dict
    x: float
    y: float
    sky: float
    chi2_red: float
    fwhm_arcsec: float
    nucleus_fraction: float
    method: str
    flags: tuple
    nfev: int
    n_model_evaluations: int
    exptime_s: float
    profile: object = None
    data: np.ndarray = field(default=None, repr=False)
    model: np.ndarray = field(default=None, repr=False)
    residual: np.ndarray = field(default=None, repr=False)
    good: np.ndarray = field(default=None, repr=False)
    x_origin: int = 0
    y_origin: int = 0
    psf: PSFModel = field(default=None, repr=False)

    @property
    def nucleus_flux(self):
        """Reported nucleus flux as a Quantity (electron/s)."""
        return self.nucleus_flux_e_s * u.electron / u.s

    @property
    def is_upper_limit(self):
        """True when the nucleus was not detected and the flux is an upper limit."""
        return "upper_limit" in self.flags

    def to_row(self):
        """The ``nucleus.ecsv`` row as a dict (plain floats and strings)."""
        return {"frame": self.frame, "mjd_utc_mid": self.mjd_utc_mid,
                "nucleus_mag": self.nucleus_mag, "nucleus_mag_err": self.nucleus_mag_err,
                "nucleus_flux_e_s": self.nucleus_flux_e_s, "coma_k": self.coma_k_e_s,
                "coma_gamma": self.coma_gamma, "fwhm_arcsec": self.fwhm_arcsec,
                "nucleus_fraction": self.nucleus_fraction, "chi2_red": self.chi2_red,
                "method": self.method, "flags": ",".join(self.flags)}

    def to_dict(self):
        """Every scalar result as a plain dict (the row plus errors and the 1-D estimate)."""
        out = self.to_row()
        out.update({"nucleus_flux_e": self.nucleus_flux_e,
                    "nucleus_flux_err_e": self.nucleus_flux_err_e,
                    "nucleus_flux_err_cov_e": self.nucleus_flux_err_cov_e,
                    "nucleus_flux_err_boot_e": self.nucleus_flux_err_boot_e,
                    "upper_limit_e": self.upper_limit_e, "coma_k_err": self.coma_k_err_e_s,
                    "coma_gamma_err": self.coma_gamma_err, "x_pix": self.x, "y_pix": self.y,
                    "sky_e": self.sky, "nfev": self.nfev, **self.modulation})
        if self.profile is not None:
            out.update({f"profile_{k}": v for k, v in self.profile.to_dict().items()})
        return out

    def to_hdulist(self):
        """Data, model and residual cutouts as FITS HDUs (nothing is written)."""
        hdr = fits.Header()
        hdr["FRAME"] = self.frame
        hdr["XORIGIN"] = (self.x_origin, "frame x of cutout pixel 0 (0-based)")
        hdr["YORIGIN"] = (self.y_origin, "frame y of cutout pixel 0 (0-based)")
        hdr["BUNIT"] = "electron"
        hdus = [fits.PrimaryHDU(header=hdr)]
        for name, arr in (("DATA", self.data), ("MODEL", self.model),
                          ("RESIDUAL", self.residual)):
            hdus.append(fits.ImageHDU(np.asarray(arr, dtype=np.float32), name=name))
        hdus.append(fits.ImageHDU(self.good.astype(np.uint8), name="GOOD"))
        return fits.HDUList(hdus)


def _bootstrap(data, sigma, model, basis_fn, params, names, n, rng):
    """Residual bootstrap: refit model + resampled normalised residuals ``n`` times.

    Each refit is a full non-linear fit; it starts from the best fit moved by one Gauss-Newton
    step for the resampled data, taken with the Jacobian at the best fit (computed once), so that
    it starts close to its own minimum.
    """
    r = (data - model) / sigma
    varying = [k for k, p in params.items() if p.vary]
    theta = params.valuesdict()
    coef = np.linalg.lstsq((basis_fn(theta) / sigma).T, model / sigma, rcond=None)[0]
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


def fit_nucleus(frame, x0, y0, psf, *, pixel_scale, zero_point=None, zero_point_err=None,
                gamma="free", cutout=101, star_xy=None, bootstrap=0, rng=None, modulation=0,
                max_shift=2.0, detection_sigma=3.0, fraction_radius=1.0, star_mask_radius=None,
                profile=True, max_nfev=400):
    """Separate nucleus and coma in one frame by a PSF-convolved 2-D fit.

    Parameters
    ----------
    frame : `~photpipe.frames.CalibratedFrame`
        Calibrated frame (electrons over the exposure, sky not subtracted).
    x0, y0 : float
        Starting nucleus position in frame pixels (the photometry stage's refined centroid).
    psf : `~photpipe.nucleus.PSFModel`
        The frame's PSF (`measure_psf`).
    pixel_scale : `~astropy.units.Quantity` [arcsec / pix]
        Pixel scale.
    zero_point, zero_point_err : `~astropy.units.Quantity` [mag] or float, optional
        Zero point (mag of 1 electron/s) and its error; without it magnitudes are NaN.
    gamma : "free" or float, optional
        Coma index: fitted within `GAMMA_BOUNDS`, or held fixed (1 for a steady-state coma).
    cutout : int, optional
        Side of the fitted box, pixels (odd).
    star_xy : array-like, shape (n, 2), optional
        Field-star positions to mask.
    bootstrap : int, optional
        Residual-bootstrap refits. The default, 0, reports the covariance error alone; a
        bootstrap (30-50 refits, each a full non-linear refit: ~25 ms apiece for a 101-pixel
        box) checks it where the fit is far from linear, e.g. a faint nucleus near its
        detection limit.
    rng : `numpy.random.Generator`, optional
        For the bootstrap.
    modulation : int, optional
        Highest azimuthal order of the coma modulation (0 for an axisymmetric coma).
    max_shift : float, optional
        Largest move of the nucleus from (x0, y0), pixels.
    detection_sigma : float, optional
        Below this S/N the nucleus is not detected and an upper limit of
        max(F, 0) + ``detection_sigma`` σ is reported.
    fraction_radius : float, optional
        Radius, in FWHM, of the circle in which ``nucleus_fraction`` is measured.
    star_mask_radius : float, optional
        Radius of the star masks, pixels (default 3 FWHM).
    profile : bool, optional
        Also run the 1-D profile fit.
    max_nfev : int, optional
        Evaluation budget of the main fit; running out flags ``no_convergence``.

    Returns
    -------
    NucleusFit

    Raises
    ------
    TypeError
        For a frame or PSF of the wrong kind.
    ValueError
        For a bad option, a nucleus off the frame, or too few usable pixels.

    Warns
    -----
    PoorResultWarning
        When the result carries a flag (fallback PSF, upper limit, no convergence, a parameter at
        its bound, the 1-D estimate disagreeing).

    Notes
    -----
    The model (see `photpipe.nucleus.models`) is fitted with lmfit, weighting each pixel by the
    inverse of the variance plane. The centre and γ are varied by Levenberg-Marquardt; the
    amplitudes (F_n, K, azimuthal terms, sky) are solved linearly at every step (variable
    projection, Golub & Pereyra 1973). The covariance of all parameters is the inverse of JᵀJ of
    the weighted model (scaled by χ²_red when above 1); the residual bootstrap (Efron &
    Tibshirani 1993, ch. 9), when asked for, refits the model plus resampled normalised
    residuals, and the larger of the two errors is adopted. The covariance error alone is the
    default: on scenario frames its scatter matches the Cramér-Rao bound (tests/nucleus), and
    the bootstrap was most of the stage's cost (50 refits, ~1.4 s per frame).

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
    if not isinstance(frame, CalibratedFrame):
        msg = f"'frame' must be a CalibratedFrame, got {type(frame).__name__}"
        raise TypeError(msg)
    if not isinstance(psf, PSFModel):
        msg = f"'psf' must be a PSFModel, got {type(psf).__name__}"
        raise TypeError(msg)
    name = frame.name
    scale = as_positive_value(pixel_scale, u.arcsec / u.pix, "pixel_scale")
    x0 = as_value(x0, u.pix, "x0", allow_dimensionless=True)
    y0 = as_value(y0, u.pix, "y0", allow_dimensionless=True)
    if not (np.isfinite(x0) and np.isfinite(y0)):
        msg = f"frame {name!r}: nucleus position must be finite, got ({x0}, {y0})"
        raise ValueError(msg)
    if not isinstance(cutout, (int, np.integer)) or cutout % 2 != 1 or cutout < 21:
        msg = f"'cutout' must be an odd integer >= 21, got {cutout!r}"
        raise ValueError(msg)
    free_gamma = isinstance(gamma, str)
    if free_gamma and gamma != "free":
        msg = f"'gamma' must be 'free' or a number in (0, 2), got {gamma!r}"
        raise ValueError(msg)
    if not free_gamma and not 0.0 < float(gamma) < 2.0:
        msg = f"'gamma' must lie in (0, 2), got {gamma}"
        raise ValueError(msg)
    zp = None if zero_point is None else as_value(zero_point, u.mag, "zero_point",
                                                  allow_dimensionless=True)
    zp_err = 0.0 if zero_point_err is None else as_value(zero_point_err, u.mag, "zero_point_err",
                                                         allow_dimensionless=True)
    exptime = as_positive_value(frame.info.exptime, u.s, f"{name}: exptime")
    rng = np.random.default_rng() if rng is None else rng
    fwhm = float(psf.fwhm_pix)

    box = cut_comet_box(frame, x0, y0, cutout, star_xy=star_xy,
                        star_radius=3.0 * fwhm if star_mask_radius is None else star_mask_radius,
                        keep_radius=2.0 * fwhm)
    good = box.good
    if good.mean() < 0.5:
        msg = (f"frame {name!r}: only {good.mean():.0%} of the {cutout}x{cutout} box around the "
               "nucleus is usable")
        raise ValueError(msg)
    flags = list(psf.flags) + list(box.flags)
    xl, yl = x0 - box.x_origin, y0 - box.y_origin

    renderer = ComponentRenderer(good.shape, psf, order=modulation)
    gflat = good.ravel()
    d = box.data.ravel()[gflat]
    s = np.sqrt(box.variance.ravel()[gflat])
    n_amp = len(renderer.names)

    def basis_fn(theta):
        return renderer.components(theta["x0"], theta["y0"],
                                   theta["gamma"]).reshape(n_amp, -1)[:, gflat]

    params = lmfit.Parameters()
    params.add("x0", value=xl, min=xl - max_shift, max=xl + max_shift)
    params.add("y0", value=yl, min=yl - max_shift, max=yl + max_shift)
    params.add("gamma", value=1.0 if free_gamma else float(gamma), min=GAMMA_BOUNDS[0],
               max=GAMMA_BOUNDS[1], vary=free_gamma)
    res = fit_separable(d, s, basis_fn, params, renderer.names, steps=_STEPS,
                       max_nfev=max_nfev)
    v = res.values
    nfev = res.nfev
    if not res.success:
        flags.append("no_convergence")
    if res.at_bound:
        flags.append("fit_at_bound")

    flux = v["nucleus_flux"]
    err_cov = res.sigma("nucleus_flux")
    k_err = res.sigma("coma_k")
    g_err = res.sigma("gamma") if free_gamma else 0.0
    err_boot = np.nan
    if bootstrap and bootstrap > 1:
        best = params.copy()
        for key in ("x0", "y0", "gamma"):
            best[key].value = v[key]
        boot = _bootstrap(d, s, res.model, basis_fn, best, renderer.names, int(bootstrap), rng)
        err_boot = float(np.std(boot[:, 0], ddof=1))
        k_err = max(k_err, float(np.std(boot[:, 1], ddof=1)))
        if free_gamma:
            g_err = max(g_err, float(np.std(boot[:, 2], ddof=1)))
    err = np.nanmax([err_cov, err_boot]) if np.isfinite(err_cov) else err_boot

    comps = renderer.components(v["x0"], v["y0"], v["gamma"])
    amps = np.array([v[n] for n in renderer.names])
    model_img = np.tensordot(amps, comps, axes=1)
    point_img = flux * comps[0]
    coma_img = np.tensordot(amps[1:-1], comps[1:-1], axes=1)

    prof = None
    if profile:
        prof = fit_radial_profile(box.data, box.variance, good, v["x0"], v["y0"], renderer,
                                  gamma="free" if free_gamma else float(gamma),
                                  gamma_bounds=GAMMA_BOUNDS)
        diff = flux - prof.nucleus_flux
        tol = 3.0 * np.hypot(err, prof.nucleus_flux_err)
        if not np.isfinite(tol) or abs(diff) > tol:
            flags.append("profile_disagrees")

    upper = np.nan
    detected = np.isfinite(err) and err > 0 and flux > detection_sigma * err
    if not detected:
        flags.append("upper_limit")
        upper = max(flux, 0.0) + detection_sigma * (err if np.isfinite(err) else np.inf)
    reported = (flux if detected else upper) / exptime
    if zp is not None and np.isfinite(reported) and reported > 0:
        mag = zp - 2.5 * np.log10(reported)
        mag_err = float(np.hypot(_MAG_PER_REL * err / flux, zp_err)) if detected else np.nan
    else:
        mag, mag_err = np.nan, np.nan

    w = _aperture_weights(good.shape, v["x0"], v["y0"], fraction_radius * fwhm)
    pn = np.sum(w * max(flux, 0.0) * comps[0])
    pc = np.sum(w * coma_img)
    fraction = float(pn / (pn + pc)) if (pn + pc) > 0 else np.nan

    modul = {}
    for m in range(1, modulation + 1):
        for tag, key in (("a", f"coma_k_cos{m}"), ("b", f"coma_k_sin{m}")):
            modul[f"{tag}{m}"] = v[key] / v["coma_k"] if v["coma_k"] != 0 else np.nan

    flags = list(dict.fromkeys(flags))
    if any(f in flags for f in ("psf_fallback", "upper_limit", "no_convergence", "fit_at_bound",
                                "profile_disagrees", "saturated")):
        warnings.warn(f"frame {name!r}: nucleus fit flagged {','.join(flags)}",
                      PoorResultWarning, stacklevel=2)
    residual = np.where(good, box.data - model_img, np.nan)
    data_img = np.where(good, box.data, np.nan)
    del point_img
    return NucleusFit(
        frame=name, mjd_utc_mid=float(frame.info.time_mid.utc.mjd), nucleus_flux_e=float(flux),
        nucleus_flux_err_e=float(err), nucleus_flux_err_cov_e=float(err_cov),
        nucleus_flux_err_boot_e=float(err_boot), upper_limit_e=float(upper),
        nucleus_flux_e_s=float(reported), nucleus_mag=float(mag), nucleus_mag_err=float(mag_err),
        coma_k_e_s=float(v["coma_k"] / exptime), coma_k_err_e_s=float(k_err / exptime),
        coma_gamma=float(v["gamma"]), coma_gamma_err=float(g_err), modulation=modul,
        x=float(v["x0"] + box.x_origin), y=float(v["y0"] + box.y_origin), sky=float(v["sky"]),
        chi2_red=float(res.chi2_red), fwhm_arcsec=float(fwhm * scale),
        nucleus_fraction=fraction, method=f"2d:{psf.method}", flags=tuple(flags), nfev=nfev,
        n_model_evaluations=renderer.n_evaluations, exptime_s=float(exptime), profile=prof,
        data=data_img, model=model_img, residual=residual, good=good, x_origin=box.x_origin,
        y_origin=box.y_origin, psf=psf)
