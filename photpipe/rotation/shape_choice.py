"""The single- versus double-peaked choice, and the test for a curve that repeats k times.

From the Fourier series's best frequency and order, the curve is first tested for identical
parts (two or three per cycle: the data then repeat at twice or three times the frequency),
then its two halves at twice the period are compared (odd harmonics), with a free zero point
per site-night when the nights' zero points differ. See `decide_shape`.
"""

import numpy as np

from photpipe.rotation.fit import fit_fourier_series
from photpipe.rotation.fourier_model import fourier_series, model_extrema
from photpipe.rotation.odd_harmonics import (
    odd_harmonics_f_test,
    repeat_f_test,
    zero_points_f_test,
)

__all__ = ["decide_shape", "ZERO_POINT_LEVEL"]

# Below this p-value the site-nights' zero points are taken to differ, and the odd-harmonic
# test fits one per site-night (project choice: the usual 5 % level of a preliminary test).
ZERO_POINT_LEVEL = 0.05
_ZERO_POINT_LEVEL = ZERO_POINT_LEVEL


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


def _repeat_p(t, y, dy, f, m, k, blocks):
    """p-value that the curve at ``f`` with ``m`` harmonics is ``k`` identical parts."""
    p_zero, _, _ = zero_points_f_test(t, y, dy, f, max(1, (m + 1) // 2), blocks)
    per_night = p_zero < _ZERO_POINT_LEVEL
    p, _, dof = repeat_f_test(t, y, dy, f, m, k, blocks=blocks if per_night else None)
    used = {"zero_points": "per site-night" if per_night else "one",
            "p_zero_points_equal": _finite_or_none(p_zero), "dof": [int(d) for d in dof]}
    return p, used


def _up_by_three(t, y, dy, f, m, f_max, *, significance, half_width, blocks, steps):
    """Move to ``3f`` when the curve at ``f`` is three identical parts.

    A symmetric double-peaked lightcurve (its two halves alike) at frequency F fitted at
    ``2F/3`` with three harmonics puts its dominant ``2F`` on the third harmonic; the first two
    are then noise and the curve is three identical parts. ``3f`` may lie up to twice the
    search range's top, since the double-peaked period at ``3f/2`` is then still inside it.
    """
    if m < 3 or 3 * f > 2 * f_max * (1 + 1e-9):
        return f, m
    p, used = _repeat_p(t, y, dy, f, m, 3, blocks)
    steps.append({"test": "three identical parts at the start", "period_h": 24 / f,
                  "p": _finite_or_none(p), **used})
    if not p >= significance:  # significant, or untestable: stay
        return f, m
    fit = fit_fourier_series(t, y, dy, 3 * f, max(1, m // 3), search_half_width=half_width)
    return fit.frequency, max(1, m // 3)


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


def decide_shape(t, y, dy, f_start, order, f_min, f_max, *, significance, prefer_double,
                  half_width, blocks):
    """Return (frequency, order, evidence) of the adopted single/double-peaked solution.

    Parameters
    ----------
    t, y, dy : ndarray, shape (n,)
        Epochs (days), magnitudes and errors.
    f_start : float
        Best frequency of the Fourier series (1/day), refined.
    order : int
        Its number of harmonics.
    f_min, f_max : float
        The searched frequency range (1/day).
    significance : float
        p-value below which odd harmonics (or parts that differ) count as detected.
    prefer_double : bool
        Adopt twice the period when the two halves cannot be told apart.
    half_width : float
        Half-width of the local frequency scan of each fit (1/day).
    blocks : ndarray of int
        Site-night of each point.

    Returns
    -------
    frequency : float
    order : int
    evidence : dict
        The tests made, the choice and its reason.
    """
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
    f, m = _up_by_three(t, y, dy, f, m, f_max, significance=significance,
                        half_width=half_width, blocks=blocks, steps=steps)
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
    elif f > f_max * (1 + 1e-9):
        choice = "double-peaked (assumed)"
        reason = (f"one maximum per {24 / f:.4f} h cycle, shorter than the search range; the "
                  f"double-peaked period {48 / f:.4f} h lies inside it and is adopted")
        adopted_f, adopted_m = f / 2, 2 * m
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

