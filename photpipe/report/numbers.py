"""Numbers as an observer reads them: rounded to their errors, ranges, human labels for keys.

The rounding rule is common practice in physics writing: the error keeps two significant
digits and the value is rounded to the same decimal place (e.g. the Particle Data Group's
convention, Tanabashi et al. 2018, Phys. Rev. D 98, 030001, "Introduction", keeps one to two).
"""

import math

import numpy as np

__all__ = ["decimals_for", "with_error", "number", "value_range", "key_label", "KEY_LABELS"]

#: Result-file keys (rotation.json, size.json, activity.json) -> (human label, unit text).
KEY_LABELS = {
    "period_h": ("rotation period", "h"),
    "period_err_h": ("period error (1σ)", "h"),
    "amplitude_mag": ("lightcurve amplitude", "mag"),
    "amplitude_err_mag": ("amplitude error", "mag"),
    "axial_ratio_min": ("smallest axial ratio a/b", ""),
    "n_points": ("lightcurve points", ""),
    "method": ("method", ""),
    "status": ("status", ""),
    "H_mag": ("absolute magnitude H", "mag"),
    "H_err_mag": ("error of H", "mag"),
    "band": ("band", ""),
    "albedo": ("assumed geometric albedo", ""),
    "radius_km": ("effective radius", "km"),
    "radius_lo_km": ("radius, low end", "km"),
    "radius_hi_km": ("radius, high end", "km"),
    "radius_upper_limit_km": ("radius upper limit", "km"),
    "mass_kg_lo": ("mass, low end", "kg"),
    "mass_kg_hi": ("mass, high end", "kg"),
    "mass_bound_kg": ("mass bound from momentum balance", "kg"),
    "active_fraction": ("active fraction of the surface", ""),
    "k": ("power-law index k", ""),
    "k_err": ("error of k", ""),
    "log10_afrho_1au_cm": ("log10 Afρ at r_h = 1 au (cm)", ""),
    "scatter_dex": ("scatter about the trend", "dex"),
    "chi2": ("χ²", ""),
    "dof": ("degrees of freedom", ""),
    "n_nights": ("nights", ""),
    "n_frames": ("frames", ""),
    "r_h_min": ("smallest r_h", "au"),
    "r_h_max": ("largest r_h", "au"),
    "time_first": ("first night (UTC)", ""),
    "time_last": ("last night (UTC)", ""),
    "flags": ("flags", ""),
    "branch": ("branch", ""),
    "onset_after": ("onset after (UTC)", ""),
    "onset_before": ("onset before (UTC)", ""),
    "r_h": ("r_h", "au"),
    "delta_mag": ("brightening Δm", "mag"),
    "delta_mag_err": ("error of Δm", "mag"),
    "significance": ("significance", "σ"),
    "jump_significance": ("rise from the night before", "σ"),
    "false_alarm": ("false-alarm chance", ""),
    "peak_delta_mag": ("peak Δm", "mag"),
}


def key_label(key):
    """Human label with unit for a result key (the schema's label for a column name).

    Examples
    --------
    >>> key_label("period_h")
    'rotation period (h)'
    >>> key_label("r_h_au")
    'heliocentric distance r_h (au)'
    """
    if key in KEY_LABELS:
        label, unit = KEY_LABELS[key]
        return f"{label} ({unit})" if unit else label
    from photpipe.campaign._schema import column_label

    return column_label(key)


def decimals_for(error, *, digits=2):
    """Decimal places that keep ``digits`` significant digits of ``error`` (may be negative).

    Examples
    --------
    >>> decimals_for(0.0313), decimals_for(3.4), decimals_for(250.0)
    (3, 1, -1)
    """
    error = abs(float(error))
    if not math.isfinite(error) or error == 0:
        return None
    return digits - 1 - int(math.floor(math.log10(error)))


def _fixed(value, decimals):
    if decimals is None:
        return number(value)
    if decimals <= 0:
        return f"{round(value, decimals):.0f}"
    return f"{value:.{decimals}f}"


def with_error(value, error, unit="", *, digits=2):
    """``value ± error unit``, both rounded to the error's ``digits`` significant digits.

    Examples
    --------
    >>> with_error(2.7765701873, 0.031276729, "h")
    '2.777 ± 0.031 h'
    >>> with_error(1234.5678, 56.0, "cm")
    '1235 ± 56 cm'
    >>> with_error(16.4, float("nan"), "mag")
    '16.4 mag'
    """
    unit = f" {unit}" if unit else ""
    if value is None or not math.isfinite(float(value)):
        return "—"
    dec = decimals_for(error, digits=digits) if error is not None else None
    if dec is None:
        return f"{number(value)}{unit}"
    dec_shown = max(dec, 0)
    return f"{_fixed(value, dec)} ± {_fixed(float(abs(error)), dec_shown if dec > 0 else dec)}" \
           f"{unit}"


def number(value, *, sig=3):
    """A number with ``sig`` significant digits, in plain notation where that stays short.

    Examples
    --------
    >>> number(3.823134282234735), number(7.022e13), number(12), number(0.0048)
    ('3.82', '7.02e+13', '12', '0.0048')
    """
    if isinstance(value, (int, np.integer)) and not isinstance(value, bool):
        return str(int(value))
    v = float(value)
    if not math.isfinite(v):
        return "—"
    if v == 0:
        return "0"
    if 1e-3 <= abs(v) < 1e5:
        text = f"{v:.{sig}g}"
        return text if "e" not in text else f"{v:.0f}"
    return f"{v:.{sig}g}"


def value_range(lo, hi, unit="", *, sig=2):
    """``lo–hi unit`` rounded to the digits that tell the ends apart.

    Examples
    --------
    >>> value_range(3.823134282234735, 5.46106160083403, "km")
    '3.8–5.5 km'
    >>> value_range(16.21, 16.38, "mag")
    '16.21–16.38 mag'
    """
    unit = f" {unit}" if unit else ""
    lo, hi = float(lo), float(hi)
    width = abs(hi - lo)
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return "—"
    scale = max(abs(lo), abs(hi))
    dec = decimals_for(width, digits=sig) if width > 0 else decimals_for(scale, digits=3)
    # never fewer digits than ``sig`` significant ones of the larger end
    dec = max(dec if dec is not None else 0, decimals_for(scale, digits=sig) or 0)
    return f"{_fixed(lo, dec)}–{_fixed(hi, dec)}{unit}"
