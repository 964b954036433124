"""The result of a rotation-period search and its ``rotation.json`` form."""

from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe.rotation.lightcurve import ReducedLightcurve

__all__ = ["RotationResult", "ERROR_LEVEL", "INTERVAL_METHODS", "STATUSES"]

#: Meaning of ``period_err`` and ``amplitude_err`` as written to ``rotation.json``.
ERROR_LEVEL = "1 sigma (68.3 % for Gaussian errors)"
#: How ``period_interval_95`` is formed: from the night-block bootstrap when it ran with enough
#: resamples, from the 1-σ error otherwise.
INTERVAL_METHODS = {
    "bootstrap": "expanded percentile interval of the site-night bootstrap periods",
    "normal": "period -/+ 1.96 period_err (normal)",
}
#: Values of ``status`` and their meaning.
STATUSES = {
    "period": "one period the data support",
    "ambiguous": "several periods fit about as well, or the data cannot tell them apart",
    "none": "no significant variation: no period",
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
    status : str
        ``"period"`` (one period the data support), ``"ambiguous"`` (several periods fit about
        as well, or the data cannot tell: see ``allowed_periods``) or ``"none"`` (no
        significant variation).
    allowed_periods : tuple of dict
        ``{period_h, delta_chi2, relation}`` of every period the data allow, the adopted one
        first (Δχ² = 0, scaled by the fit's reduced χ²).
    headline : str
        One line saying what the data allow, for the screen and the report.
    verdict_reasons : tuple of str
        Why the result is ambiguous or none (empty for a firm period).
    n_upper_limits_set_aside : int
        Points that are nucleus upper limits, left out of the search.
    set_aside : dict
        Reason -> number of lightcurve rows set aside before the search (bad errors, ...).
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
    status: str = "period"
    allowed_periods: tuple = ()
    headline: str = ""
    verdict_reasons: tuple = ()
    n_upper_limits_set_aside: int = 0
    set_aside: dict = field(default_factory=dict)

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
            "status": self.status,
            "headline": self.headline,
            "allowed_periods": [dict(p) for p in self.allowed_periods],
            "verdict_reasons": list(self.verdict_reasons),
            "n_upper_limits_set_aside": int(self.n_upper_limits_set_aside),
            "set_aside": dict(self.set_aside),
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
            "aliases": [{"name": str(r["name"]), "period_h": float(r["period_h"].to_value(u.h)),
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
        lead = ("rotation period " if self.status == "period"
                else "best-fitting period (not a result) ")
        lines = [
            self.headline,
            f"{lead} {d['period_h']:.4f} ± {d['period_err_h']:.4f} h (1σ; 95 % "
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
        for p in d["allowed_periods"][1:]:
            dchi = "untested" if p["delta_chi2"] is None else f"Δχ² = {p['delta_chi2']:.1f}"
            lines.append(f"also allowed {p['period_h']:.4f} h ({p['relation']}, {dchi})")
        if self.n_upper_limits_set_aside or self.set_aside:
            parts = [f"{self.n_upper_limits_set_aside} upper limits"] + [
                f"{n} with {why}" for why, n in self.set_aside.items()]
            lines.append("points set aside: " + "; ".join(parts))
        if d["flags"]:
            lines.append("flags: " + ", ".join(d["flags"]))
        return "\n".join(lines)
