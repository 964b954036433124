"""The rotation-period search: three periodograms side by side, one adopted period with errors.

Steps: choose the points (upper limits and bad points set aside and counted), check what the
sampling can constrain, compute the periodograms of every method on one frequency grid with each
Fourier order's peak refined, decide between single- and double-peaked interpretations (curves
of two or three identical parts, then an F test on the odd harmonics with a free zero point per
site-night), fit the adopted Fourier series with its frequency, estimate errors and the 95 %
interval from the covariance and a bootstrap of whole nights, weigh aliases, integer relatives
and the other methods' periods by Δχ², say what the data allow, and turn the amplitude into a
lower bound on the axial ratio.

Method and sources
------------------
Each order's best grid frequency is refined before the orders are compared
(:func:`~photpipe.rotation.methods.refine_order_peaks`), and a curve made of two or three
identical parts moves to twice or three times the frequency before the double-peak test
(:func:`~photpipe.rotation.shape_choice.decide_shape`). The result's ``status``,
``allowed_periods`` and ``headline`` say whether the data allow one period, several, or
none (:func:`~photpipe.rotation.verdict.judge_period`).

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
"""

import warnings
from dataclasses import dataclass

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value, as_value
from photpipe.rotation._evidence import gather_evidence
from photpipe.rotation._period_errors import MIN_BOOTSTRAP_BLOCKS, period_errors
from photpipe.rotation._search_points import NIGHT_GAP_D, count_nights, prepare_points
from photpipe.rotation.errors import LightcurveError, RotationWarning
from photpipe.rotation.fit import fit_fourier_series, night_blocks
from photpipe.rotation.fourier_model import fourier_series
from photpipe.rotation.grid import frequency_grid
from photpipe.rotation.harmonic_sums import harmonic_chi2
from photpipe.rotation.lightcurve import ReducedLightcurve
from photpipe.rotation.methods import METHODS
from photpipe.rotation.periodogram import fap_from_power
from photpipe.rotation.result import ERROR_LEVEL, INTERVAL_METHODS, RotationResult
from photpipe.rotation.shape import (
    amplitude_at_zero_phase,
    minimum_axial_ratio,
    undilute_amplitude,
)
from photpipe.rotation.shape_choice import decide_shape
from photpipe.rotation.verdict import VerdictOptions, judge_period

__all__ = ["RotationResult", "search_rotation", "count_nights", "MethodOptions",
           "ERROR_LEVEL", "INTERVAL_METHODS"]


@dataclass(frozen=True)
class MethodOptions:
    """How the periodograms are computed.

    Attributes
    ----------
    methods : tuple of str
        Keys of `~photpipe.rotation.methods.METHODS`.
    oversample : int
        Grid points per peak width ``1/T``.
    max_order : int
        Highest Fourier order tried.
    order_criterion : str
        ``"bic"`` or ``"f-test"``.
    ls_nterms : int
        Harmonics of the Lomb-Scargle periodogram.
    pdm_bins, pdm_covers : int
        PDM bin structure.
    """

    methods: tuple = ("lomb-scargle", "fourier", "pdm")
    oversample: int = 10
    max_order: int = 4
    order_criterion: str = "bic"
    ls_nterms: int = 2
    pdm_bins: int = 10
    pdm_covers: int = 2


def _periodograms(points, grid, opt):
    """Every method's periodogram on the grid (the multi-harmonic χ² computed once)."""
    t, y, dy = points.t, points.y, points.dy
    options = {
        "lomb-scargle": {"nterms": opt.ls_nterms},
        "fourier": {"max_order": opt.max_order, "criterion": opt.order_criterion},
        "pdm": {"n_bins": opt.pdm_bins, "n_covers": opt.pdm_covers},
    }
    if "lomb-scargle" in opt.methods and "fourier" in opt.methods:
        # both read the same multi-harmonic χ² over the grid: compute it once
        n = t.size
        orders = max(opt.ls_nterms, min(opt.max_order, max(1, (n - 3) // 2 - 1)))
        shared = harmonic_chi2(t, y, dy, grid.f0, grid.df, grid.n, max_order=orders)
        options["lomb-scargle"]["harmonics"] = options["fourier"]["harmonics"] = shared
    return {name: METHODS[name](t, y, dy, grid, **options.get(name, {}))
            for name in opt.methods}


def _start(periodograms, opt):
    """Starting frequency and order: the Fourier series's refined best, else the first method."""
    if "fourier" in periodograms:
        start = periodograms["fourier"]
        return start.info.get("refined_frequency", start.best_frequency), start.info["order"]
    return periodograms[opt.methods[0]].best_frequency, max(2, opt.ls_nterms)


def _amplitudes(lc, fit, coma_fraction, slope, flags):
    """Nucleus amplitude (coma dilution removed), its 0° value and the least axial ratio."""
    model_cycle = fourier_series(np.arange(1000) / 1000, 1.0, fit.coefficients)
    if lc.coma_free:
        amp_nucleus = fit.amplitude
    elif coma_fraction is not None:
        try:
            amp_nucleus = undilute_amplitude(model_cycle, coma_fraction)
        except ValueError as exc:
            msg = f"coma dilution correction: {exc}"
            raise LightcurveError(msg) from exc
        flags.append("coma_dilution_corrected")
    else:
        amp_nucleus = np.nan
        flags.append("coma_dilution_unknown")
        _warn("the lightcurve holds coma light and no coma fraction was given: the observed "
              "amplitude is only a lower bound on the nucleus amplitude, and a/b is not bounded")
    amp0 = amplitude_at_zero_phase(amp_nucleus, float(np.mean(lc.phase_deg)),
                                   slope_per_deg=slope)
    ratio = minimum_axial_ratio(amp0) if np.isfinite(amp0) else np.nan
    return amp_nucleus, amp0, ratio


def _false_alarm(points, fit, grid, flags):
    y, dy = points.y, points.dy
    power = 1.0 - fit.chi2 / float(np.sum((y - np.average(y, weights=1 / dy**2)) ** 2 / dy**2))
    fap = float(fap_from_power(power, y.size, 2 * fit.order, grid.n_independent))
    if fap > 0.01:
        flags.append("weak_detection")
        _warn(f"the adopted period's false-alarm probability is {fap:.2g}: the variation may "
              f"be noise")
    return fap


def _warn(message):
    # _warn <- a step <- _search <- search_rotation <- the caller
    warnings.warn(message, RotationWarning, stacklevel=5)


def _settings(points, grid, lc, *, n_bootstrap, slope, coma_fraction, fap_limit,
              min_period_h, oversample):
    """The settings the search ran with, for ``rotation.json``."""
    return {"min_period_h": min_period_h, "max_period_h": points.max_period_h,
            "oversample": oversample, "n_frequencies": grid.n,
            "baseline_h": points.baseline_h, "n_nights": points.nights,
            "n_bootstrap": n_bootstrap, "bootstrap_min_blocks": MIN_BOOTSTRAP_BLOCKS,
            "phase_law": lc.phase_law, "amplitude_phase_slope_per_deg": slope,
            "coma_fraction": coma_fraction, "fap_limit": fap_limit,
            **{f"phase_{k}": v for k, v in lc.phase_parameters.items()}}


def _checked_inputs(reduced, methods, rng, min_period, max_period, amplitude_phase_slope):
    """Check the inputs at the edge; return the generator, the period range (h), the slope."""
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
    return rng, pmin_h, pmax_h, slope


def search_rotation(reduced, *, min_period=2 * u.h, max_period=60 * u.h,
                    methods=("lomb-scargle", "fourier", "pdm"), n_bootstrap=100, rng=None,
                    oversample=10, max_order=4, order_criterion="bic", ls_nterms=2,
                    pdm_bins=10, pdm_covers=2, prefer_double_peaked=True, use_points="auto",
                    coma_fraction=None, amplitude_phase_slope=0.015 / u.deg,
                    significance=1e-3, alias_delta_chi2=10.0, n_candidates=5, min_points=12,
                    fap_limit=0.01):
    """Search a reduced lightcurve for the nucleus rotation period.

    Parameters
    ----------
    reduced : `~photpipe.rotation.lightcurve.ReducedLightcurve`
        The lightcurve (see :func:`~photpipe.rotation.lightcurve.reduce_lightcurve`).
    min_period, max_period : `~astropy.units.Quantity` ['time'], optional
        Range of rotation periods searched.
    methods, oversample, max_order, order_criterion, ls_nterms, pdm_bins, pdm_covers : optional
        How the periodograms are computed: the fields of `MethodOptions`.
    n_bootstrap : int, optional
        Bootstrap resamples for the period and amplitude errors and the 95 % interval (0 to
        skip); whole site-nights from five on, single points otherwise.
    rng : `numpy.random.Generator`, optional
        Random generator for the bootstrap and the amplitude error draws.
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
        An alias closer than this in χ² (after error scaling) is flagged ``alias_ambiguous``;
        any rival period (alias, integer relative, another method's best) this close makes the
        result ``"ambiguous"`` (:func:`~photpipe.rotation.verdict.judge_period`).
    n_candidates : int, optional
        Peaks listed per method.
    min_points : int, optional
        Fewest points for which a period is searched.
    fap_limit : float, optional
        Above this false-alarm probability the status is ``"none"`` (no period).

    Returns
    -------
    result : RotationResult

    Raises
    ------
    TypeError
        If ``reduced`` is not a ReducedLightcurve.
    LightcurveError
        If the data cannot constrain any period in the range (too few detections, baseline
        shorter than the shortest trial period). Upper limits and points with bad errors are
        set aside and counted, never a reason to stop.

    Warns
    -----
    RotationWarning
        When the result needs care: one night only, the longest trial periods longer than the
        baseline, an alias not clearly rejected, a weak detection, methods that disagree.

    Notes
    -----
    The method and its sources are in the module docstring.

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
    rng, pmin_h, pmax_h, slope = _checked_inputs(reduced, methods, rng, min_period, max_period,
                                                 amplitude_phase_slope)
    opts = SearchOptions(
        min_period_h=pmin_h, max_period_h=pmax_h, slope_per_deg=slope,
        methods=MethodOptions(tuple(methods), oversample, max_order, order_criterion, ls_nterms,
                              pdm_bins, pdm_covers),
        n_bootstrap=n_bootstrap, prefer_double_peaked=prefer_double_peaked,
        use_points=use_points, coma_fraction=coma_fraction, significance=significance,
        alias_delta_chi2=alias_delta_chi2, n_candidates=n_candidates, min_points=min_points,
        fap_limit=fap_limit)
    return _search(reduced, opts, rng)


@dataclass(frozen=True)
class SearchOptions:
    """The keywords of `search_rotation`, checked, with the ranges in plain hours and 1/deg."""

    min_period_h: float
    max_period_h: float
    slope_per_deg: float
    methods: MethodOptions
    n_bootstrap: int
    prefer_double_peaked: bool
    use_points: str
    coma_fraction: object
    significance: float
    alias_delta_chi2: float
    n_candidates: int
    min_points: int
    fap_limit: float


def _search(reduced, opts, rng):
    """The search as a plan: points, periodograms, shape and fit, errors, evidence, verdict."""
    points = prepare_points(reduced, use_points=opts.use_points, min_points=opts.min_points,
                            min_period_h=opts.min_period_h, max_period_h=opts.max_period_h)
    flags = list(points.flags)
    grid = frequency_grid(points.t, min_period=opts.min_period_h * u.h,
                          max_period=points.max_period_h * u.h,
                          oversample=opts.methods.oversample)
    periodograms = _periodograms(points, grid, opts.methods)
    fit, shape, blocks = _adopted_fit(points, grid, periodograms, opts, flags)
    errors = period_errors(points.t, points.y, points.dy, fit, blocks,
                           n_bootstrap=opts.n_bootstrap, rng=rng)
    flags += errors.flags
    amplitudes = _amplitudes(points.lightcurve, fit, opts.coma_fraction, opts.slope_per_deg,
                             flags)
    fap = _false_alarm(points, fit, grid, flags)
    evidence = gather_evidence(points, fit, periodograms, grid,
                               alias_delta_chi2=opts.alias_delta_chi2,
                               n_candidates=opts.n_candidates,
                               oversample=opts.methods.oversample)
    flags += evidence.flags
    verdict = _verdict(points, grid, fit, fap, evidence, shape, errors, opts, flags)
    return _result(reduced, points, grid, fit, errors, amplitudes, fap, periodograms, evidence,
                   shape, verdict, flags, opts)


def _adopted_fit(points, grid, periodograms, opts, flags):
    """The Fourier fit at the adopted frequency and order, the shape decision, the nights."""
    t, y, dy = points.t, points.y, points.dy
    half_width = 1.0 / (2 * grid.baseline_d)
    blocks = night_blocks(t, points.lightcurve.site, gap=NIGHT_GAP_D)
    f_start, order = _start(periodograms, opts.methods)
    f_adopt, m_adopt, shape = decide_shape(
        t, y, dy, f_start, order, grid.f0, grid.f_max, significance=opts.significance,
        prefer_double=opts.prefer_double_peaked, half_width=half_width, blocks=blocks)
    if shape["choice"] == "double-peaked (assumed)":
        flags.append("double_peaked_assumed")
    fit = fit_fourier_series(t, y, dy, f_adopt, m_adopt, search_half_width=half_width / 4)
    return fit, shape, blocks


def _verdict(points, grid, fit, fap, evidence, shape, errors, opts, flags):
    """Whether the data give a period, with its flag and warning when they do not."""
    verdict = judge_period((points.t, points.y, points.dy), fit, fap=fap,
                           aliases=evidence.aliases, methods_summary=evidence.methods_summary,
                           shape=shape, f_range=(grid.f0, grid.f_max),
                           baseline_d=grid.baseline_d, nights=points.nights,
                           period_err_h=errors.period_err_h,
                           options=VerdictOptions(opts.alias_delta_chi2, opts.fap_limit),
                           window=evidence.window)
    if verdict.status != "period":
        flags.append(f"period_{verdict.status}")
        _warn(verdict.headline)
    return verdict


def _result(reduced, points, grid, fit, errors, amplitudes, fap, periodograms, evidence, shape,
            verdict, flags, opts):
    """The `RotationResult` of the search."""
    lc = points.lightcurve
    amp_nucleus, amp0, ratio = amplitudes
    settings = _settings(points, grid, lc, n_bootstrap=opts.n_bootstrap,
                         slope=opts.slope_per_deg, coma_fraction=opts.coma_fraction,
                         fap_limit=opts.fap_limit, min_period_h=opts.min_period_h,
                         oversample=opts.methods.oversample)
    return RotationResult(
        period=24.0 / fit.frequency * u.h, period_err=errors.period_err_h * u.h,
        period_err_covariance=errors.err_covariance_h * u.h,
        period_err_bootstrap=errors.err_bootstrap_h * u.h,
        period_interval_95=errors.interval_h * u.h,
        period_interval_method=errors.interval_method, bootstrap_resampled=errors.resampled,
        bootstrap_blocks=errors.n_blocks, amplitude=fit.amplitude * u.mag,
        amplitude_err=errors.amplitude_err * u.mag, amplitude_nucleus=amp_nucleus * u.mag,
        amplitude_zero_phase=amp0 * u.mag, axial_ratio_min=ratio, n_points=lc.n_points,
        method="fourier", fit=fit, false_alarm_probability=fap, periodograms=periodograms,
        candidates=evidence.candidates, window=evidence.window, aliases=evidence.aliases,
        shape=shape, methods_summary=evidence.methods_summary,
        flags=tuple(dict.fromkeys(flags)), lightcurve=lc, magnitudes=points.y,
        mean_phase_deg=float(np.mean(lc.phase_deg)), settings=settings,
        status=verdict.status, allowed_periods=verdict.allowed_periods,
        headline=verdict.headline, verdict_reasons=verdict.reasons,
        n_upper_limits_set_aside=points.n_upper_limits, set_aside=reduced.set_aside_counts)
