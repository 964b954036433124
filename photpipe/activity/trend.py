"""The activity trend: A(0)fρ ∝ r_h^k fitted in log space, before and after perihelion.

Afρ is binned per observing night (`photpipe.activity.nights`), split at perihelion, and a
straight line is fitted to log10 Afρ against log10 r_h on each side; with ``continuous`` the two
lines are fitted together, meeting at the perihelion distance with one night-to-night scatter
(`photpipe.activity._fit_joint`), which is how the outburst search fits them. The fitting
algorithms sit in one private module each, behind `FIT_METHODS`.
"""

import warnings
from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.table import QTable
from astropy.time import Time
from scipy.special import logsumexp
from scipy.stats import norm

from photpipe._quantity import as_positive_value
from photpipe._warnings import PoorResultWarning
from photpipe.activity._fit_clip import fit_line_clip
from photpipe.activity._fit_joint import fit_joint_scatter
from photpipe.activity._fit_robust import fit_line_robust
from photpipe.activity._fit_scatter import fit_line_scatter
from photpipe.activity._inputs import prepare
from photpipe.activity.nights import NightBins, bin_nights
from photpipe.activity.powerlaw import log_afrho_power_law

__all__ = ["FIT_METHODS", "TrendBranch", "ActivityTrend", "fit_activity_trend",
           "fit_trend_to_nights"]

#: Fitting algorithm name -> function(x, y, sy, **options) -> LineFit.
FIT_METHODS = {
    "scatter": fit_line_scatter,
    "clip": fit_line_clip,
    "robust": fit_line_robust,
}

#: Branch names, in time order.
BRANCHES = ("pre", "post")
_MIN_NIGHTS = 3
_MIN_NIGHTS_JOINT = 2  # per side, when both sides are fitted together (three parameters)
_NARROW_LOG_RH = 0.02  # dex: below this spread of log r_h the index is poorly determined
_HIGH_SCATTER = 0.1  # dex of night-to-night scatter beyond the errors


@dataclass(frozen=True)
class TrendBranch:
    """The power-law fit on one side of perihelion.

    Attributes
    ----------
    name : str
        ``"pre"`` (before perihelion) or ``"post"``.
    k, k_err : float
        Power-law index of Afρ ∝ r_h^k and its 1σ error.
    log_norm, log_norm_err : float
        log10 of Afρ in cm extrapolated to r_h = 1 au, and its error.
    cov : tuple of tuple of float
        Covariance of (log_norm, k).
    scatter_dex : float
        Night-to-night intrinsic scatter beyond the errors (dex; 0 for methods without it).
    error_scale : float
        Factor applied to the nights' errors by the method (1 for none).
    chi2 : float
        χ² of the nights about the line with their own errors; ``dof`` its degrees of freedom.
    dof : int
    n_nights, n_frames : int
        Nights and frames used in the fit.
    r_h_min, r_h_max : `~astropy.units.Quantity` ['length']
        Range of r_h covered.
    time_first, time_last : `~astropy.time.Time`
        First and last night used.
    method : str
    flags : tuple of str
        ``few_nights``, ``narrow_r_h``, ``high_scatter``, ``not_converged``.
    """

    name: str
    k: float
    k_err: float
    log_norm: float
    log_norm_err: float
    cov: tuple
    scatter_dex: float
    error_scale: float
    chi2: float
    dof: int
    n_nights: int
    n_frames: int
    r_h_min: u.Quantity
    r_h_max: u.Quantity
    time_first: Time
    time_last: Time
    method: str
    flags: tuple = ()
    scatter_grid: tuple = field(default=(), repr=False, compare=False)
    scatter_weights: tuple = field(default=(), repr=False, compare=False)

    def log10_tail_probability(self, residual, var_meas, var_pred=0.0):
        """log10 of the chance that a quiet night lies this far or further above the trend.

        Parameters
        ----------
        residual : float or ndarray
            Observed minus trend log10 Afρ (dex).
        var_meas : float or ndarray
            Variance of the observed values from their own errors (dex²).
        var_pred : float or ndarray
            Variance of the trend's prediction (dex²).

        Returns
        -------
        log10_p : ndarray
            One-sided upper-tail probability under the predictive distribution: a mixture,
            over the posterior of the intrinsic scatter s, of normals with variance
            f² (var_meas + s²) + var_pred. With few nights s is poorly known and the mixture
            has heavy tails (close to Student's t), so this is larger than the normal tail of
            ``residual / residual_err``.
        """
        r = np.atleast_1d(np.asarray(residual, dtype=float))
        vm = np.broadcast_to(np.asarray(var_meas, dtype=float), r.shape)
        vp = np.broadcast_to(np.asarray(var_pred, dtype=float), r.shape)
        grid = np.asarray(self.scatter_grid, dtype=float) if self.scatter_grid else \
            np.array([self.scatter_dex])
        wts = np.asarray(self.scatter_weights, dtype=float) if self.scatter_weights else \
            np.array([1.0])
        f2 = self.error_scale ** 2
        sd = np.sqrt(f2 * (vm[:, None] + grid[None, :] ** 2) + vp[:, None])
        log_tail = logsumexp(norm.logsf(r[:, None] / sd), b=wts[None, :], axis=1)
        return log_tail / np.log(10.0)

    def predict_log(self, log_r_h):
        """Return (log10 Afρ, its variance from the fit) at log10 r_h (au), plain floats."""
        x = np.asarray(log_r_h, dtype=float)
        c = np.asarray(self.cov)
        var = c[0, 0] + 2 * x * c[0, 1] + x * x * c[1, 1]
        return log_afrho_power_law(x, self.log_norm, self.k), var

    def to_dict(self):
        """Return the branch as a JSON-friendly dict (au, cm, ISO times)."""
        return {
            "branch": self.name, "k": self.k, "k_err": self.k_err,
            "log10_afrho_1au_cm": self.log_norm, "log10_afrho_1au_err": self.log_norm_err,
            "cov_lognorm_k": float(self.cov[0][1]), "scatter_dex": self.scatter_dex,
            "error_scale": self.error_scale, "chi2": self.chi2, "dof": self.dof,
            "n_nights": self.n_nights, "n_frames": self.n_frames,
            "r_h_min_au": float(self.r_h_min.to_value(u.au)),
            "r_h_max_au": float(self.r_h_max.to_value(u.au)),
            "time_first": self.time_first.utc.isot, "time_last": self.time_last.utc.isot,
            "method": self.method, "flags": ",".join(self.flags),
        }


@dataclass(frozen=True)
class ActivityTrend:
    """Power-law activity trend on each side of perihelion (see `fit_activity_trend`).

    Attributes
    ----------
    branches : tuple of `TrendBranch`
        The branches that could be fitted, in time order (pre, post); a side with fewer than
        three nights is absent.
    perihelion_time : `~astropy.time.Time`
    method : str
    rho : `~astropy.units.Quantity` ['length'] or None
        The aperture radius used, when the inputs held several.
    continuous : bool
        The branches were fitted together, meeting at perihelion (``to_dict`` key
        ``continuous``).
    nights : `~astropy.table.QTable`
        One row per night: ``time, time_first, time_last, r_h, afrho, afrho_err, n_frames,
        branch, used, afrho_trend, residual_dex, residual_err_dex, night_err_dex,
        trend_err_dex, significance, log10_tail_p``: ``significance`` is the residual over
        its standard deviation, ``log10_tail_p`` its upper-tail probability allowing for the
        uncertainty of the scatter (`TrendBranch.log10_tail_probability`).
    """

    branches: tuple
    perihelion_time: Time
    method: str
    rho: u.Quantity | None
    nights: QTable = field(repr=False)
    _bins: NightBins = field(repr=False, compare=False, default=None)
    continuous: bool = False

    def branch(self, name):
        """Return the branch called ``name`` (``"pre"`` or ``"post"``), or None if absent."""
        for b in self.branches:
            if b.name == name:
                return b
        return None

    def predict_log(self, log_r_h, mjd):
        """Plain-float prediction: (log10 Afρ, variance), NaN where the branch is absent."""
        log_r_h = np.atleast_1d(np.asarray(log_r_h, dtype=float))
        mjd = np.atleast_1d(np.asarray(mjd, dtype=float))
        out = np.full(log_r_h.shape, np.nan)
        var = np.full(log_r_h.shape, np.nan)
        post = mjd >= self.perihelion_time.utc.mjd
        for name, sel in (("pre", ~post), ("post", post)):
            b = self.branch(name)
            if b is not None and np.any(sel):
                out[sel], var[sel] = b.predict_log(log_r_h[sel])
        return out, var

    def predict(self, r_h, time):
        """Afρ of the fitted trend at heliocentric distances ``r_h`` and times ``time``.

        Parameters
        ----------
        r_h : `~astropy.units.Quantity` ['length']
        time : `~astropy.time.Time`
            Decides the branch (before or after perihelion), same shape as ``r_h``.

        Returns
        -------
        afrho : `~astropy.units.Quantity` ['length']
            In cm; NaN where that side of perihelion has no fit.
        """
        rh = np.atleast_1d(as_positive_value(r_h, u.au, "r_h"))
        if not isinstance(time, Time):
            msg = f"'time' must be an astropy Time, got {type(time).__name__}"
            raise TypeError(msg)
        mjd = np.broadcast_to(np.atleast_1d(time.utc.mjd), rh.shape)
        y, _ = self.predict_log(np.log10(rh), mjd)
        return (10 ** y) * u.cm

    def to_table(self):
        """One row per branch, with units (r_h in au, times as `~astropy.time.Time`)."""
        rows = [b.to_dict() for b in self.branches]
        t = QTable()
        t["branch"] = np.array([r["branch"] for r in rows], dtype=str)
        for name in ("k", "k_err", "log10_afrho_1au_cm", "log10_afrho_1au_err", "cov_lognorm_k",
                     "scatter_dex", "error_scale", "chi2"):
            t[name] = np.array([r[name] for r in rows], dtype=float)
        for name in ("dof", "n_nights", "n_frames"):
            t[name] = np.array([r[name] for r in rows], dtype=int)
        t["r_h_min"] = np.array([r["r_h_min_au"] for r in rows], dtype=float) * u.au
        t["r_h_max"] = np.array([r["r_h_max_au"] for r in rows], dtype=float) * u.au
        t["time_first"] = Time([b.time_first.utc.mjd for b in self.branches], format="mjd",
                               scale="utc")
        t["time_last"] = Time([b.time_last.utc.mjd for b in self.branches], format="mjd",
                              scale="utc")
        t["method"] = np.array([r["method"] for r in rows], dtype=str)
        t["flags"] = np.array([r["flags"] for r in rows], dtype=str)
        t.meta["perihelion_time"] = self.perihelion_time.utc.isot
        t.meta["method"] = self.method
        if self.rho is not None:
            t.meta["rho_km"] = float(self.rho.to_value(u.km))
        return t

    def to_dict(self):
        """Plain dict: perihelion time, method, aperture and the branches."""
        return {
            "perihelion_time": self.perihelion_time.utc.isot,
            "method": self.method,
            "rho_km": None if self.rho is None else float(self.rho.to_value(u.km)),
            "continuous": self.continuous,
            "branches": [b.to_dict() for b in self.branches],
        }


def _branch_fittable(name, bins, sel, min_nights, *, warn=True):
    """Whether the nights ``sel`` can carry a power law; warns when they cannot."""
    x = bins.log_r_h[sel]
    n = x.size
    if n < min_nights:
        if n > 0 and warn:
            msg = (f"{name}-perihelion branch has {n} night(s); at least {min_nights} are "
                   f"needed for a power-law fit: branch left out")
            warnings.warn(msg, PoorResultWarning, stacklevel=5)
        return False
    if np.ptp(x) == 0 and min_nights >= _MIN_NIGHTS:
        if not warn:
            return False
        msg = f"{name}-perihelion branch: all nights at the same r_h, no power law can be fitted"
        warnings.warn(msg, PoorResultWarning, stacklevel=5)
        return False
    return True


def _fit_branch(name, bins, sel, method, options):
    if not _branch_fittable(name, bins, sel, _MIN_NIGHTS):
        return None, None
    fit = FIT_METHODS[method](bins.log_r_h[sel], bins.y[sel], bins.sy[sel], **options)
    return _branch_from_fit(name, bins, sel, fit, method)


def _branch_from_fit(name, bins, sel, fit, method):
    n = int(np.count_nonzero(sel))
    x = bins.log_r_h[sel]
    sy = bins.sy[sel]
    flags = []
    if n < 5:
        flags.append("few_nights")
    if np.ptp(x) < _NARROW_LOG_RH:
        flags.append("narrow_r_h")
    if fit.scatter > _HIGH_SCATTER or (fit.error_scale > 1 and
                                       np.median(sy) * fit.error_scale > _HIGH_SCATTER):
        flags.append("high_scatter")
    if not fit.converged:
        flags.append("not_converged")
    if flags:
        msg = f"{name}-perihelion activity trend is poor: {', '.join(flags)}"
        warnings.warn(msg, PoorResultWarning, stacklevel=5)
    used = np.flatnonzero(sel)[fit.used]
    rh_used = 10 ** bins.log_r_h[used]
    branch = TrendBranch(
        name=name, k=fit.slope, k_err=float(np.sqrt(fit.cov[1, 1])), log_norm=fit.intercept,
        log_norm_err=float(np.sqrt(fit.cov[0, 0])),
        cov=tuple(tuple(float(v) for v in row) for row in fit.cov),
        scatter_dex=fit.scatter, error_scale=fit.error_scale, chi2=fit.chi2, dof=fit.dof,
        n_nights=int(used.size), n_frames=int(np.sum(bins.n_frames[used])),
        r_h_min=float(rh_used.min()) * u.au, r_h_max=float(rh_used.max()) * u.au,
        time_first=Time(bins.mjd[used].min(), format="mjd", scale="utc"),
        time_last=Time(bins.mjd[used].max(), format="mjd", scale="utc"),
        method=method, flags=tuple(flags),
        scatter_grid=() if fit.scatter_grid is None else tuple(fit.scatter_grid.tolist()),
        scatter_weights=() if fit.scatter_weights is None else tuple(fit.scatter_weights.tolist()))
    return branch, used


def _nights_table(bins, t_peri_mjd, used_mask, trend_y, trend_var, branches):
    post = bins.mjd >= t_peri_mjd
    scale = np.ones(len(bins))
    scatter = np.zeros(len(bins))
    for b in branches:
        sel = post if b.name == "post" else ~post
        scale[sel] = b.error_scale
        scatter[sel] = b.scatter_dex
    resid = bins.y - trend_y
    resid_err = np.sqrt(scale ** 2 * (bins.sy ** 2 + scatter ** 2) + trend_var)
    log_p = np.full(len(bins), np.nan)
    for b in branches:
        sel = (post if b.name == "post" else ~post) & np.isfinite(resid)
        if np.any(sel):
            log_p[sel] = b.log10_tail_probability(resid[sel], bins.sy[sel] ** 2,
                                                  trend_var[sel])
    ln10 = np.log(10.0)
    t = QTable()
    t["time"] = Time(bins.mjd, format="mjd", scale="utc")
    t["time_first"] = Time(bins.mjd_first, format="mjd", scale="utc")
    t["time_last"] = Time(bins.mjd_last, format="mjd", scale="utc")
    t["r_h"] = 10 ** bins.log_r_h * u.au
    t["afrho"] = 10 ** bins.y * u.cm
    t["afrho_err"] = 10 ** bins.y * ln10 * bins.sy * u.cm
    t["n_frames"] = bins.n_frames
    t["branch"] = np.where(post, "post", "pre")
    t["used"] = used_mask
    t["afrho_trend"] = 10 ** trend_y * u.cm
    t["residual_dex"] = resid
    t["residual_err_dex"] = resid_err
    t["night_err_dex"] = bins.sy
    t["trend_err_dex"] = np.sqrt(trend_var)
    t["significance"] = resid / resid_err
    t["log10_tail_p"] = log_p
    return t


def perihelion_log_r_h(bins, perihelion_mjd):
    """log10 of the perihelion distance (au), estimated from the nights nearest perihelion.

    Near perihelion r_h² ≈ q² + c (t - T)² (the distance's first time derivative is zero at
    T); a least-squares line of r_h² against (t - T)² through the four nights nearest T gives
    q². Falls back to the smallest r_h of the nights (an upper bound on q).

    Examples
    --------
    >>> import numpy as np
    >>> from photpipe.activity.nights import NightBins
    >>> t = np.array([-10.0, -5.0, 3.0, 8.0])
    >>> r = np.sqrt(1.3 ** 2 + (0.03 * t) ** 2)     # a straight-line fly-by, q = 1.3 au
    >>> bins = NightBins(t, t, t, np.log10(r), np.zeros(4), np.ones(4), np.ones(4, int),
    ...                  np.arange(4))
    >>> round(10 ** perihelion_log_r_h(bins, 0.0), 6)
    1.3
    """
    dt = np.asarray(bins.mjd, dtype=float) - perihelion_mjd
    r2 = 10 ** (2.0 * np.asarray(bins.log_r_h, dtype=float))
    ok = np.isfinite(dt) & np.isfinite(r2)
    dt, r2 = dt[ok], r2[ok]
    if r2.size == 0:
        return np.nan
    fallback = 0.5 * float(np.log10(r2.min()))
    near = np.argsort(np.abs(dt))[:4]
    if near.size < 2 or np.ptp(dt[near] ** 2) == 0:
        return fallback
    slope, q2 = np.polyfit(dt[near] ** 2, r2[near], 1)
    if not (np.isfinite(q2) and 0 < q2 <= r2.min() and slope >= 0):
        return fallback
    return 0.5 * float(np.log10(q2))


def _fit_continuous(bins, perihelion_mjd, side_pre, side_post, method):
    """Both branches jointly, meeting at perihelion (see `_fit_joint`); None if not possible."""
    if not (_branch_fittable("pre", bins, side_pre, _MIN_NIGHTS_JOINT, warn=False)
            and _branch_fittable("post", bins, side_post, _MIN_NIGHTS_JOINT, warn=False)):
        return None
    x_q = perihelion_log_r_h(bins, perihelion_mjd)
    sel = side_pre | side_post
    if not np.isfinite(x_q) or np.count_nonzero(sel) < 5:
        return None
    post = (bins.mjd >= perihelion_mjd)[sel]
    fit_pre, fit_post = fit_joint_scatter(bins.log_r_h[sel], bins.y[sel], bins.sy[sel], post,
                                          x_q)
    return [_branch_from_fit("pre", bins, side_pre, fit_pre, method),
            _branch_from_fit("post", bins, side_post, fit_post, method)]


def fit_trend_to_nights(bins, perihelion_mjd, *, method="scatter", night_used=None,
                        options=None, rho=None, continuous=False):
    """Fit both branches to already night-binned data (plain floats; used by the outburst search).

    Parameters
    ----------
    bins : `~photpipe.activity.nights.NightBins`
    perihelion_mjd : float
    method : str
        A key of `FIT_METHODS`.
    night_used : ndarray of bool, optional
        Nights allowed in the fit (default all).
    options : dict, optional
        Passed to the fitting function.
    rho : `~astropy.units.Quantity`, optional
        Aperture radius, recorded in the result.
    continuous : bool, optional
        With ``method="scatter"``: fit both branches at once, meeting at the perihelion
        distance, with one intrinsic scatter (`_fit_joint`); each branch then needs only
        two nights. Falls back to separate fits when a side has too few nights.

    Returns
    -------
    trend : `ActivityTrend`
    """
    if method not in FIT_METHODS:
        msg = f"unknown trend fit method {method!r}; choose one of {sorted(FIT_METHODS)}"
        raise ValueError(msg)
    options = options or {}
    allowed = np.ones(len(bins), dtype=bool) if night_used is None else np.asarray(night_used)
    post = bins.mjd >= perihelion_mjd
    branches = []
    used_mask = np.zeros(len(bins), dtype=bool)
    joint = None
    if continuous and method == "scatter":
        # None when a side has too few nights: the separate fits below then say so.
        joint = _fit_continuous(bins, perihelion_mjd, ~post & allowed, post & allowed, method)
    fitted = joint or [_fit_branch(name, bins, side & allowed, method, options)
                       for name, side in (("pre", ~post), ("post", post))]
    for branch, used in fitted:
        if branch is not None:
            branches.append(branch)
            used_mask[used] = True
    t_peri = Time(perihelion_mjd, format="mjd", scale="utc")
    partial = ActivityTrend(tuple(branches), t_peri, method, rho, QTable(), bins)
    trend_y, trend_var = partial.predict_log(bins.log_r_h, bins.mjd)
    nights = _nights_table(bins, perihelion_mjd, used_mask, trend_y, trend_var, branches)
    return ActivityTrend(tuple(branches), t_peri, method, rho, nights, bins,
                         continuous=joint is not None)


def fit_activity_trend(time, r_h, afrho, afrho_err, *, perihelion_time, rho=None, aperture=None,
                       method="scatter", exclude=None, night_gap=0.25 * u.day, continuous=False,
                       **options):
    r"""Fit Afρ ∝ r_h^k in log space, separately before and after perihelion.

    Parameters
    ----------
    time : `~astropy.time.Time`, shape (n,)
        Mid-exposure times of the measurements.
    r_h : `~astropy.units.Quantity` ['length'], shape (n,)
        Heliocentric distances.
    afrho, afrho_err : `~astropy.units.Quantity` ['length'], shape (n,)
        A(0)fρ (or Afρ) and its 1σ error. Rows with a non-finite or non-positive value are left
        out with a `~photpipe.PoorResultWarning`.
    perihelion_time : `~astropy.time.Time`
        Splits the data into the ``pre`` and ``post`` branches.
    rho : `~astropy.units.Quantity` ['length'], shape (n,), optional
        Aperture radius of each row when the table holds several apertures per frame.
    aperture : `~astropy.units.Quantity` ['length'], optional
        Which aperture to fit; default the one with the most rows (ties: nearest 10 000 km).
    method : {'scatter', 'clip', 'robust'}
        ``scatter`` (default): weighted least squares with an intrinsic night-to-night scatter
        (restricted likelihood, marginalised for the errors); ``clip``: weighted least squares
        with iterated 3σ clipping and Birge-ratio error scaling; ``robust``: Cauchy-loss fit.
    exclude : ndarray of bool, shape (n,), optional
        Rows to leave out (e.g. nights in outburst).
    night_gap : `~astropy.units.Quantity` ['time'], optional
        Pause that separates two nights (default 6 h).
    continuous : bool, optional
        With ``scatter``: fit both branches at once, meeting at perihelion, with one
        night-to-night scatter (see Notes); the outburst search works this way.
    **options
        Passed to the fitting algorithm (``clip_sigma`` for ``clip``).

    Returns
    -------
    trend : `ActivityTrend`

    Raises
    ------
    TypeError
        If ``time`` or ``perihelion_time`` is not a Time, or a quantity lacks units.
    ValueError
        For mismatched lengths, an unknown method or an aperture that was not measured.

    Notes
    -----
    Per night, the frames' log10 Afρ are averaged with inverse-variance weights (errors
    σ_log = σ_Afρ / (Afρ ln 10)). On each side of perihelion the model

    .. math:: \log_{10} A f\rho = \log_{10} A_1 + k \log_{10} r_h

    (the power-law description used by A'Hearn et al. 1995, Icarus 118, 223; common practice)
    is fitted. With ``scatter`` every night's variance is σ² + s²; the line is the weighted
    least-squares line at the s that maximises the restricted likelihood (Patterson & Thompson
    1971, Biometrika 58, 545), and the covariance of (log A_1, k) is averaged over the posterior
    of s (flat priors), so the error of k stays honest when a handful of nights pins the real
    night-to-night variability down only roughly. ``scatter_dex`` is the posterior
    root-mean-square of s.

    With ``continuous`` the two branches are one model,
    :math:`\log_{10} A f\rho = a + k_{\rm pre/post} (\log_{10} r_h - \log_{10} q)`: Afρ
    changes continuously in time, so at perihelion (r_h = q on both sides) both power laws give
    the same value; q is estimated from the nights nearest perihelion
    (`perihelion_log_r_h`), and one scatter s serves both sides. Each side then needs only
    two nights.

    Examples
    --------
    >>> import numpy as np
    >>> from astropy import units as u
    >>> from astropy.time import Time
    >>> t = Time(60000.0 + np.arange(-40, 41, 8), format="mjd")
    >>> rh = np.sqrt(1.3 ** 2 + (0.02 * (t.mjd - 60000.0)) ** 2) * u.au
    >>> afrho = 500.0 * rh.to_value(u.au) ** -3.0 * u.cm
    >>> trend = fit_activity_trend(t, rh, afrho, 0.02 * afrho,
    ...                            perihelion_time=Time(60000.0, format="mjd"))
    >>> [round(b.k, 3) for b in trend.branches]
    [-3.0, -3.0]
    """
    if not isinstance(perihelion_time, Time):
        msg = f"'perihelion_time' must be an astropy Time, got {type(perihelion_time).__name__}"
        raise TypeError(msg)
    if method not in FIT_METHODS:
        msg = f"unknown trend fit method {method!r}; choose one of {sorted(FIT_METHODS)}"
        raise ValueError(msg)
    gap_d = as_positive_value(night_gap, u.day, "night_gap")
    p = prepare(time, r_h, afrho, afrho_err, rho=rho, aperture=aperture, exclude=exclude)
    t_peri = float(perihelion_time.utc.mjd)
    bins = bin_nights(np.where(p.keep, p.mjd, np.nan), p.log_r_h, p.y, p.sy, gap_d=gap_d,
                      split_mjd=t_peri)
    rho_q = None if p.rho_km is None else p.rho_km * u.km
    return fit_trend_to_nights(bins, t_peri, method=method, options=options, rho=rho_q,
                               continuous=continuous)
