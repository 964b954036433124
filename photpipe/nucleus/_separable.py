"""Separable weighted least squares with lmfit (private helper).

The model is linear in some amplitudes a and non-linear in a few parameters θ:
m(θ, a) = Σ_k a_k B_k(θ). lmfit varies θ only; at each step the amplitudes are the weighted
linear least-squares solution, so the residual is that of the best a for the given θ
(variable projection, Golub & Pereyra 1973, SIAM J. Numer. Anal. 10, 413). The covariance of all
parameters comes from the full Jacobian at the solution.
"""

from dataclasses import dataclass

import lmfit
import numpy as np

__all__ = ["SeparableFit", "fit_separable", "weighted_jacobian"]


@dataclass(frozen=True, eq=False)
class SeparableFit:
    """Result of `fit_separable`.

    ``jacobian`` is the weighted Jacobian ∂(model/σ) at the solution, shape (n_data, n_free),
    columns in the order of ``names`` (None when the covariance was not asked for).
    """

    names: list
    values: dict
    covariance: np.ndarray | None
    chi2: float
    dof: int
    nfev: int
    success: bool
    at_bound: tuple
    model: np.ndarray
    message: str
    jacobian: np.ndarray | None = None

    @property
    def chi2_red(self):
        """χ² per degree of freedom."""
        return self.chi2 / self.dof if self.dof > 0 else np.nan

    def leverage(self):
        """Diagonal of the hat matrix J (JᵀJ)⁻¹ Jᵀ: each datum's share of the parameters.

        It sums to the number of free parameters; over a subset of the data it is the number
        of degrees of freedom that subset gives to the fit, so E[Σ r²] over the subset is its
        size less that sum (Hoaglin & Welsch 1978, Am. Stat. 32, 17). NaN without a covariance.
        """
        if self.covariance is None or self.jacobian is None:
            return np.full(self.model.shape, np.nan)
        j = self.jacobian
        return np.einsum("ij,ij->i", j @ self.covariance, j)

    def sigma(self, name, *, scale=True):
        """Standard error of ``name`` from the covariance (scaled by χ²_red when > 1)."""
        if self.covariance is None:
            return np.nan
        i = self.names.index(name)
        s = max(self.chi2_red, 1.0) if scale else 1.0
        return float(np.sqrt(self.covariance[i, i] * s)) if self.covariance[i, i] >= 0 else np.nan


def _solve(basis, data, sigma):
    """Weighted linear least squares for the amplitudes.

    By the normal equations with the columns scaled to unit norm (Cholesky): for the few
    dozen columns here (the fitted stars' images among them) this is ~20x faster than an
    SVD, and after the scaling the squared condition number stays far inside double
    precision for these bases. An SVD (``lstsq``) takes over when the matrix is singular.
    """
    a = basis / sigma
    b = data / sigma
    norm = np.sqrt(np.einsum("ij,ij->i", a, a))
    if np.all(norm > 0):
        an = a / norm[:, None]
        try:
            c = np.linalg.cholesky(an @ an.T)
            y = np.linalg.solve(c, an @ b)
            return np.linalg.solve(c.T, y) / norm
        except np.linalg.LinAlgError:
            pass
    coef, *_ = np.linalg.lstsq(a.T, b, rcond=None)
    return coef


def weighted_jacobian(basis_fn, theta, coef, sigma, steps):
    """Jacobian of (model / σ) with respect to the amplitudes then the listed θ.

    ``basis_fn(theta_dict) -> (n_amp, n_data)``; ``steps`` maps θ names to central-difference
    steps. Returns (J, names) with J of shape (n_data, n_amp + len(steps)).
    """
    base = basis_fn(theta)
    cols = list(base / sigma)
    for name, h in steps.items():
        tp = dict(theta)
        tm = dict(theta)
        tp[name] = theta[name] + h
        tm[name] = theta[name] - h
        d = (coef @ basis_fn(tp) - coef @ basis_fn(tm)) / (2.0 * h)
        cols.append(d / sigma)
    return np.array(cols).T


def fit_separable(data, sigma, basis_fn, params, amp_names, *, steps, max_nfev=400,
                  xtol=1e-8, covariance=True):
    """Fit a separable model with lmfit (Levenberg-Marquardt on θ, linear solve for a).

    Parameters
    ----------
    data, sigma : ndarray, shape (n,)
        Data and their standard deviations.
    basis_fn : callable
        ``basis_fn(theta: dict) -> ndarray (n_amp, n)``.
    params : `lmfit.Parameters`
        The non-linear parameters θ (with bounds; ``vary=False`` to hold one).
    amp_names : list of str
        Names of the amplitudes, in the order of the basis rows.
    steps : dict
        Central-difference steps for the covariance, for each varying θ.
    max_nfev : int, optional
        Evaluation budget of the minimiser.
    xtol : float, optional
        Relative tolerance in θ.
    covariance : bool, optional
        Compute the full covariance.

    Returns
    -------
    SeparableFit
    """
    holder = {}

    def resid(p):
        theta = p.valuesdict()
        b = basis_fn(theta)
        coef = _solve(b, data, sigma)
        holder["coef"] = coef
        return (data - coef @ b) / sigma

    varying = [k for k, p in params.items() if p.vary]
    if varying:
        out = lmfit.minimize(resid, params, method="leastsq", max_nfev=max_nfev,
                             xtol=xtol, ftol=1e-10)
        theta = out.params.valuesdict()
        success = bool(out.success) and out.nfev < max_nfev
        nfev = int(out.nfev)
        message = str(out.message)
        at_bound = tuple(k for k in varying
                         if _near_bound(out.params[k]))
    else:
        theta = params.valuesdict()
        success, nfev, message, at_bound = True, 1, "linear fit only", ()
    b = basis_fn(theta)
    coef = _solve(b, data, sigma)
    model = coef @ b
    chi2 = float(np.sum(((data - model) / sigma) ** 2))
    n_free = len(amp_names) + len(varying)
    names = list(amp_names) + varying
    values = dict(zip(amp_names, map(float, coef)))
    values.update({k: float(theta[k]) for k in params})
    cov = jac = None
    if covariance:
        jac = weighted_jacobian(basis_fn, theta, coef, sigma, {k: steps[k] for k in varying})
        try:
            cov = np.linalg.inv(jac.T @ jac)
        except np.linalg.LinAlgError:
            cov = None
            success = False
            message = "singular normal matrix: parameters not constrained"
    return SeparableFit(names, values, cov, chi2, int(data.size - n_free), nfev, success,
                        at_bound, model, message, jac)


def _near_bound(p, tol=1e-4):
    lo, hi = p.min, p.max
    if not (np.isfinite(lo) and np.isfinite(hi)):
        return False
    span = hi - lo
    return p.value - lo < tol * span or hi - p.value < tol * span
