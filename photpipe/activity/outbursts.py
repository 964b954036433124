"""Outbursts: significant, sudden rises of night-binned Afρ above the activity trend.

A night is *bright* when its log10 Afρ lies more than ``sigma`` standard deviations above the
trend (the night's error, the trend's intrinsic scatter and the trend's own uncertainty added in
quadrature) and the chance that any quiet night of the campaign would lie as high, allowing for
how poorly a few nights pin the scatter down, is below ``max_false_alarm``. An outburst starts
at a bright night whose previous night was not bright, provided the rise from that night is
itself significant (``jump_sigma``), so that a slow drift away from a power law is not called
an outburst. The event lasts while the nights stay above ``quiet_sigma`` or keep a quarter of the
onset's excess (in dex); those nights are kept out of the trend fit, which is repeated until the
set of outburst nights no longer changes. The trend's two branches are fitted together, meeting
at perihelion, so that a night just after perihelion is judged against a trend the earlier nights
hold in place (see `analyse_activity`).
"""

import warnings
from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.table import QTable
from astropy.time import Time

from photpipe._quantity import as_positive_value
from photpipe._warnings import PoorResultWarning
from photpipe.activity._inputs import prepare
from photpipe.activity.nights import bin_nights
from photpipe.activity.powerlaw import brightening_mag
from photpipe.activity.trend import ActivityTrend, _nights_table, fit_trend_to_nights

#: An event goes on while a night keeps at least this fraction of the onset's excess (in dex).
_TAIL_FRACTION = 0.25

__all__ = ["ActivityAnalysis", "analyse_activity", "find_outbursts", "outbursts_in_nights"]

_OUTBURST_COLUMNS = ("onset_after", "onset_before", "night", "r_h", "delta_mag",
                     "delta_mag_err", "significance", "jump_significance", "false_alarm",
                     "peak_delta_mag",
                     "peak_time", "n_nights", "afrho", "afrho_trend", "branch", "flags")


@dataclass(frozen=True)
class ActivityAnalysis:
    """The activity trend fitted without the outburst nights, and the outbursts found.

    Attributes
    ----------
    trend : `~photpipe.activity.ActivityTrend`
    outbursts : `~astropy.table.QTable`
        See `find_outbursts`.
    outburst_nights : ndarray of bool
        Per night of ``trend.nights``: part of an outburst (left out of the fit).
    iterations : int
        Fit-and-search rounds until the outburst nights stopped changing.
    """

    trend: ActivityTrend
    outbursts: QTable
    outburst_nights: np.ndarray
    iterations: int

    def to_dict(self):
        """Plain dict with the trend and one dict per outburst."""
        rows = []
        for row in self.outbursts:
            rows.append({
                "onset_after": row["onset_after"].utc.isot,
                "onset_before": row["onset_before"].utc.isot,
                "delta_mag": float(row["delta_mag"].to_value(u.mag)),
                "delta_mag_err": float(row["delta_mag_err"].to_value(u.mag)),
                "significance": float(row["significance"]),
                "peak_delta_mag": float(row["peak_delta_mag"].to_value(u.mag)),
                "n_nights": int(row["n_nights"]), "branch": str(row["branch"]),
                "flags": str(row["flags"]),
            })
        return {"trend": self.trend.to_dict(), "outbursts": rows,
                "iterations": self.iterations}


def _empty_outbursts():
    t = QTable()
    empty_t = Time([], format="mjd", scale="utc")
    for name in ("onset_after", "onset_before", "night"):
        t[name] = empty_t
    t["r_h"] = [] * u.au
    for name in ("delta_mag", "delta_mag_err"):
        t[name] = [] * u.mag
    t["significance"] = np.array([], dtype=float)
    t["jump_significance"] = np.array([], dtype=float)
    t["false_alarm"] = np.array([], dtype=float)
    t["peak_delta_mag"] = [] * u.mag
    t["peak_time"] = empty_t
    t["n_nights"] = np.array([], dtype=int)
    t["afrho"] = [] * u.cm
    t["afrho_trend"] = [] * u.cm
    t["branch"] = np.array([], dtype=str)
    t["flags"] = np.array([], dtype=str)
    return t


def outbursts_in_nights(nights, *, sigma=5.0, jump_sigma=3.0, quiet_sigma=2.0,
                        max_false_alarm=0.01):
    """Find outbursts in a night table with residuals from a trend.

    Parameters
    ----------
    nights : `~astropy.table.QTable`
        ``ActivityTrend.nights``, in time order.
    sigma, jump_sigma, quiet_sigma, max_false_alarm : float
        See the module notes.

    Returns
    -------
    outbursts : `~astropy.table.QTable`
        One row per outburst (columns as in `find_outbursts`).
    in_outburst : ndarray of bool
        Per night, part of an outburst.
    """
    r = np.asarray(nights["residual_dex"], dtype=float)
    e = np.asarray(nights["residual_err_dex"], dtype=float)
    z = np.asarray(nights["significance"], dtype=float)
    log_p = np.asarray(nights["log10_tail_p"], dtype=float)
    idx = np.flatnonzero(np.isfinite(z) & np.isfinite(log_p))
    n_searched = max(idx.size, 1)
    # Chance that some quiet night of the campaign lies this high (Bonferroni bound).
    false_alarm = np.minimum(1.0, n_searched * 10 ** np.where(np.isfinite(log_p), log_p, 0.0))
    bright = (z > sigma) & (false_alarm < max_false_alarm)
    in_outburst = np.zeros(len(nights), dtype=bool)

    def jump_of(k, j):
        return float((r[k] - r[j]) / np.hypot(e[k], e[j]))

    rows = []
    pos = 0
    while pos < idx.size:
        i = idx[pos]
        if not bright[i]:
            pos += 1
            continue
        if pos == 0:
            msg = (f"first night searched ({nights['time'][i].utc.iso[:10]}) is {z[i]:.1f} σ "
                   f"above the trend, but no earlier night shows whether the rise was sudden")
            warnings.warn(msg, PoorResultWarning, stacklevel=3)
            # Leave the whole bright stretch out of the fit all the same.
            while pos < idx.size and z[idx[pos]] > quiet_sigma:
                in_outburst[idx[pos]] = True
                pos += 1
            continue
        j = idx[pos - 1]
        jump = jump_of(i, j)
        if jump <= jump_sigma:
            pos += 1
            continue
        event = [i]
        pos += 1
        # The event lasts while the nights stay significantly high or keep a good part of the
        # onset's excess (a decaying outburst left in the fit would inflate the scatter).
        while pos < idx.size and (z[idx[pos]] > quiet_sigma
                                  or r[idx[pos]] > _TAIL_FRACTION * r[i]):
            # A second sudden rise inside an event starts a new outburst.
            k_prev, k = idx[pos - 1], idx[pos]
            if bright[k] and jump_of(k, k_prev) > jump_sigma:
                break
            event.append(k)
            pos += 1
        event = np.array(event)
        in_outburst[event] = True
        peak = event[np.argmax(r[event])]
        flags = []
        gap_days = float(nights["time_first"][i].mjd - nights["time_last"][j].mjd)
        if gap_days > 3.0:
            flags.append("wide_bracket")
        if str(nights["branch"][i]) != str(nights["branch"][j]):
            flags.append("across_perihelion")
        rows.append({
            "onset_after": nights["time_last"][j], "onset_before": nights["time_first"][i],
            "night": nights["time"][i], "r_h": nights["r_h"][i],
            "delta_mag": brightening_mag(10 ** r[i], 1.0) * u.mag,
            "delta_mag_err": 2.5 * e[i] * u.mag, "significance": float(z[i]),
            "jump_significance": float(jump), "false_alarm": float(false_alarm[i]),
            "peak_delta_mag": brightening_mag(10 ** r[peak], 1.0) * u.mag,
            "peak_time": nights["time"][peak], "n_nights": int(event.size),
            "afrho": nights["afrho"][i], "afrho_trend": nights["afrho_trend"][i],
            "branch": str(nights["branch"][i]), "flags": ",".join(flags),
        })
    table = _empty_outbursts()
    for row in rows:
        table.add_row([row[name] for name in _OUTBURST_COLUMNS])
    table.meta.update({"sigma": sigma, "jump_sigma": jump_sigma, "quiet_sigma": quiet_sigma,
                       "max_false_alarm": max_false_alarm, "n_nights_searched": int(idx.size)})
    return table, in_outburst


def analyse_activity(time, r_h, afrho, afrho_err, *, perihelion_time, rho=None, aperture=None,
                     sigma=5.0, jump_sigma=3.0, quiet_sigma=2.0, max_false_alarm=0.01,
                     method="scatter", night_gap=0.25 * u.day, max_iter=6, continuous=True):
    """Fit the activity trend and search for outbursts, keeping outburst nights out of the fit.

    Parameters
    ----------
    time, r_h, afrho, afrho_err, perihelion_time, rho, aperture, method, night_gap
        As in `~photpipe.activity.fit_activity_trend`.
    sigma, jump_sigma, quiet_sigma, max_false_alarm : float
        Thresholds of the search (see `find_outbursts`).
    max_iter : int
        Most fit-and-search rounds.
    continuous : bool
        With ``method="scatter"``, fit both branches at once, meeting at perihelion, with one
        night-to-night scatter (see `~photpipe.activity.fit_trend_to_nights`). Without it, a
        night just after (or before) perihelion sits at the edge of its own branch's r_h range:
        left out of the fit it is compared with an extrapolation, kept in it tilts the branch
        towards itself, and an outburst there is easily missed; with few nights on that side the
        branch cannot be fitted at all once the outburst nights are left out.

    Returns
    -------
    analysis : `ActivityAnalysis`

    Notes
    -----
    The first round compares the nights with a Cauchy-loss line (robust to the outburst nights
    it has not yet identified); later rounds use ``method`` on the nights not in outburst.

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_activity
    >>> sim = simulate_activity(seed=3, outburst_night=12, outburst_mag=-1.0)
    >>> res = analyse_activity(sim.time, sim.r_h, sim.afrho, sim.afrho_err,
    ...                        perihelion_time=sim.perihelion_time)
    >>> len(res.outbursts), round(float(res.outbursts["delta_mag"][0].value), 1)   # -1.0 injected
    (1, -1.0)
    """
    if not isinstance(perihelion_time, Time):
        msg = f"'perihelion_time' must be an astropy Time, got {type(perihelion_time).__name__}"
        raise TypeError(msg)
    gap_d = as_positive_value(night_gap, u.day, "night_gap")
    p = prepare(time, r_h, afrho, afrho_err, rho=rho, aperture=aperture)
    t_peri = float(perihelion_time.utc.mjd)
    bins = bin_nights(np.where(p.keep, p.mjd, np.nan), p.log_r_h, p.y, p.sy, gap_d=gap_d,
                      split_mjd=t_peri)
    rho_q = None if p.rho_km is None else p.rho_km * u.km
    kw = {"sigma": sigma, "jump_sigma": jump_sigma, "quiet_sigma": quiet_sigma,
          "max_false_alarm": max_false_alarm}
    with warnings.catch_warnings():
        # The first look is only for finding outburst nights; its warnings would mislead.
        warnings.simplefilter("ignore", PoorResultWarning)
        first = fit_trend_to_nights(bins, t_peri, method="robust", rho=rho_q)
        # Candidates only: a liberal first cut, since every later round re-tests each night.
        _, in_outburst = outbursts_in_nights(
            first.nights, sigma=min(sigma, 3.0), jump_sigma=min(jump_sigma, 2.0),
            quiet_sigma=quiet_sigma, max_false_alarm=1.0)
    iterations = 1
    seen = {in_outburst.tobytes()}
    for _ in range(max_iter):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", PoorResultWarning)
            trend = fit_trend_to_nights(bins, t_peri, method=method, night_used=~in_outburst,
                                        rho=rho_q, continuous=continuous)
            table, new = outbursts_in_nights(trend.nights, **kw)
        iterations += 1
        if np.array_equal(new, in_outburst) or new.tobytes() in seen:
            in_outburst = new
            break
        seen.add(new.tobytes())
        in_outburst = new
    # Final round with warnings shown, on the settled set of outburst nights.
    trend = fit_trend_to_nights(bins, t_peri, method=method, night_used=~in_outburst, rho=rho_q,
                                continuous=continuous)
    table, in_outburst = outbursts_in_nights(trend.nights, **kw)
    table.meta["method"] = method
    table.meta["n_nights"] = len(bins)
    return ActivityAnalysis(trend, table, in_outburst, iterations)


def find_outbursts(time, afrho, afrho_err, *, trend=None, r_h=None, perihelion_time=None,
                   rho=None, aperture=None, sigma=5.0, jump_sigma=3.0, quiet_sigma=2.0,
                   max_false_alarm=0.01, method="scatter", night_gap=0.25 * u.day):
    r"""Find outbursts: significant, sudden rises of night-binned Afρ above the trend.

    Parameters
    ----------
    time : `~astropy.time.Time`, shape (n,)
    afrho, afrho_err : `~astropy.units.Quantity` ['length'], shape (n,)
    trend : `~photpipe.activity.ActivityTrend`, optional
        A trend to compare with (fitted without outburst nights). When absent the trend is
        fitted here, keeping outburst nights out (`analyse_activity`); ``perihelion_time`` is
        then required.
    r_h : `~astropy.units.Quantity` ['length'], shape (n,)
        Heliocentric distances (required: the trend is a function of r_h).
    perihelion_time : `~astropy.time.Time`, optional
        Defaults to ``trend.perihelion_time``.
    rho, aperture : optional
        Aperture selection, as in `~photpipe.activity.fit_activity_trend`.
    sigma : float
        Departure above the trend, in standard deviations, that makes a night bright (default 5).
    jump_sigma : float
        Significance of the rise from the previous night that makes it sudden (default 3).
    quiet_sigma : float
        An outburst lasts while nights stay above this many σ (default 2).
    max_false_alarm : float
        A night is bright only if the chance that any quiet night of the campaign lies as high
        is below this (default 0.01). The chance allows for the uncertainty of the trend's
        scatter, so with few nights it is the stricter of the two tests.
    method, night_gap
        As in `~photpipe.activity.fit_activity_trend`.

    Returns
    -------
    outbursts : `~astropy.table.QTable`
        One row per outburst: ``onset_after`` (last frame of the last quiet night),
        ``onset_before`` (first frame of the first bright night), ``night`` (its mean time),
        ``r_h``, ``delta_mag`` = -2.5 log10(Afρ / Afρ_trend) on the first bright night and
        ``delta_mag_err``, ``significance`` (σ above the trend), ``jump_significance``,
        ``false_alarm`` (chance of a quiet night that high anywhere in the campaign),
        ``peak_delta_mag`` and ``peak_time`` over the event, ``n_nights`` in the event, ``afrho``,
        ``afrho_trend``, ``branch``, ``flags`` (``wide_bracket`` when the quiet and bright
        nights are more than 3 days apart, ``across_perihelion``).

    Notes
    -----
    The night's standard deviation about the trend is
    :math:`\sqrt{f^2(\sigma_n^2 + s^2) + \sigma_{\rm trend}^2}` with σ_n the night's error,
    s the trend's intrinsic scatter, f its error scale and σ_trend the fit's own uncertainty at
    that r_h. Δm is the brightening of the dust in the aperture (A'Hearn et al. 1984, AJ 89,
    579: Afρ scales with the aperture flux at fixed geometry).

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_activity
    >>> sim = simulate_activity(seed=1)        # quiet: no outburst injected
    >>> len(find_outbursts(sim.time, sim.afrho, sim.afrho_err, r_h=sim.r_h,
    ...                    perihelion_time=sim.perihelion_time))
    0
    """
    if r_h is None:
        msg = "find_outbursts needs 'r_h': the trend it compares with is a function of r_h"
        raise ValueError(msg)
    if trend is None:
        if perihelion_time is None:
            msg = "find_outbursts needs 'perihelion_time' (or a fitted 'trend')"
            raise ValueError(msg)
        return analyse_activity(time, r_h, afrho, afrho_err, perihelion_time=perihelion_time,
                                rho=rho, aperture=aperture, sigma=sigma, jump_sigma=jump_sigma,
                                quiet_sigma=quiet_sigma, max_false_alarm=max_false_alarm,
                                method=method,
                                night_gap=night_gap).outbursts
    if not isinstance(trend, ActivityTrend):
        msg = f"'trend' must be an ActivityTrend, got {type(trend).__name__}"
        raise TypeError(msg)
    t_peri = trend.perihelion_time if perihelion_time is None else perihelion_time
    gap_d = as_positive_value(night_gap, u.day, "night_gap")
    p = prepare(time, r_h, afrho, afrho_err, rho=rho, aperture=aperture)
    bins = bin_nights(np.where(p.keep, p.mjd, np.nan), p.log_r_h, p.y, p.sy, gap_d=gap_d,
                      split_mjd=float(t_peri.utc.mjd))
    # Re-evaluate the given trend on these nights (its fit is not repeated).
    ty, tvar = trend.predict_log(bins.log_r_h, bins.mjd)
    nights = _nights_table(bins, float(trend.perihelion_time.utc.mjd),
                           np.zeros(len(bins), dtype=bool), ty, tvar, trend.branches)
    table, _ = outbursts_in_nights(nights, sigma=sigma, jump_sigma=jump_sigma,
                                   quiet_sigma=quiet_sigma,
                                   max_false_alarm=max_false_alarm)
    table.meta["method"] = trend.method
    table.meta["n_nights"] = len(bins)
    return table
