"""One weighted least-squares differential correction of a state vector (and A1-A3)."""

from dataclasses import dataclass

import numpy as np

from photpipe.orbit.observe import predict
from photpipe.orbit.propagate import integrate

__all__ = ["FitData", "Solution", "OrbitFitError", "correct", "whitened_residuals"]


class OrbitFitError(RuntimeError):
    """The differential correction did not converge; the message says after what."""


@dataclass
class FitData:
    """Observations as plain arrays (radians, TDB Julian dates, AU)."""

    jd: np.ndarray
    obs_pos: np.ndarray
    ra: np.ndarray
    dec: np.ndarray
    sig_ra: np.ndarray      # of α cos δ, radians
    sig_dec: np.ndarray
    corr: np.ndarray
    site: np.ndarray        # station label per observation

    @property
    def size(self):
        return self.jd.size


@dataclass
class Solution:
    """A converged differential correction."""

    params: np.ndarray       # state (6) + free A's
    cov: np.ndarray          # covariance of params (stated weights x site factors)
    chi2: float              # over the used observations
    n_used: int
    xi: np.ndarray           # whitened residuals, shape (n, 2)
    b: np.ndarray            # whitened design, shape (n, 2, p)
    resid: np.ndarray        # residuals (Δα cos δ, Δδ), radians, shape (n, 2)
    iterations: int


def _whitener(data, factor):
    # inverse Cholesky factor of the 2x2 covariance [[σa², ρσaσd], [ρσaσd, σd²]] · f²
    sa, sd, rho = data.sig_ra * factor, data.sig_dec * factor, data.corr
    s = np.sqrt(1.0 - rho**2)
    w = np.zeros((data.size, 2, 2))
    w[:, 0, 0] = 1.0 / sa
    w[:, 1, 0] = -rho / (sa * s)
    w[:, 1, 1] = 1.0 / (sd * s)
    return w


def whitened_residuals(data, model, params, jd_epoch, fixed_a, factor, track):
    """Residuals, whitened residuals and whitened design at ``params``."""
    a123 = np.array(fixed_a, dtype=float)
    for k, j in enumerate(model.nongrav):
        a123[j - 1] = params[6 + k]
    span = (data.jd.min(), data.jd.max())
    traj = integrate(params[:6], jd_epoch, span, model=model, a123=a123, track=track)
    ra, dec, design, _ = predict(traj, data.jd, data.obs_pos)
    d_ra = (np.mod(data.ra - ra + np.pi, 2 * np.pi) - np.pi) * np.cos(data.dec)
    resid = np.stack([d_ra, data.dec - dec], axis=1)
    w = _whitener(data, factor)
    xi = np.einsum("nij,nj->ni", w, resid)
    b = np.einsum("nij,njk->nik", w, design)
    return resid, xi, b


def _normal_solution(xi, b, used):
    jac = b[used].reshape(-1, b.shape[2])
    rhs = xi[used].ravel()
    scale = np.sqrt(np.sum(jac * jac, axis=0))
    scale[scale == 0] = 1.0
    # QR first: the SVD then works on a p x p triangle instead of the tall matrix
    q, r = np.linalg.qr(jac / scale)
    u_, s, vt = np.linalg.svd(r)
    u_ = q @ u_
    if s[-1] <= s[0] * 1e-13:
        msg = "the normal equations are singular (too few observations or too short an arc)"
        raise OrbitFitError(msg)
    step = (vt.T @ ((u_.T @ rhs) / s)) / scale
    cov = (vt.T / s**2) @ vt / np.outer(scale, scale)
    return step, cov


def correct(data, model, params, jd_epoch, *, used, factor, track, fixed_a=(0.0, 0.0, 0.0),
            max_iter=25):
    """Gauss-Newton iterations with step halving until the step is below 1e-3 σ.

    Notes
    -----
    Weighted least squares on the whitened residuals ξ = L⁻¹ (O - C) with the 2x2 Cholesky
    factor L of each observation's covariance (Milani & Gronchi 2010, "Theory of Orbit
    Determination", Ch. 5, Eqs. 5.3-5.9): Δx = (BᵀB)⁻¹ Bᵀ ξ, Γ = (BᵀB)⁻¹. Columns are scaled
    to unit norm before the SVD solve, as the state and A1-A3 differ by ten orders of size.
    """
    params = np.array(params, dtype=float)
    resid, xi, b = whitened_residuals(data, model, params, jd_epoch, fixed_a, factor, track)
    chi2 = float(np.sum(xi[used] ** 2))
    for it in range(1, max_iter + 1):
        step, cov = _normal_solution(xi, b, used)
        size = np.max(np.abs(step) / np.sqrt(np.diag(cov)))
        for _ in range(8):
            trial = params + step
            try:
                out = whitened_residuals(data, model, trial, jd_epoch, fixed_a, factor, track)
            except (RuntimeError, ValueError, FloatingPointError):
                out = None
            new_chi2 = np.inf if out is None else float(np.sum(out[1][used] ** 2))
            if np.isfinite(new_chi2) and new_chi2 <= chi2 * (1 + 1e-9) + 1e-6:
                break
            step = step / 2.0
        else:
            if size < 1e-2:
                break
            msg = f"no step lowers χ² after {it} iterations (χ² = {chi2:.4g})"
            raise OrbitFitError(msg)
        params, chi2 = trial, new_chi2
        resid, xi, b = out
        if size < 1e-3:
            break
    else:
        msg = f"no convergence in {max_iter} iterations (last step {size:.3g} σ)"
        raise OrbitFitError(msg)
    _, cov = _normal_solution(xi, b, used)
    return Solution(params, cov, chi2, int(used.sum()), xi, b, resid, it)
