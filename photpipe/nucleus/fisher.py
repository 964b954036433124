"""The Cramér-Rao bound of the nucleus + coma parameters from the Fisher information.

For data d_i with independent Gaussian noise of known variance σ_i² about a model μ_i(θ), the
Fisher information is

    F_jk = Σ_i (∂μ_i/∂θ_j)(∂μ_i/∂θ_k) / σ_i²

(Kay 1993, Fundamentals of Statistical Signal Processing: Estimation Theory, eq. 3.31, with the
variance not depending on θ), and no unbiased estimator has a covariance below F⁻¹: the bound on
the standard error of θ_j is sqrt((F⁻¹)_jj).
"""

from dataclasses import dataclass

import numpy as np

from ._render import ComponentRenderer
from ._separable import weighted_jacobian

__all__ = ["CramerRaoBound", "fisher_information", "fisher_bound"]


@dataclass(frozen=True, eq=False)
class CramerRaoBound:
    """Fisher matrix, its inverse and the bound on each parameter's standard error."""

    names: list
    fisher: np.ndarray
    covariance: np.ndarray

    @property
    def sigma(self):
        """Dict of sqrt((F⁻¹)_jj) by parameter name."""
        return dict(zip(self.names, np.sqrt(np.diag(self.covariance))))

    def to_dict(self):
        """The bounds as a plain dict."""
        return {k: float(v) for k, v in self.sigma.items()}


def fisher_information(jacobian, variance):
    """Fisher matrix Jᵀ diag(1/σ²) J for Gaussian noise of known variance.

    Parameters
    ----------
    jacobian : ndarray, shape (n_data, n_par)
        ∂μ_i/∂θ_j.
    variance : ndarray, shape (n_data,)
        σ_i².

    Returns
    -------
    fisher : ndarray, shape (n_par, n_par)

    Examples
    --------
    A straight line μ = a + b x at x = 0, 1, 2 with unit variance: F = [[3, 3], [3, 5]].

    >>> import numpy as np
    >>> j = np.array([[1.0, 0.0], [1.0, 1.0], [1.0, 2.0]])
    >>> fisher_information(j, np.ones(3)).tolist()
    [[3.0, 3.0], [3.0, 5.0]]
    """
    j = np.asarray(jacobian, dtype=float)
    w = 1.0 / np.asarray(variance, dtype=float)
    return (j * w[:, None]).T @ j


def fisher_bound(shape, *, x0, y0, nucleus_flux, coma_k, sky, psf, variance, gamma=1.0,
                 good=None, free=("nucleus_flux", "coma_k", "sky", "x0", "y0"), steps=None):
    """Cramér-Rao bound of the nucleus + coma model at given true parameters.

    Parameters
    ----------
    shape : tuple of int
        (ny, nx) of the cutout.
    x0, y0, nucleus_flux, coma_k, sky, gamma : float
        True parameters (pixels; signal per exposure), as in `nucleus_coma_image`.
    psf : `~photpipe.nucleus.PSFModel`
        The PSF.
    variance : ndarray, shape (ny, nx)
        Pixel noise variance (e.g. the noise-free model plus read noise²).
    good : ndarray of bool, optional
        Pixels that enter the fit.
    free : sequence of str, optional
        Parameters estimated (the others held known); any of ``nucleus_flux, coma_k, sky, x0,
        y0, gamma``.
    steps : dict, optional
        Central-difference steps for the non-linear parameters.

    Returns
    -------
    CramerRaoBound

    Examples
    --------
    A point source alone on a flat background, flux known to the bound of Gaussian photometry:

    >>> import numpy as np
    >>> from photpipe.nucleus.psf import PSFModel
    >>> crb = fisher_bound((41, 41), x0=20.0, y0=20.0, nucleus_flux=1e4, coma_k=0.0, sky=0.0,
    ...                    psf=PSFModel.from_moffat(3.0), variance=np.full((41, 41), 100.0),
    ...                    free=("nucleus_flux",))
    >>> bool(crb.sigma["nucleus_flux"] > 0)
    True
    """
    renderer = ComponentRenderer(shape, psf, order=0)
    good = np.ones(shape, bool) if good is None else np.asarray(good, bool)
    gflat = good.ravel()
    var = np.asarray(variance, dtype=float).ravel()[gflat]
    steps = {"x0": 1e-3, "y0": 1e-3, "gamma": 1e-3} if steps is None else steps

    def basis_fn(theta):
        comps = renderer.components(theta["x0"], theta["y0"], theta["gamma"])
        return comps.reshape(len(renderer.names), -1)[:, gflat]

    theta = {"x0": float(x0), "y0": float(y0), "gamma": float(gamma)}
    coef = np.array([nucleus_flux, coma_k, sky], dtype=float)
    jac = weighted_jacobian(basis_fn, theta, coef, np.ones(var.size), steps)
    all_names = list(renderer.names) + list(steps)
    unknown = [n for n in free if n not in all_names]
    if unknown:
        msg = f"unknown parameter(s) {unknown} in 'free'; known: {all_names}"
        raise ValueError(msg)
    cols = [all_names.index(n) for n in free]
    fisher = fisher_information(jac[:, cols], var)
    return CramerRaoBound(list(free), fisher, np.linalg.inv(fisher))
