"""The rotation-period search: three periodograms side by side, one adopted period with errors.

Steps: choose the points, check what the sampling can constrain, compute the periodograms of
every method on one frequency grid, decide between single- and double-peaked interpretations
with an F test on the odd harmonics (a free zero point per site-night), fit the adopted Fourier
series with its frequency, estimate errors and the 95 % interval from the covariance and a
bootstrap of whole nights, weigh the named aliases by Δχ², and turn the amplitude into a lower
bound on the axial ratio.
"""

import warnings
from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.table import QTable
from scipy import stats

from photpipe._quantity import as_positive_value, as_value
from photpipe.rotation.aliases import describe_relation, periodogram_peaks, window_peaks
from photpipe.rotation.errors import LightcurveError, RotationWarning
from photpipe.rotation.fit import (
    bootstrap_fourier_fit,
    expanded_percentile_interval,
    fit_fourier_series,
    night_blocks,
)
from photpipe.rotation.fourier_model import fourier_series, model_extrema
from photpipe.rotation.grid import frequency_grid
from photpipe.rotation.harmonic_sums import harmonic_chi2
from photpipe.rotation.lightcurve import ReducedLightcurve
from photpipe.rotation.methods import METHODS
from photpipe.rotation.odd_harmonics import odd_harmonics_f_test, zero_points_f_test
from photpipe.rotation.periodogram import fap_from_power
from photpipe.rotation.shape import (
    amplitude_at_zero_phase,
    minimum_axial_ratio,
    undilute_amplitude,
)

__all__ = ["RotationResult", "search_rotation", "count_nights"]

_NIGHT_GAP_D = 0.3
# Fewest site-nights for resampling whole nights: below this the block bootstrap has too few
# distinct resamples (5 blocks give 126) and single points are drawn instead (project choice).
_MIN_BOOTSTRAP_BLOCKS = 5
# Below this p-value the site-nights' zero points are taken to differ, and the odd-harmonic
# test fits one per site-night (project choice: the usual 5 % level of a preliminary test).
_ZERO_POINT_LEVEL = 0.05
#: Meaning of ``period_err`` and ``amplitude_err`` as written to ``rotation.json``.
ERROR_LEVEL = "1 sigma (68.3 % for Gaussian errors)"
# Two-sided 95 % quantile of the normal distribution.
_Z95 = float(stats.norm.ppf(0.975))
# Fewest finite resamples for a bootstrap percentile interval: 40 puts at least one resample in
# each 2.5 % tail (project choice; Efron & Tibshirani 1993 advise about 1000, from memory).
_MIN_PERCENTILE_RESAMPLES = 40
#: How ``period_interval_95`` is formed: from the night-block bootstrap when it ran with enough
#: resamples, from the 1-σ error otherwise.
INTERVAL_METHODS = {
    "bootstrap": "expanded percentile interval of the site-night bootstrap periods",
    "normal": "period -/+ 1.96 period_err (normal)",
}


@dataclass(frozen=True)
class RotationResult:
    """The outcome of a rotation-period search.

    Attributes
    ----------
    period, period_err : `~astropy.units.Quantity` ['time']
        Adopted rotation period and its 1-σ error (the larger of the covariance and bootstrap
        errors).
    period_interval_95 : `~astropy.units.Quantity` ['time'], shape (2,)
        The 95 % interval of the period: the expanded percentile interval of the bootstrap
        periods when whole site-nights were resampled at least 40 times,
        ``period ∓ 1.96 period_err`` otherwise.
    period_interval_method : str
        How ``period_interval_95`` was formed (a value of ``INTERVAL_METHODS``).
    period_err_covariance, period_err_bootstrap : `~astropy.units.Quantity` ['time']
        The two error estimates (bootstrap is NaN when no resamples were drawn).
    bootstrap_resampled : str
        What the bootstrap drew with replacement: ``"site-nights"`` (whole nights, which keeps
        residuals correlated within a night together), ``"points"`` (fewer than five
        site-nights), or ``"none"``.
    bootstrap_blocks : int
        Number of site-nights in the data.
    amplitude, amplitude_err : `~astropy.units.Quantity` ['mag']
        Peak-to-peak amplitude of the fitted lightcurve and its 1-σ error, as observed.
    amplitude_nucleus : `~astropy.units.Quantity` ['mag']
        The amplitude with the coma dilution removed (equal to ``amplitude`` when coma-free;
        NaN when the lightcurve holds coma and no coma fraction was given).
    amplitude_zero_phase : `~astropy.units.Quantity` ['mag']
        The nucleus amplitude corrected to 0° phase (Zappalà et al. 1990).
    axial_ratio_min : float
        Lower bound on a/b from ``amplitude_zero_phase`` (a lower bound of it when the coma
        dilution is unknown).
    n_points : int
        Points used.
    method : str
        Method whose fit gives the adopted period (``"fourier"``).
    fit : `~photpipe.rotation.fit.FourierFit`
        The adopted fit.
    false_alarm_probability : float
        Chance that noise alone gives as strong a fit anywhere on the grid.
    periodograms : dict
        Method name -> `~photpipe.rotation.periodogram.Periodogram`.
    candidates : `~astropy.table.QTable`
        The best peaks of every method and how each relates to the adopted period.
    window : `~astropy.table.QTable`
        Named peaks of the spectral window.
    aliases : `~astropy.table.QTable`
        The adopted period's aliases, each with the Δχ² by which it is rejected.
    shape : dict
        The single- versus double-peaked choice and its evidence.
    methods_summary : dict
        Method name -> best period and its relation to the adopted one.
    flags : tuple of str
        Short words for whatever needs care.
    lightcurve : `~photpipe.rotation.lightcurve.ReducedLightcurve`
        The points used.
    magnitudes : ndarray
        The magnitudes searched (per-filter offsets removed).
    mean_phase_deg : float
        Mean phase angle of the points.
    """

    period: u.Quantity
    period_err: u.Quantity
    period_err_covariance: u.Quantity
    period_err_bootstrap: u.Quantity
    period_interval_95: u.Quantity
    period_interval_method: str
    bootstrap_resampled: str
    bootstrap_blocks: int
    amplitude: u.Quantity
    amplitude_err: u.Quantity
    amplitude_nucleus: u.Quantity
    amplitude_zero_phase: u.Quantity
    axial_ratio_min: float
    n_points: int
    method: str
    fit: object
    false_alarm_probability: float
    periodograms: dict
    candidates: QTable
    window: QTable
    aliases: QTable
    shape: dict
    methods_summary: dict
    flags: tuple
    lightcurve: ReducedLightcurve
    magnitudes: np.ndarray
    mean_phase_deg: float
    settings: dict = field(default_factory=dict)

    def to_dict(self):
        """Return the result as a JSON-friendly dict (the ``rotation.json`` contract).

        Returns
        -------
        result : dict
            ``period_h, period_err_h, amplitude_mag, amplitude_err_mag, axial_ratio_min,
            n_points, method`` and the supporting figures and evidence.
        """
        def _f(q, unit):
            v = float(q.to_value(unit))
            return v if np.isfinite(v) else None

        return {
            "period_h": _f(self.period, u.h),
            "period_err_h": _f(self.period_err, u.h),
            "period_err_covariance_h": _f(self.period_err_covariance, u.h),
            "period_err_bootstrap_h": _f(self.period_err_bootstrap, u.h),
            "period_err_level": ERROR_LEVEL,
            "period_interval_95_h": [_f(q, u.h) for q in self.period_interval_95],
            "period_interval_95_method": self.period_interval_method,
            "bootstrap_resampled": self.bootstrap_resampled,
            "bootstrap_blocks": int(self.bootstrap_blocks),
            "frequency_per_day": float(self.fit.frequency),
            "amplitude_mag": _f(self.amplitude, u.mag),
            "amplitude_err_mag": _f(self.amplitude_err, u.mag),
            "amplitude_nucleus_mag": _f(self.amplitude_nucleus, u.mag),
            "amplitude_zero_phase_mag": _f(self.amplitude_zero_phase, u.mag),
            "axial_ratio_min": (float(self.axial_ratio_min)
                                if np.isfinite(self.axial_ratio_min) else None),
            "n_points": int(self.n_points),
            "method": self.method,
            "fourier_order": int(self.fit.order),
            "chi2_reduced": float(self.fit.chi2_reduced),
            "false_alarm_probability": float(self.false_alarm_probability),
            "mean_phase_deg": float(self.mean_phase_deg),
            "coma_free": bool(self.lightcurve.coma_free),
            "shape": self.shape,
            "aliases": [{"name": str(r["name"]), "period_h": float(r["period"].to_value(u.h)),
                         "delta_chi2": float(r["delta_chi2"])} for r in self.aliases],
            "window_peaks": [{"name": str(r["name"]),
                              "frequency_per_day": float(r["frequency"].to_value(1 / u.day)),
                              "power": float(r["power"])} for r in self.window],
            "methods": self.methods_summary,
            "flags": list(self.flags),
            "settings": self.settings,
        }

    def summary(self):
        """Return a few readable lines describing the result."""
        d = self.to_dict()
        lo, hi = (np.nan if v is None else v for v in d["period_interval_95_h"])
        lines = [
            f"rotation period  {d['period_h']:.4f} ± {d['period_err_h']:.4f} h (1σ; 95 % "
            f"interval {lo:.4f}-{hi:.4f} h), {self.shape['choice']}, Fourier order "
            f"{d['fourier_order']}, {d['n_points']} points",
            f"amplitude        {d['amplitude_mag']:.3f} ± {d['amplitude_err_mag']:.3f} mag "
            f"observed; a/b >= {d['axial_ratio_min']:.2f}" if d["axial_ratio_min"] else
            f"amplitude        {d['amplitude_mag']:.3f} ± {d['amplitude_err_mag']:.3f} mag "
            f"observed; a/b not bounded (coma dilution unknown)",
            f"false-alarm prob {d['false_alarm_probability']:.2g}",
        ]
        for a in d["aliases"][:3]:
            lines.append(f"alias {a['name']:<22s} {a['period_h']:.4f} h  rejected by "
                         f"Δχ² = {a['delta_chi2']:.1f}")
        for name, m in d["methods"].items():
            lines.append(f"{name:<13s} best {m['period_h']:.4f} h ({m['relation']})")
        if d["flags"]:
            lines.append("flags: " + ", ".join(d["flags"]))
        return "\n".join(lines)


def count_nights(epoch_mjd):
    """Return the number of separate nights (runs of points split by gaps over 0.3 d).

    Examples
    --------
    >>> import numpy as np
    >>> count_nights(np.array([0.0, 0.1, 1.0, 1.1, 5.0]))
    3
    """
    t = np.asarray(epoch_mjd, dtype=float)
    if t.size == 0:
        return 1  # no gaps; callers refuse empty lightcurves before this
    return int(night_blocks(t, gap=_NIGHT_GAP_D).max()) + 1


def _warn(flags, flag, message):
    flags.append(flag)
    warnings.warn(message, RotationWarning, stacklevel=3)


def _choose_points(reduced, use_points, min_points, flags):
    free = ~reduced.coma_contaminated
    if use_points == "coma-free":
        chosen = reduced.select(free)
    elif use_points == "all":
        chosen = reduced
    elif use_points == "auto":
        chosen = reduced.select(free) if free.sum() >= min_points else reduced
    else:
        msg = f"'use_points' must be 'auto', 'coma-free' or 'all', got {use_points!r}"
        raise ValueError(msg)
    if not chosen.coma_free:
        flags.append("coma_contaminated")
    return chosen


def _check_errors(lc):
    err = lc.mag_err
    bad = ~np.isfinite(err) | (err <= 0) | ~np.isfinite(lc.mag) | ~np.isfinite(lc.epoch_mjd)
    if np.any(bad):
        names = ", ".join(str(f) for f in lc.frame[bad][:5])
        msg = (f"{bad.sum()} of {lc.n_points} points have a NaN, infinite or non-positive "
               f"magnitude error, magnitude or epoch ({names}): without honest errors neither "
               f"the period's significance nor its uncertainty can be given")
        raise LightcurveError(msg)


def _remove_filter_offsets(lc, flags):
    y = lc.mag.copy()
    w = 1 / lc.mag_err**2
    filters = sorted(set(lc.filter))
    if len(filters) > 1:
        for name in filters:
            sel = lc.filter == name
            y[sel] -= np.sum(w[sel] * y[sel]) / np.sum(w[sel])
        y += np.sum(w * lc.mag) / np.sum(w)
        flags.append("filter_offsets_removed")
    return y


def _degenerate(fit, y):
    """True when a fit's curve is far larger than the data allow (sampling degeneracy)."""
    amp = fit.amplitude
    return not np.isfinite(amp) or amp > 1.5 * float(np.ptp(y)) + 0.05


def _odd_harmonics_p(t, y, dy, f_high, order_high, *, half_width, blocks):
    """p-value that the curve at ``f_high/2`` differs from two identical halves.

    When the site-nights' zero points differ (p below 0.05), both curves of the test get a
    free zero point per site-night (``blocks``), so nightly zero-point errors do not pass for
    odd harmonics (:mod:`photpipe.rotation.odd_harmonics`); otherwise one zero point, which
    keeps the full power of comparing nights. NaN when the sampling cannot constrain the curve
    at ``f_high/2`` (e.g. a period commensurate with the day, where the harmonics are
    degenerate with the nightly gaps). Also returns the fit at ``f_high/2`` and what the test
    used.
    """
    fit_full = fit_fourier_series(t, y, dy, f_high, order_high, search_half_width=half_width)
    fit_half = fit_fourier_series(t, y, dy, f_high / 2, 2 * order_high,
                                  search_half_width=half_width / 2)
    if _degenerate(fit_half, y):
        return float("nan"), fit_half, {}
    p_zero, _, _ = zero_points_f_test(t, y, dy, fit_half.frequency, order_high, blocks)
    per_night = p_zero < _ZERO_POINT_LEVEL
    # each curve at its own best frequency (the single-peaked one may sit apart from twice
    # the double-peaked one's)
    p, _, dof = odd_harmonics_f_test(t, y, dy, [fit_half.frequency, fit_full.frequency / 2],
                                     order_high, blocks=blocks if per_night else None)
    used = {"zero_points": "per site-night" if per_night else "one",
            "p_zero_points_equal": _finite_or_none(p_zero), "dof": [int(d) for d in dof]}
    return p, fit_half, used


def _significant_maxima(fit):
    """Number of brightness maxima per cycle that stand out of the model's noise."""
    bright, faint = model_extrema(fit.coefficients)
    if bright.size <= 1:
        return int(bright.size)
    phase = np.arange(2000) / 2000
    v = fourier_series(phase, 1.0, fit.coefficients)
    coef_err = np.sqrt(np.abs(np.diag(fit.covariance)[:-1]))
    noise = 2.0 * np.sqrt(np.sum(coef_err[1:] ** 2))
    count = 0
    for ph in bright:
        i = int(round(ph * 2000)) % 2000
        # prominence: rise to the faintest point on either side before the next maximum
        others = np.sort(np.mod(bright - ph, 1.0))[1:]
        nxt = others[0] if others.size else 1.0
        seg_r = v[(i + np.arange(int(nxt * 2000) + 1)) % 2000]
        prv = 1.0 - others[-1] if others.size else 1.0
        seg_l = v[(i - np.arange(int(prv * 2000) + 1)) % 2000]
        prominence = min(seg_r.max(), seg_l.max()) - v[i]
        if prominence > max(noise, 0.05 * np.ptp(v)):
            count += 1
    return max(count, 1)


def _finite_or_none(x):
    return float(x) if x is not None and np.isfinite(x) else None


def _decide_shape(t, y, dy, f_start, order, f_min, f_max, *, significance, prefer_double,
                  half_width, blocks):
    """Return (frequency, order, evidence) of the adopted single/double-peaked solution."""
    f, m = f_start, order
    steps = []
    # Up: if the curve at f is two identical halves, the data repeat at 2f.
    for _ in range(3):
        if m < 2 or 2 * f > f_max * (1 + 1e-9):
            break
        p, _, used = _odd_harmonics_p(t, y, dy, 2 * f, m // 2, half_width=half_width,
                                      blocks=blocks)
        steps.append({"test": "odd harmonics at the start", "period_h": 24 / f,
                      "p": _finite_or_none(p), **used})
        if not p >= significance:  # significant, or untestable: stay
            break
        f, m = 2 * f, max(1, m // 2)
    # Down: do the two halves of the doubled period differ significantly?
    p_down, moved_down, p_moved = None, False, None
    for _ in range(3):
        if f / 2 < f_min * (1 - 1e-9):
            break
        p_down, fit_half, used = _odd_harmonics_p(t, y, dy, f, m, half_width=half_width,
                                                  blocks=blocks)
        steps.append({"test": "odd harmonics at twice the period", "period_h": 48 / f,
                      "p": _finite_or_none(p_down), **used})
        if not p_down < significance:  # not significant, or untestable
            break
        f, m, moved_down, p_moved = fit_half.frequency, 2 * m, True, p_down
    fit = fit_fourier_series(t, y, dy, f, m, search_half_width=half_width)
    n_max = _significant_maxima(fit)
    double_testable = f / 2 >= f_min * (1 - 1e-9) and not (p_down is not None
                                                            and np.isnan(p_down))
    evidence = {"tests": steps, "maxima_per_cycle_at_shortest_repeat": n_max,
                "significance": significance, "site_nights": int(np.unique(blocks).size),
                "zero_point_level": _ZERO_POINT_LEVEL}
    if moved_down or n_max >= 2:
        choice = "double-peaked"
        reason = (f"the lightcurve at {24 / f:.4f} h shows {n_max} maxima per cycle"
                  if not moved_down else
                  f"the two halves of the {24 / f:.4f} h lightcurve differ (odd harmonics "
                  f"significant, p = {p_moved:.2g})")
        adopted_f, adopted_m = f, m
    elif prefer_double and double_testable:
        choice = "double-peaked (assumed)"
        p_txt = f"p = {p_down:.2g}" if p_down is not None else "untested"
        reason = (f"one maximum per {24 / f:.4f} h cycle and the two halves of "
                  f"{48 / f:.4f} h do not differ significantly ({p_txt}); the double-peaked "
                  f"period is adopted because an elongated body shows two maxima per rotation "
                  f"(common practice)")
        adopted_f, adopted_m = f / 2, 2 * m
    else:
        choice = "single-peaked"
        if not prefer_double:
            why = "single-peaked interpretation requested"
        elif f / 2 < f_min * (1 - 1e-9):
            why = "twice that period lies outside the search range"
        else:
            why = ("the sampling cannot constrain the curve at twice that period (it is "
                   "commensurate with the nightly gaps)")
        reason = f"one maximum per {24 / f:.4f} h cycle; {why}"
        adopted_f, adopted_m = f, m
    evidence.update({"choice": choice, "reason": reason,
                     "single_peaked_period_h": 24 / f if n_max < 2 else 12 / f})
    return adopted_f, adopted_m, evidence


def _candidates(periodograms, adopted, tolerance, window, n_candidates, distance):
    rows = []
    for name, pg in periodograms.items():
        for rank, i in enumerate(periodogram_peaks(pg.score, n_peaks=n_candidates,
                                                   distance=distance), start=1):
            f = float(pg.frequency[i])
            rows.append((name, rank, f, 24.0 / f, float(pg.statistic[i]), float(pg.fap[i]),
                         describe_relation(f, adopted, tolerance=tolerance, window=window)))
    names = ["method", "rank", "frequency", "period", "statistic", "fap", "relation"]
    cols = list(zip(*rows)) if rows else [[] for _ in names]
    table = QTable(dict(zip(names, [np.array(c) for c in cols])))
    table["frequency"] = np.asarray(table["frequency"], dtype=float) / u.day
    table["period"] = np.asarray(table["period"], dtype=float) * u.h
    return table


def _aliases(t, y, dy, fit, window, f_min, f_max, half_width):
    rows = []
    scale2 = fit.error_scale**2
    for row in window:
        fw = float(row["frequency"].to_value(1 / u.day))
        for sign, text in ((1, "+"), (-1, "-")):
            f = fit.frequency + sign * fw
            if not f_min <= f <= f_max:
                continue
            alt = fit_fourier_series(t, y, dy, f, fit.order, search_half_width=half_width)
            rows.append((f"adopted {text} {row['name']}", alt.frequency, 24 / alt.frequency,
                         (alt.chi2 - fit.chi2) / scale2))
    rows.sort(key=lambda r: r[3])
    names = ["name", "frequency", "period", "delta_chi2"]
    cols = list(zip(*rows)) if rows else [[] for _ in names]
    table = QTable(dict(zip(names, [np.array(c) for c in cols])))
    table["name"] = np.asarray(table["name"], dtype=str)
    table["frequency"] = np.asarray(table["frequency"], dtype=float) / u.day
    table["period"] = np.asarray(table["period"], dtype=float) * u.h
    table["delta_chi2"] = np.asarray(table["delta_chi2"], dtype=float)
    return table


def search_rotation(reduced, *, min_period=2 * u.h, max_period=60 * u.h,
                    methods=("lomb-scargle", "fourier", "pdm"), n_bootstrap=100, rng=None,
                    oversample=10, max_order=4, order_criterion="bic", ls_nterms=2,
                    pdm_bins=10, pdm_covers=2, prefer_double_peaked=True, use_points="auto",
                    coma_fraction=None, amplitude_phase_slope=0.015 / u.deg,
                    significance=1e-3, alias_delta_chi2=10.0, n_candidates=5, min_points=12):
    """Search a reduced lightcurve for the nucleus rotation period.

    Parameters
    ----------
    reduced : `~photpipe.rotation.lightcurve.ReducedLightcurve`
        The lightcurve (see :func:`~photpipe.rotation.lightcurve.reduce_lightcurve`).
    min_period, max_period : `~astropy.units.Quantity` ['time'], optional
        Range of rotation periods searched.
    methods : sequence of str, optional
        Periodograms to compute, keys of `~photpipe.rotation.methods.METHODS`.
    n_bootstrap : int, optional
        Bootstrap resamples for the period and amplitude errors and the 95 % period interval
        (0 to skip); whole site-nights are drawn when there are at least five, single points
        otherwise. The interval is a bootstrap percentile interval from 40 resamples of
        site-nights on.
    rng : `numpy.random.Generator`, optional
        Random generator for the bootstrap and the amplitude error draws.
    oversample : int, optional
        Grid points per peak width ``1/T``.
    max_order : int, optional
        Highest Fourier order tried.
    order_criterion : {"bic", "f-test"}, optional
        How the Fourier order is chosen.
    ls_nterms : int, optional
        Harmonics of the Lomb-Scargle periodogram.
    pdm_bins, pdm_covers : int, optional
        PDM bin structure.
    prefer_double_peaked : bool, optional
        When the data cannot tell a single-peaked curve at P from two identical halves at 2P,
        adopt 2P (an elongated body gives two maxima per rotation).
    use_points : {"auto", "coma-free", "all"}, optional
        ``"auto"`` uses the coma-free (nucleus-fit) points when there are at least
        ``min_points`` of them, all points otherwise.
    coma_fraction : float, optional
        Fraction of the measured flux that is coma, for the dilution correction of a lightcurve
        that is not coma-free.
    amplitude_phase_slope : `~astropy.units.Quantity` ['1/angle'], optional
        Amplitude-phase slope of Zappalà et al. (1990).
    significance : float, optional
        p-value below which odd harmonics count as detected.
    alias_delta_chi2 : float, optional
        An alias closer than this in χ² (after error scaling) is flagged ``alias_ambiguous``.
    n_candidates : int, optional
        Peaks listed per method.
    min_points : int, optional
        Fewest points for which a period is searched.

    Returns
    -------
    result : RotationResult

    Raises
    ------
    TypeError
        If ``reduced`` is not a ReducedLightcurve.
    LightcurveError
        If the data cannot constrain any period in the range (too few points, baseline shorter
        than the shortest trial period, bad errors).

    Warns
    -----
    RotationWarning
        When the result needs care: one night only, the longest trial periods longer than the
        baseline, an alias not clearly rejected, a weak detection, methods that disagree.

    Notes
    -----
    The adopted period comes from the least-squares Fourier series (Harris et al. 1989, Icarus
    77, 171) fitted with its frequency; Lomb-Scargle (Zechmeister & Kürster 2009) and PDM
    (Stellingwerf 1978) are computed on the same grid as independent views. Single or double
    peak: the lightcurve at twice the period is fitted with twice the harmonics, and an F test
    on the odd harmonics says whether its two halves differ. When the site-nights' zero points
    differ (an F test at the 5 % level, a preliminary test of pooling, Bancroft 1944, Ann.
    Math. Stat. 15, 190, from memory), both curves of the test get a free zero point per
    site-night (as in the fit of Harris et al. 1989, from memory), so a nightly zero-point
    error cannot pass for odd harmonics and double the period
    (:func:`~photpipe.rotation.odd_harmonics.odd_harmonics_f_test`). The minimum axial ratio is
    ``a/b >= 10^(0.4 A(0))``, ``A(0) = A(α)/(1 + s α)`` (Zappalà et al. 1990, A&A 231, 548),
    after removing the coma dilution (:func:`~photpipe.rotation.shape.undilute_amplitude`).

    The period error is 1 σ: the larger of the least-squares covariance error (scaled by the
    reduced χ² when above 1) and the bootstrap spread. The bootstrap draws whole site-nights
    with replacement (block bootstrap, Künsch 1989, Ann. Stat. 17, 1217; Efron & Tibshirani
    1993, §8.6), because residuals that share a night (nightly zero-point errors, a model
    with too few harmonics) are correlated, which the covariance and a bootstrap of single
    points both ignore. The 95 % interval is a percentile interval of the resampled periods
    (Efron & Tibshirani 1993, ch. 13) when at least 40 resamples of whole site-nights
    converged, expanded for the few site-nights drawn
    (:func:`~photpipe.rotation.fit.expanded_percentile_interval`, Hesterberg 2015); otherwise
    (no bootstrap, or single points drawn) it is ``period ∓ 1.96 period_err``.
    ``period_interval_method`` says which.

    Examples
    --------
    >>> import numpy as np
    >>> from astropy import units as u
    >>> from photpipe.rotation import reduce_lightcurve, synthetic_lightcurve
    >>> table, truth = synthetic_lightcurve(period=6.2 * u.h, rng=np.random.default_rng(5))
    >>> result = search_rotation(reduce_lightcurve(table), min_period=3 * u.h,
    ...                          max_period=20 * u.h, n_bootstrap=20,
    ...                          rng=np.random.default_rng(5))
    >>> bool(abs(result.period - truth.period) < 3 * result.period_err)
    True
    """
    if not isinstance(reduced, ReducedLightcurve):
        msg = (f"search_rotation takes a ReducedLightcurve (see reduce_lightcurve), got "
               f"{type(reduced).__name__}")
        raise TypeError(msg)
    unknown = [m for m in methods if m not in METHODS]
    if unknown:
        msg = f"unknown method(s) {unknown}; choose from {sorted(METHODS)}"
        raise ValueError(msg)
    rng = np.random.default_rng() if rng is None else rng
    pmin_h = as_positive_value(min_period, u.h, "min_period")
    pmax_h = as_positive_value(max_period, u.h, "max_period")
    slope = as_value(amplitude_phase_slope, 1 / u.deg, "amplitude_phase_slope")
    flags = []

    lc = _choose_points(reduced, use_points, min_points, flags)
    _check_errors(lc)
    n = lc.n_points
    need = max(min_points, 2 * (2 * 2 + 2))
    if n < need:
        msg = (f"only {n} usable points: at least {need} are needed to fit a two-harmonic "
               f"lightcurve with its period and test it; these data can give a mean magnitude "
               f"and its scatter, but no rotation period")
        raise LightcurveError(msg)
    t = lc.epoch_mjd
    dy = lc.mag_err
    y = _remove_filter_offsets(lc, flags)
    baseline_h = float(np.ptp(t)) * 24
    nights = count_nights(t)
    if baseline_h < pmin_h:
        msg = (f"the points span {baseline_h:.2f} h, less than the shortest trial period "
               f"({pmin_h:g} h): no period in the range can be constrained; the data only show "
               f"the brightness change over {baseline_h:.2f} h (a lower bound on the amplitude)")
        raise LightcurveError(msg)
    if nights == 1:
        _warn(flags, "single_night",
              f"all {n} points come from one night ({baseline_h:.2f} h): periods longer than "
              f"that cannot be constrained, and the cycle count between nights cannot be "
              f"tested")
    if baseline_h < pmax_h:
        _warn(flags, "max_period_clipped",
              f"the baseline ({baseline_h:.2f} h) is shorter than the longest trial period "
              f"({pmax_h:g} h): the search stops at {baseline_h:.2f} h, as longer periods "
              f"cannot be constrained by these data")
        pmax_h = baseline_h
    if pmin_h >= pmax_h:
        msg = (f"the search range is empty once limited by the {baseline_h:.2f} h baseline "
               f"(min_period {pmin_h:g} h)")
        raise LightcurveError(msg)

    grid = frequency_grid(t, min_period=pmin_h * u.h, max_period=pmax_h * u.h,
                          oversample=oversample)
    options = {
        "lomb-scargle": {"nterms": ls_nterms},
        "fourier": {"max_order": max_order, "criterion": order_criterion},
        "pdm": {"n_bins": pdm_bins, "n_covers": pdm_covers},
    }
    if "lomb-scargle" in methods and "fourier" in methods:
        # both read the same multi-harmonic χ² over the grid: compute it once
        orders = max(ls_nterms, min(max_order, max(1, (n - 3) // 2 - 1)))
        shared = harmonic_chi2(t, y, dy, grid.f0, grid.df, grid.n, max_order=orders)
        options["lomb-scargle"]["harmonics"] = options["fourier"]["harmonics"] = shared
    periodograms = {name: METHODS[name](t, y, dy, grid, **options.get(name, {}))
                    for name in methods}

    if "fourier" in periodograms:
        start = periodograms["fourier"]
        order = start.info["order"]
    else:
        start = periodograms[methods[0]]
        order = max(2, ls_nterms)
    half_width = 1.0 / (2 * grid.baseline_d)
    blocks = night_blocks(t, lc.site, gap=_NIGHT_GAP_D)
    f_adopt, m_adopt, shape = _decide_shape(
        t, y, dy, start.best_frequency, order, grid.f0, grid.f_max, significance=significance,
        prefer_double=prefer_double_peaked, half_width=half_width, blocks=blocks)
    if shape["choice"] == "double-peaked (assumed)":
        flags.append("double_peaked_assumed")
    fit = fit_fourier_series(t, y, dy, f_adopt, m_adopt, search_half_width=half_width / 4)

    period_h = 24.0 / fit.frequency
    err_cov_h = 24.0 * fit.frequency_err / fit.frequency**2
    amp = fit.amplitude
    coef_draws = rng.multivariate_normal(fit.coefficients, fit.covariance[:-1, :-1], size=400)
    phase = np.arange(1000) / 1000
    curves = np.stack([fourier_series(phase, 1.0, c) for c in coef_draws])
    amp_err_cov = float(np.std(np.ptp(curves, axis=1)))
    n_blocks = int(blocks.max()) + 1
    resampled = "none"
    err_boot_h, amp_err_boot = np.nan, np.nan
    p_boot = np.empty(0)
    if n_bootstrap > 0:
        by_night = n_blocks >= _MIN_BOOTSTRAP_BLOCKS
        resampled = "site-nights" if by_night else "points"
        if not by_night:
            flags.append("bootstrap_by_point")
        f_boot, a_boot = bootstrap_fourier_fit(t, y, dy, fit, n_bootstrap=n_bootstrap, rng=rng,
                                               blocks=blocks if by_night else None)
        good = np.isfinite(f_boot)
        p_boot = 24.0 / f_boot[good]
        if good.sum() >= 2:
            err_boot_h = float(np.std(p_boot, ddof=1))
            amp_err_boot = float(np.std(a_boot[good], ddof=1))
    period_err_h = float(np.nanmax([err_cov_h, err_boot_h]))
    if resampled == "site-nights" and p_boot.size >= _MIN_PERCENTILE_RESAMPLES:
        # percentiles follow a skewed or heavy-tailed spread of the resampled periods that
        # ±1.96σ would make symmetric; expanded for the few site-nights drawn
        interval_h = expanded_percentile_interval(p_boot, n_blocks)
        interval_method = INTERVAL_METHODS["bootstrap"]
    else:
        interval_h = period_h + _Z95 * period_err_h * np.array([-1.0, 1.0])
        interval_method = INTERVAL_METHODS["normal"]
    amp_err = float(np.nanmax([amp_err_cov, amp_err_boot]))

    mean_phase = float(np.mean(lc.phase_deg))
    model_cycle = fourier_series(phase, 1.0, fit.coefficients)
    if lc.coma_free:
        amp_nucleus = amp
    elif coma_fraction is not None:
        try:
            amp_nucleus = undilute_amplitude(model_cycle, coma_fraction)
        except ValueError as exc:
            msg = f"coma dilution correction: {exc}"
            raise LightcurveError(msg) from exc
        flags.append("coma_dilution_corrected")
    else:
        amp_nucleus = np.nan
        _warn(flags, "coma_dilution_unknown",
              "the lightcurve holds coma light and no coma fraction was given: the observed "
              "amplitude is only a lower bound on the nucleus amplitude, and a/b is not bounded")
    amp0 = amplitude_at_zero_phase(amp_nucleus, mean_phase, slope_per_deg=slope)
    ratio = minimum_axial_ratio(amp0) if np.isfinite(amp0) else np.nan

    power = 1.0 - fit.chi2 / float(np.sum((y - np.average(y, weights=1 / dy**2)) ** 2 / dy**2))
    fap = float(fap_from_power(power, n, 2 * fit.order, grid.n_independent))
    if fap > 0.01:
        _warn(flags, "weak_detection",
              f"the adopted period's false-alarm probability is {fap:.2g}: the variation may "
              f"be noise")

    window = window_peaks(t, sites=lc.site, f_max=min(3.5, grid.f_max - grid.f0 + 0.5))
    aliases = _aliases(t, y, dy, fit, window, grid.f0, grid.f_max, half_width)
    if len(aliases) and float(aliases["delta_chi2"][0]) < alias_delta_chi2:
        _warn(flags, "alias_ambiguous",
              f"the alias '{aliases['name'][0]}' ({aliases['period'][0].to_value(u.h):.4f} h) "
              f"fits nearly as well (Δχ² = {float(aliases['delta_chi2'][0]):.1f}): more nights "
              f"or another site are needed to decide")

    tolerance = max(3 * fit.frequency_err, 0.5 / grid.baseline_d)
    candidates = _candidates(periodograms, fit.frequency, tolerance, window, n_candidates,
                             distance=max(1, oversample // 2))
    summary = {}
    for name, pg in periodograms.items():
        f_best = pg.best_frequency
        summary[name] = {"period_h": 24.0 / f_best,
                         "relation": describe_relation(f_best, fit.frequency,
                                                       tolerance=tolerance, window=window),
                         "fap": float(pg.fap[pg.best_index]), **pg.info}
    if any(s["relation"] == "unrelated" for s in summary.values()):
        _warn(flags, "methods_disagree",
              "the methods' best periods are not the same, a harmonic or an alias of each "
              "other: see the candidates table")

    settings = {"min_period_h": pmin_h, "max_period_h": pmax_h, "oversample": oversample,
                "n_frequencies": grid.n, "baseline_h": baseline_h, "n_nights": nights,
                "n_bootstrap": n_bootstrap, "bootstrap_min_blocks": _MIN_BOOTSTRAP_BLOCKS,
                "phase_law": lc.phase_law,
                "amplitude_phase_slope_per_deg": slope, "coma_fraction": coma_fraction,
                **{f"phase_{k}": v for k, v in lc.phase_parameters.items()}}
    return RotationResult(
        period=period_h * u.h, period_err=period_err_h * u.h,
        period_err_covariance=err_cov_h * u.h, period_err_bootstrap=err_boot_h * u.h,
        period_interval_95=interval_h * u.h, period_interval_method=interval_method,
        bootstrap_resampled=resampled,
        bootstrap_blocks=n_blocks,
        amplitude=amp * u.mag, amplitude_err=amp_err * u.mag,
        amplitude_nucleus=amp_nucleus * u.mag, amplitude_zero_phase=amp0 * u.mag,
        axial_ratio_min=ratio, n_points=n, method="fourier", fit=fit,
        false_alarm_probability=fap, periodograms=periodograms, candidates=candidates,
        window=window, aliases=aliases, shape=shape, methods_summary=summary,
        flags=tuple(dict.fromkeys(flags)), lightcurve=lc, magnitudes=y,
        mean_phase_deg=mean_phase, settings=settings)
