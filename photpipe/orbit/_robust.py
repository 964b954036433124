"""Outlier screening and per-site weights around the differential correction."""

import numpy as np

from photpipe.orbit._lsq import correct

__all__ = ["screen_outliers", "site_factors", "robust_fit", "CHI2_REJECT", "CHI2_RECOVER"]

#: Carpino, Milani & Chesley (2003, Icarus 166, 248, Sect. 3): an observation whose residual
#: χ² (2 degrees of freedom, with the covariance of the residual) exceeds 8 is rejected, and a
#: rejected one comes back below 7 (values from memory of that paper).
CHI2_REJECT = 8.0
CHI2_RECOVER = 7.0
#: A site's weight is re-estimated only from this many accepted observations on.
MIN_SITE_OBS = 5


def _leverage_blocks(sol):
    # B_i Γ B_iᵀ for every observation (2x2)
    return np.einsum("nip,pq,njq->nij", sol.b, sol.cov, sol.b)


def screen_outliers(sol, used, *, chi2_reject=CHI2_REJECT, chi2_recover=CHI2_RECOVER):
    """New accepted mask after a converged fit (Carpino, Milani & Chesley 2003).

    Notes
    -----
    The residual of an accepted observation has covariance I - B_i Γ B_iᵀ (whitened), that of
    a rejected one I + B_i Γ B_iᵀ; χ²_i = ξ_iᵀ (that)⁻¹ ξ_i is compared with the thresholds.
    """
    m = _leverage_blocks(sol)
    eye = np.eye(2)[None]
    gamma = np.where(used[:, None, None], eye - m, eye + m)
    chi2 = np.einsum("ni,nij,nj->n", sol.xi, np.linalg.inv(gamma), sol.xi)
    new = used.copy()
    new[used & (chi2 > chi2_reject)] = False
    new[~used & (chi2 < chi2_recover)] = True
    return new, chi2


def site_factors(sol, used, factor, sites, *, min_obs=MIN_SITE_OBS):
    """Per-site error scale f ≥ 1 from the residuals: f² = Σ |ξ|² / Σ (2 - h_i).

    Notes
    -----
    The expected χ² of an observation is 2 less its leverage h_i = tr(B_i Γ B_iᵀ) (the
    parameters absorb part of the residual; Σ h_i = number of parameters). Scales below 1
    are not applied: a file's stated errors are never shrunk (a choice made here, so that
    no site is weighted beyond what its observers claim).
    """
    h = np.trace(_leverage_blocks(sol), axis1=1, axis2=2)
    stated = np.sum(sol.xi**2, axis=1) * factor**2
    out = np.ones_like(factor)
    for s in np.unique(sites):
        sel = (sites == s) & used
        if sel.sum() < min_obs:
            continue
        f2 = stated[sel].sum() / max(np.sum(2.0 - h[sel]), 1e-9)
        out[sites == s] = np.sqrt(max(f2, 1.0))
    return out


def robust_fit(data, model, params, jd_epoch, *, track, used=None, factor=None, reject=True,
               reweight=True, fixed_a=(0.0, 0.0, 0.0), max_passes=8):
    """Fit, screen outliers, re-weight sites, and fit again until nothing changes.

    Returns
    -------
    sol : `~photpipe.orbit._lsq.Solution`
    used : ndarray of bool
    factor : ndarray
        Per-observation error scale (its site's).
    chi2_obs : ndarray
        Each observation's residual χ² from the last screening.
    """
    used = np.ones(data.size, bool) if used is None else used.copy()
    factor = np.ones(data.size) if factor is None else factor.copy()
    chi2_obs = np.full(data.size, np.nan)
    for _ in range(max_passes):
        sol = correct(data, model, params, jd_epoch, used=used, factor=factor, track=track,
                      fixed_a=fixed_a)
        params = sol.params
        new_used, chi2_obs = screen_outliers(sol, used) if reject else (used, chi2_obs)
        new_factor = site_factors(sol, new_used, factor, data.site) if reweight else factor
        if np.array_equal(new_used, used) and np.allclose(new_factor, factor, rtol=0.01):
            return sol, used, factor, chi2_obs
        used, factor = new_used, new_factor
    sol = correct(data, model, params, jd_epoch, used=used, factor=factor, track=track,
                  fixed_a=fixed_a)
    return sol, used, factor, chi2_obs
