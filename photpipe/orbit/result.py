"""The result of an orbit fit: elements with errors, A1-A3 or a limit, residuals, sites."""

from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.table import QTable
from astropy.time import Time

from photpipe.geometry.orbit import Orbit
from photpipe.orbit._bodies import body_states

__all__ = ["OrbitSolution", "solution_from_fit", "nongrav_not_formed", "ELEMENT_NAMES"]

#: Heliocentric osculating elements reported (ecliptic and equinox J2000), and their units.
ELEMENT_NAMES = (("q", "au"), ("e", ""), ("i", "deg"), ("node", "deg"), ("peri", "deg"),
                 ("tp", "d"))
_ARCSEC = np.pi / 180.0 / 3600.0


@dataclass
class OrbitSolution:
    """An orbit fitted to astrometry.

    Attributes
    ----------
    epoch : `~astropy.time.Time`
        Epoch of the state (TDB).
    state : ndarray, shape (6,)
        Barycentric position (AU) and velocity (AU/day), ICRF axes, of the adopted fit.
    covariance : ndarray
        Of the adopted fit's parameters (state, then the fitted A's).
    elements : dict
        Heliocentric osculating elements {name: (value, error)}; ``tp`` as a TDB Julian date.
    nongrav : dict
        ``status`` ("detected", "limit" or "not formed"), ``reason``, the law, fitted A's with
        errors, Δχ², p-value and the upper limit on |a| at the reference distance.
    residuals : `~astropy.table.QTable`
        One row per observation read: ``source, stn, time, d_ra_arcsec`` (Δα cos δ),
        ``d_dec_arcsec``, ``chi2`` (Carpino et al. 2003 screening value), ``used``,
        ``site_factor``.
    sites : `~astropy.table.QTable`
        Per station: ``stn, n_obs, n_used, rms_ra_arcsec, rms_dec_arcsec, site_factor``.
    chi2, dof : float, int
        Of the adopted fit over the used observations (site factors applied).
    problems : list of str
        Observations that could not be used and why.
    adopted : str
        "gravity" or "nongrav".
    """

    epoch: Time
    state: np.ndarray
    covariance: np.ndarray
    elements: dict
    nongrav: dict
    residuals: QTable
    sites: QTable
    chi2: float
    dof: int
    adopted: str
    problems: list = field(default_factory=list)

    def to_dict(self):
        """Plain values for a JSON result file."""
        return {
            "epoch_tdb": self.epoch.tdb.isot,
            "state_barycentric_icrs_au_au_per_day": [float(x) for x in self.state],
            "elements": {k: {"value": v[0], "error": v[1]} for k, v in self.elements.items()},
            "nongrav": {k: v for k, v in self.nongrav.items()},
            "chi2": self.chi2, "dof": self.dof, "adopted": self.adopted,
            "n_obs": len(self.residuals), "n_used": int(np.sum(self.residuals["used"])),
            "problems": list(self.problems),
        }


def nongrav_not_formed(options, reason):
    """The non-gravitational part of a result when it could not be formed."""
    return {"status": "not formed", "reason": reason, "law": options.g_law,
            "reference_distance_au": options.reference_distance_au}


def _element_vector(state, jd_epoch):
    sun = np.concatenate([c[:, 0] for c in body_states("sun", jd_epoch)])
    helio = state - sun
    orb = Orbit.from_state(helio[:3] * u.au, helio[3:] * u.au / u.day,
                           Time(jd_epoch, format="jd", scale="tdb"), frame="icrs")
    tp = orb.perihelion_time.tdb
    return np.array([orb.q.to_value(u.au), orb.e, orb.inclination.to_value(u.deg),
                     orb.node.to_value(u.deg), orb.peri.to_value(u.deg), tp.jd1 + tp.jd2])


def elements_with_errors(state, cov6, jd_epoch):
    """Osculating heliocentric elements and errors by the linearised covariance J Γ Jᵀ."""
    base = _element_vector(state, jd_epoch)
    jac = np.empty((6, 6))
    for j in range(6):
        h = 1e-7 * (1.0 if j < 3 else 0.01)
        up, down = state.copy(), state.copy()
        up[j] += h
        down[j] -= h
        diff = _element_vector(up, jd_epoch) - _element_vector(down, jd_epoch)
        diff[2:5] = (diff[2:5] + 180.0) % 360.0 - 180.0
        jac[:, j] = diff / (2 * h)
    err = np.sqrt(np.diag(jac @ cov6 @ jac.T))
    return {name: (float(v), float(e)) for (name, _), v, e in zip(ELEMENT_NAMES, base, err)}


def _nongrav_summary(ng, options):
    if "solution" not in ng:
        return ng
    sol, v = ng["solution"], ng["verdict"]
    names = [f"A{k}" for k in options.nongrav]
    err = np.sqrt(np.diag(sol.cov[6:, 6:]))
    corr = sol.cov[6:, 6:] / np.outer(err, err)
    return {"status": "detected" if v["detected"] else "limit",
            "reason": "" if v["detected"] else
            f"Δχ² = {ng['delta_chi2']:.2f} for {ng['dof']} terms (p = {v['p_value']:.3g})",
            "law": options.g_law, "reference_distance_au": options.reference_distance_au,
            "fitted": names, "a_au_d2": [float(x) for x in sol.params[6:]],
            "a_err_au_d2": [float(x) for x in err], "a_corr": corr.tolist(),
            "delta_chi2": float(ng["delta_chi2"]), "dof": ng["dof"], **v}


def _residual_table(table, kept, sol, used, factor, chi2_obs):
    n = len(table)
    cols = {"d_ra_arcsec": np.full(n, np.nan), "d_dec_arcsec": np.full(n, np.nan),
            "chi2": np.full(n, np.nan), "site_factor": np.full(n, np.nan)}
    cols["d_ra_arcsec"][kept] = sol.resid[:, 0] / _ARCSEC
    cols["d_dec_arcsec"][kept] = sol.resid[:, 1] / _ARCSEC
    cols["chi2"][kept] = chi2_obs
    cols["site_factor"][kept] = factor
    use = np.zeros(n, bool)
    use[kept] = used
    out = QTable({"source": table["source"], "stn": table["stn"], "time": table["time"]})
    for name, values in cols.items():
        out[name] = values
    out["used"] = use
    return out


def _site_table(res):
    rows = []
    for stn in np.unique(res["stn"]):
        sel = res["stn"] == stn
        ok = sel & res["used"]
        rms = [float(np.sqrt(np.mean(res[c][ok] ** 2))) if ok.any() else np.nan
               for c in ("d_ra_arcsec", "d_dec_arcsec")]
        rows.append((stn, int(sel.sum()), int(ok.sum()), rms[0], rms[1],
                     float(np.nanmax(res["site_factor"][sel])) if np.any(
                         np.isfinite(res["site_factor"][sel])) else np.nan))
    names = ("stn", "n_obs", "n_used", "rms_ra_arcsec", "rms_dec_arcsec", "site_factor")
    return QTable(rows=rows, names=names) if rows else QTable(names=names)


def solution_from_fit(table, kept, data, jd_epoch, sol_g, used, factor, chi2_obs, ng, *,
                      problems, options):
    """Assemble an `OrbitSolution`: the non-gravitational fit is adopted when detected."""
    summary = _nongrav_summary(ng, options)
    if summary.get("status") == "detected":
        sol, used, factor, chi2_obs, adopted = (ng["solution"], ng["used"], ng["factor"],
                                                ng["chi2_obs"], "nongrav")
    else:
        sol, adopted = sol_g, "gravity"
    res = _residual_table(table, kept, sol, used, factor, chi2_obs)
    dof = 2 * int(used.sum()) - sol.params.size
    return OrbitSolution(
        epoch=Time(jd_epoch, format="jd", scale="tdb"), state=sol.params[:6].copy(),
        covariance=sol.cov, elements=elements_with_errors(sol.params[:6], sol.cov[:6, :6],
                                                          jd_epoch),
        nongrav=summary, residuals=res, sites=_site_table(res), chi2=float(sol.chi2), dof=dof,
        adopted=adopted, problems=list(problems))
