"""The 1-D estimate: a nucleus + coma fit to the azimuthally averaged profile.

Common practice beside a 2-D fit (e.g. Lamy et al. 2004, in Comets II, 223, sect. 2, from
memory): average data and model components in circular annuli about the nucleus and fit the
profile. Averaging in annuli makes the estimate insensitive to non-axisymmetric coma structure,
and the annulus errors come from the scatter inside each annulus, so it is a check on the 2-D
fit rather than a copy of it.
"""

from dataclasses import dataclass

import lmfit
import numpy as np

from ._separable import fit_separable

__all__ = ["ProfileFit", "annulus_index", "fit_radial_profile"]


@dataclass(frozen=True, eq=False)
class ProfileFit:
    """Result of `fit_radial_profile` (fluxes in the cutout's signal unit)."""

    radius: np.ndarray
    profile: np.ndarray
    profile_err: np.ndarray
    model: np.ndarray
    nucleus_flux: float
    nucleus_flux_err: float
    coma_k: float
    coma_k_err: float
    gamma: float
    chi2_red: float
    success: bool

    def to_dict(self):
        """Scalars as a plain dict."""
        return {"nucleus_flux": self.nucleus_flux, "nucleus_flux_err": self.nucleus_flux_err,
                "coma_k": self.coma_k, "coma_k_err": self.coma_k_err, "gamma": self.gamma,
                "chi2_red": self.chi2_red, "success": self.success}


def annulus_index(shape, x0, y0, *, width=1.0, r_max=None):
    """Annulus number of every pixel centre (−1 beyond ``r_max``).

    Examples
    --------
    >>> idx = annulus_index((5, 5), 2.0, 2.0)
    >>> int(idx[2, 2]), int(idx[2, 4])
    (0, 2)
    """
    ny, nx = shape
    yy, xx = np.mgrid[0:ny, 0:nx]
    r = np.hypot(xx - x0, yy - y0)
    if r_max is None:
        r_max = min(x0, y0, nx - 1 - x0, ny - 1 - y0)
    idx = np.floor(r / width).astype(int)
    idx[r > r_max] = -1
    return idx


def fit_radial_profile(data, variance, good, x0, y0, renderer, *, gamma="free",
                       gamma_bounds=(0.3, 1.9), width=1.0):
    """Fit the nucleus and coma to the azimuthal profile of a cutout.

    Parameters
    ----------
    data, variance : ndarray, shape (ny, nx)
        Cutout and its variance.
    good : ndarray of bool, shape (ny, nx)
        Usable pixels.
    x0, y0 : float
        Centre in cutout pixels (from the 2-D fit).
    renderer : ComponentRenderer
        Renders the model components (the same PSF as the 2-D fit).
    gamma : "free" or float
        Coma index.
    gamma_bounds : tuple of float
        Bounds when free.
    width : float
        Annulus width in pixels.

    Returns
    -------
    ProfileFit
    """
    idx = annulus_index(data.shape, x0, y0, width=width)
    use = good & (idx >= 0)
    k = idx[use]
    n_ann = int(k.max()) + 1
    counts = np.bincount(k, minlength=n_ann).astype(float)
    keep = counts > 0
    d = data[use]
    s1 = np.bincount(k, weights=d, minlength=n_ann)
    s2 = np.bincount(k, weights=d * d, minlength=n_ann)
    sv = np.bincount(k, weights=variance[use], minlength=n_ann)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = s1 / counts
        scatter = np.sqrt(np.clip(s2 / counts - mean**2, 0, None) / np.clip(counts - 1, 1, None))
        noise = np.sqrt(sv) / counts
    err = np.where(counts > 1, np.maximum(scatter, noise), noise)
    r = np.bincount(k, weights=np.hypot(*np.meshgrid(np.arange(data.shape[1]) - x0,
                                                     np.arange(data.shape[0]) - y0))[use],
                    minlength=n_ann) / np.where(counts > 0, counts, 1)
    ann = np.flatnonzero(keep)

    def basis(theta):
        comps = renderer.components(x0, y0, theta["gamma"])
        # the coma's azimuthal terms average out in annuli: keep point, coma and sky
        comps = comps[[0, 1, -1]][:, use]
        sums = np.array([np.bincount(k, weights=c, minlength=n_ann) for c in comps])
        return (sums / np.where(counts > 0, counts, 1))[:, ann]

    params = lmfit.Parameters()
    free = gamma == "free"
    params.add("gamma", value=1.0 if free else float(gamma), min=gamma_bounds[0],
               max=gamma_bounds[1], vary=free)
    res = fit_separable(mean[ann], err[ann], basis, params, ["nucleus_flux", "coma_k", "sky"],
                        steps={"gamma": 1e-3}, max_nfev=200)
    return ProfileFit(radius=r[ann], profile=mean[ann], profile_err=err[ann], model=res.model,
                      nucleus_flux=res.values["nucleus_flux"],
                      nucleus_flux_err=res.sigma("nucleus_flux"), coma_k=res.values["coma_k"],
                      coma_k_err=res.sigma("coma_k"), gamma=res.values["gamma"],
                      chi2_red=res.chi2_red, success=res.success)
