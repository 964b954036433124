"""Orbit determination from astrometry: the driver that turns observations into an orbit.

Plan: observations -> sites and observer positions -> a first orbit (given elements, or
Gauss's method on a short stretch of the arc, extended step by step) -> gravity-only fit with
outlier screening and per-site weights -> the fit with A1-A3 -> their significance or a limit.
"""

from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe.orbit._bodies import BodyTrack, body_states
from photpipe.orbit._lsq import FitData, OrbitFitError, correct
from photpipe.orbit._robust import robust_fit
from photpipe.orbit.initial import gauss_orbit
from photpipe.orbit.limits import acceleration_verdict
from photpipe.orbit.nongrav import G_LAWS
from photpipe.orbit.observe import observer_positions
from photpipe.orbit.propagate import ForceModel, integrate
from photpipe.orbit.result import nongrav_not_formed, solution_from_fit
from photpipe.orbit.sites import site_vectors

__all__ = ["OrbitFitOptions", "fit_orbit", "OrbitFitError", "prepare_observations"]

_ARCSEC = np.pi / 180.0 / 3600.0


@dataclass(frozen=True)
class OrbitFitOptions:
    """Choices of the orbit fit.

    Parameters
    ----------
    nongrav : tuple of int
        Which of A1, A2, A3 to fit (default all three); () for gravity only.
    g_law : str
        A key of `photpipe.orbit.nongrav.G_LAWS` ("water" or "inverse-square").
    reference_distance_au : float
        Heliocentric distance at which the acceleration limit is stated.
    min_arc_days : float
        Shortest arc on which A1-A3 are fitted.
    min_nights : int
        Fewest distinct nights (TDB dates) on which A1-A3 are fitted.
    reject : bool
        Screen outliers (Carpino, Milani & Chesley 2003).
    reweight : bool
        Re-estimate per-site error scales from the residuals.
    """

    nongrav: tuple = (1, 2, 3)
    g_law: str = "water"
    reference_distance_au: float = 1.0
    min_arc_days: float = 30.0
    min_nights: int = 5
    reject: bool = True
    reweight: bool = True


def prepare_observations(table, sites=None):
    """Observation table -> `FitData` of the rows with a known site, and the problems.

    Returns
    -------
    data : FitData
    kept : ndarray of int
        Row numbers of ``table`` in ``data``.
    problems : list of str
    """
    xyz, problems = site_vectors(table, sites)
    kept = np.flatnonzero(np.all(np.isfinite(xyz), axis=0))
    if kept.size < 6:
        msg = (f"{kept.size} usable observations; an orbit needs at least 6 (3 positions)"
               + (f"; first problem: {problems[0]}" if problems else ""))
        raise OrbitFitError(msg)
    sub = table[kept]
    jd, obs_pos = observer_positions(sub["time"], xyz[:, kept])
    data = FitData(jd=jd, obs_pos=obs_pos,
                   ra=np.radians(np.asarray(sub["ra_deg"], float)),
                   dec=np.radians(np.asarray(sub["dec_deg"], float)),
                   sig_ra=np.asarray(sub["rms_ra_arcsec"], float) * _ARCSEC,
                   sig_dec=np.asarray(sub["rms_dec_arcsec"], float) * _ARCSEC,
                   corr=np.asarray(sub["rms_corr"], float),
                   site=np.asarray(sub["stn"], str))
    return data, kept, problems


def _sun_state(jd):
    p, v = body_states("sun", jd)
    return np.concatenate([p[:, 0], v[:, 0]])


def _state_from_elements(orbit, jd_epoch):
    r, v = orbit.state(Time(jd_epoch, format="jd", scale="tdb"), frame="icrs")
    helio = np.concatenate([r.to_value(u.au)[:, 0], v.to_value(u.au / u.day)[:, 0]])
    return helio + _sun_state(jd_epoch)


def _move_state(state, jd_from, jd_to, track):
    traj = integrate(state, jd_from, (jd_to, jd_to), model=ForceModel(), partials=False,
                     track=track)
    return traj.states(jd_to)[0][:, 0]


def _gauss_start(data, track, model):
    """First orbit: Gauss on a short stretch, then the stretch doubled until it is the arc."""
    t0, t_end = data.jd.min(), data.jd.max()
    nights = np.unique(np.floor(data.jd - 0.5))
    # the shortest stretch from the start with three nights, and at least 10 days if there
    window = max(min(10.0, t_end - t0), nights[min(2, nights.size - 1)] + 1.0 - t0)
    window = min(window, t_end - t0)
    best = None
    while True:
        sel = data.jd <= t0 + window
        idx = np.flatnonzero(sel)
        middle = idx[np.argmin(np.abs(data.jd[idx] - 0.5 * (data.jd[idx[0]] + data.jd[idx[-1]])))]
        picks = [idx[0], middle, idx[-1]]
        best = _best_candidate(data, picks, sel, track, model) if best is None else \
            _refit(data, best, sel, track, model)
        if window >= t_end - t0:
            return best
        window = min(2.0 * window, t_end - t0)


def _best_candidate(data, picks, sel, track, model):
    jd = data.jd[picks]
    sun = np.stack([_sun_state(t)[:3] for t in jd], axis=1)
    cands = gauss_orbit(jd, data.ra[picks], data.dec[picks], data.obs_pos[:, picks] - sun)
    fits = []
    for r2, v2, t2 in cands:
        state = np.concatenate([r2, v2]) + _sun_state(t2)
        try:
            fits.append(_refit(data, (state, t2), sel, track, model))
        except (OrbitFitError, RuntimeError, ValueError):
            continue
    if not fits:
        msg = (f"no initial orbit: Gauss's method on the observations at TDB JD "
               f"{', '.join(f'{t:.4f}' for t in jd)} gave no orbit that fits the first "
               f"{sel.sum()} observations")
        raise OrbitFitError(msg)
    return min(fits, key=lambda f: f[2])[:2]


def _refit(data, start, sel, track, model):
    state, jd_epoch = start[:2]
    sol = correct(data, model, state, jd_epoch, used=sel, factor=np.ones(data.size),
                  track=track)
    return sol.params[:6], jd_epoch, sol.chi2


def _nongrav_reason(data, used, opts):
    arc = np.ptp(data.jd[used])
    nights = np.unique(np.floor(data.jd[used] - 0.5)).size
    if not opts.nongrav:
        return "not asked for"
    if arc < opts.min_arc_days:
        return f"arc of {arc:.1f} d is shorter than the {opts.min_arc_days:g} d needed"
    if nights < opts.min_nights:
        return f"{nights} nights, fewer than the {opts.min_nights} needed"
    return None


def fit_orbit(table, *, sites=None, elements=None, epoch=None, options=OrbitFitOptions()):
    """Fit an orbit, with and without non-gravitational terms, to astrometric observations.

    Parameters
    ----------
    table : `~astropy.table.QTable`
        Observations with the columns of `photpipe.orbit.ades.OBSERVATION_COLUMNS`.
    sites : dict, optional
        Station code -> `~astropy.coordinates.EarthLocation`.
    elements : `~photpipe.geometry.Orbit`, optional
        A starting orbit; by default Gauss's method finds one.
    epoch : `~astropy.time.Time`, optional
        Epoch of the fitted state (default: 0h TDB nearest the middle of the arc).
    options : OrbitFitOptions, optional

    Returns
    -------
    OrbitSolution

    Raises
    ------
    OrbitFitError
        Too few usable observations, no initial orbit, or a gravity-only fit that does not
        converge (a non-gravitational fit that fails only makes its result "not formed").
    """
    data, kept, problems = prepare_observations(table, sites)
    jd_epoch = (np.floor(np.median(data.jd) - 0.5) + 0.5) if epoch is None else \
        float(epoch.tdb.jd1 + epoch.tdb.jd2)
    track = BodyTrack(min(data.jd.min(), jd_epoch) - 2.0, max(data.jd.max(), jd_epoch) + 2.0)
    grav = ForceModel()
    if elements is None:
        state, jd_start, _ = _gauss_start(data, track, grav)
        start = _move_state(state, jd_start, jd_epoch, track)
    else:
        start = _state_from_elements(elements, jd_epoch)
    sol_g, used, factor, chi2_obs = robust_fit(data, grav, start, jd_epoch, track=track,
                                               reject=options.reject, reweight=options.reweight)
    ng = _nongrav_stage(data, sol_g, used, factor, jd_epoch, track, options)
    return solution_from_fit(table, kept, data, jd_epoch, sol_g, used, factor, chi2_obs, ng,
                             problems=problems, options=options)


def _nongrav_stage(data, sol_g, used, factor, jd_epoch, track, opts):
    law = G_LAWS[opts.g_law]
    reason = _nongrav_reason(data, used, opts)
    if reason is not None:
        return nongrav_not_formed(opts, reason)
    model = ForceModel(nongrav=tuple(opts.nongrav), g_law=law)
    start = np.concatenate([sol_g.params[:6], np.zeros(len(opts.nongrav))])
    try:
        sol_n, used_n, factor_n, chi2_n = robust_fit(
            data, model, start, jd_epoch, track=track, used=used, factor=factor,
            reject=opts.reject, reweight=opts.reweight)
        # the gravity-only χ² on the same observations and weights, for Δχ²
        sol_g2 = correct(data, ForceModel(), sol_n.params[:6], jd_epoch, used=used_n,
                         factor=factor_n, track=track)
    except (OrbitFitError, RuntimeError, ValueError) as exc:
        return nongrav_not_formed(opts, f"the fit with A1-A3 did not converge: {exc}")
    k = len(opts.nongrav)
    verdict = acceleration_verdict(sol_n.params[6:], sol_n.cov[6:, 6:],
                                   sol_g2.chi2 - sol_n.chi2,
                                   g_at_reference=float(law(opts.reference_distance_au)))
    return {"solution": sol_n, "used": used_n, "factor": factor_n, "chi2_obs": chi2_n,
            "delta_chi2": sol_g2.chi2 - sol_n.chi2, "dof": k, "verdict": verdict}
