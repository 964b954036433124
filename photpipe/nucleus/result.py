"""The result of the nucleus fit of one frame, and the flag words it can carry."""

from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.io import fits

from photpipe import schema
from photpipe.flags import FLAGS

from .psf import PSFModel

__all__ = ["NucleusFit", "NUCLEUS_COLUMNS", "NUCLEUS_FLAGS", "WARN_FLAGS"]

#: Columns of ``nucleus.ecsv``, in order, from the schema (`photpipe.schema.NUCLEUS_COLUMNS`).
NUCLEUS_COLUMNS = ("frame",) + schema.column_names(schema.NUCLEUS_COLUMNS)

#: Flag words a nucleus fit can carry and what they mean, taken from the one registry
#: (`photpipe.flags.FLAGS`): the nucleus stage's own, and the PSF's and the cutout's.
NUCLEUS_FLAGS = {word: text for word, (stage, text) in FLAGS.items()
                 if stage == "nucleus" or word in ("psf_fallback", "saturated", "edge")}

#: Flags that make `fit_nucleus` warn (`~photpipe.PoorResultWarning`).
WARN_FLAGS = ("psf_fallback", "upper_limit", "no_convergence", "fit_at_bound",
              "profile_disagrees", "saturated", "core_masked", "no_error", "star_near_nucleus")


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
        Fitted nucleus signal and its adopted error (see `fit_nucleus` Notes).
    nucleus_flux_err_cov_e, nucleus_flux_err_boot_e, nucleus_flux_err_psf_e : float
        The covariance error (unscaled), the bootstrap scatter (NaN when not run) and the part
        of the error from the PSF shape's uncertainty.
    upper_limit_e : float
        Upper limit on the nucleus signal when ``upper_limit`` is flagged, else NaN.
    nucleus_flux_e_s, nucleus_mag, nucleus_mag_err : float
        Reported flux (the upper limit when flagged; NaN when the nucleus is left out, see
        ``flags``), magnitude (zero point convention of the photometry stage; the limit's
        magnitude for a limit) and its error (NaN for limits or without a zero point).
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
    nucleus_flux_err_psf_e: float
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
                    "nucleus_flux_err_psf_e": self.nucleus_flux_err_psf_e,
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
