"""What the data allow: one period, several (ambiguous), or none, said in one headline.

After the search has adopted a period, its rivals are weighed on the same data with the same
number of harmonics as the adopted curve, and with one more: the window aliases of the
period and of its second harmonic (a double-peaked curve's strongest), the integer relatives
(1/3, 1/2, 2/3, 3/2, 2 and 3 times the period), and the best periods of the other methods.
Every rival within a Δχ² threshold, at any of those numbers of harmonics, is an allowed
period. The result is ``"ambiguous"`` when any rival is allowed, the
period sits at the edge of the searched range, one night cannot tell (fewer than two cycles, or
the double-peaked alternative untestable), or the sampling is sparse (fewer than four points per
fitted parameter, or over a third of the rotation unobserved), and ``"none"`` when the variation is
not significant.
"""

from dataclasses import dataclass

import numpy as np

from photpipe.rotation.fit import fit_fourier_series

__all__ = ["PeriodVerdict", "VerdictOptions", "judge_period", "RELATIVES"]

#: Frequency ratio -> name of the integer relatives of the adopted period that are weighed.
RELATIVES = {1 / 3: "3 times the period", 1 / 2: "twice the period",
             2 / 3: "3/2 of the period", 3 / 2: "2/3 of the period", 2.0: "half the period",
             3.0: "1/3 of the period"}


@dataclass(frozen=True)
class VerdictOptions:
    """Thresholds of the verdict.

    Attributes
    ----------
    delta_chi2 : float
        A rival closer than this in χ² (after scaling by the reduced χ²) is allowed. 10 is
        about a likelihood ratio of 150 (Δχ² = 2 Δln L; project choice).
    fap_limit : float
        Above this false-alarm probability there is no period (status ``"none"``).
    """

    delta_chi2: float = 10.0
    fap_limit: float = 0.01


@dataclass(frozen=True)
class PeriodVerdict:
    """Status, allowed periods, reasons and headline of a period search.

    Attributes
    ----------
    status : str
        ``"period"``, ``"ambiguous"`` or ``"none"``.
    allowed_periods : tuple of dict
        ``{period_h, delta_chi2, relation}``, the adopted period first.
    reasons : tuple of str
        Why the status is not ``"period"``.
    headline : str
        One line for the screen and the report.
    """

    status: str
    allowed_periods: tuple
    reasons: tuple
    headline: str


def weighing_orders(fit, n_points):
    """Numbers of harmonics the adopted period and its rivals are weighed at.

    The adopted number and one more, while there stay at least four points
    per fitted parameter (project choice, as `_coverage_reasons`).
    """
    return [m for m in range(fit.order, fit.order + 2)
            if m == fit.order or n_points >= _MIN_POINTS_PER_PARAMETER * (2 * m + 2)]


class _Weigher:
    """Rival periods weighed against the adopted one with as many harmonics as it, and one more.

    With the adopted number of harmonics alone, a curve with too few of them leaves a
    systematic misfit (the small 3rd and 4th harmonics of a double-peaked nucleus) that a
    wrong window alias can absorb better than the true period, which then loses by more than
    the threshold: a firm wrong period (recovery campaigns: true 7.94 h lost to 5.97 h by
    Δχ² 16.8 with 2 harmonics, by -0.7 with 3). So the adopted period and each rival are
    fitted with each number of harmonics of `weighing_orders`, and a rival's ``delta_chi2``
    is the least over them of ``(χ²_rival - χ²_adopted) / s²`` at the same number (equal
    numbers of parameters), ``s²`` the adopted fit's reduced χ² when above 1.
    """

    def __init__(self, data, fit, half_width):
        self.t, self.y, self.dy = data
        self.fit, self.half_width = fit, half_width
        self.scale2 = fit.error_scale**2
        self.adopted = {m: fit if m == fit.order else fit_fourier_series(
            self.t, self.y, self.dy, fit.frequency, m, search_half_width=half_width / 4)
            for m in weighing_orders(fit, self.t.size)}

    def _distinct(self, frequency, m):
        """True when no harmonic 2..m of ``frequency`` falls on a harmonic of the adopted curve.

        A rival whose k-th harmonic is one of the adopted curve's (an integer relative such
        as 3/2 of the period, or an alias that lands on one) holds that curve among its own
        with k harmonics, and so fits at least as well by construction: it is weighed only
        with fewer.
        """
        f0 = self.fit.frequency
        for k in range(2, m + 1):
            j = round(k * frequency / f0)
            if 1 <= j <= self.fit.order and abs(k * frequency - j * f0) < k * self.half_width:
                return False
        return True

    def rival(self, frequency, relation):
        """The rival near ``frequency``: its period, its least Δχ² and how it relates."""
        fit = self.fit
        first = fit_fourier_series(self.t, self.y, self.dy, frequency, fit.order,
                                   search_half_width=self.half_width)
        delta = {fit.order: (first.chi2 - fit.chi2) / self.scale2}
        for m in list(self.adopted)[1:]:
            if not self._distinct(first.frequency, m):
                break
            alt = fit_fourier_series(self.t, self.y, self.dy, first.frequency, m,
                                     search_half_width=self.half_width / 4)
            delta[m] = (alt.chi2 - self.adopted[m].chi2) / self.scale2
        m_best = min(delta, key=delta.get)
        if abs(first.frequency - frequency) > self.half_width / 2:
            # the refit found its minimum away from where it started: say where it is
            relation = f"{fit.frequency / first.frequency:.3g} times the period (from {relation})"
        if m_best != fit.order:
            relation = f"{relation}, with {m_best} harmonics"
        return {"period_h": 24.0 / first.frequency, "delta_chi2": float(delta[m_best]),
                "relation": relation}


def _second_harmonic_aliases(fit, window, f_range):
    """Frequencies whose second harmonic is a window alias of the adopted second harmonic.

    A double-peaked lightcurve's power is mostly in its second harmonic, so the window
    copies it at ``2f ± w``: the rotation frequency ``f ± w/2``, which the aliases of ``f``
    itself (``f ± w``) do not reach.
    """
    out = []
    if window is None:
        return out
    for row in window:
        fw = float(row["frequency"].to_value("1/d"))
        for sign, text in ((1, "+"), (-1, "-")):
            f = fit.frequency + sign * fw / 2
            if f_range[0] * (1 - 1e-9) <= f <= f_range[1] * (1 + 1e-9):
                out.append((f, f"second harmonic {text} {row['name']}"))
    return out


def _rivals(data, fit, aliases, methods_summary, shape, f_range, half_width, window=None):
    """Every rival period, weighed at its best number of harmonics (`_Weigher`)."""
    f_min, f_max = f_range
    weigh = _Weigher(data, fit, half_width)
    # window aliases: weighed again here (their Δχ² in ``aliases`` is at the adopted order)
    rivals = [weigh.rival(float(r["frequency_per_day"].to_value("1/d")), str(r["name"]))
              for r in aliases]
    rivals += [weigh.rival(f, name) for f, name in _second_harmonic_aliases(fit, window,
                                                                          f_range)]
    assumed = shape.get("choice") == "double-peaked (assumed)"
    for ratio, name in RELATIVES.items():
        f = ratio * fit.frequency
        if not f_min * (1 - 1e-9) <= f <= f_max * (1 + 1e-9) or (assumed and ratio == 2.0):
            continue  # P/2 of an assumed double-peaked curve fits by construction: stated
        rivals.append(weigh.rival(f, name))
    for name, m in methods_summary.items():
        if m["relation"] == "unrelated":
            rivals.append(weigh.rival(24.0 / m["period_h"], f"best of {name}"))
    if assumed:
        # whatever names it (an alias can land on it), half the period of an assumed
        # double-peaked curve fits by construction
        half_h = 12.0 / fit.frequency
        tol = max(half_width / (2 * fit.frequency), 1e-3)  # one peak half-width at 2f
        rivals = [r for r in rivals if abs(r["period_h"] / half_h - 1) > tol]
    return rivals


# Fewest points per fitted parameter of the adopted curve, and the largest gap in rotational
# phase it may leave (project choices: below these a curve with its period free can be fitted
# to noise or to an alias and still look significant).
_MIN_POINTS_PER_PARAMETER = 4
_MAX_PHASE_GAP = 0.35


def _coverage_reasons(t, fit):
    reasons = []
    n_par = 2 * fit.order + 2
    if t.size < _MIN_POINTS_PER_PARAMETER * n_par:
        reasons.append(f"{t.size} points for a curve of {n_par} parameters (sparse sampling)")
    phase = np.sort(fit.phase(t))
    gap = float(np.max(np.diff(np.concatenate([phase, [phase[0] + 1.0]]))))
    if gap > _MAX_PHASE_GAP:
        reasons.append(f"the points leave {gap:.0%} of the rotation unobserved")
    return reasons


def _sampling_reasons(fit, shape, f_range, baseline_d, nights):
    """Reasons the sampling leaves the period open, whatever the rivals' χ²."""
    reasons = []
    f_min, f_max = f_range
    edge = 0.5 / baseline_d
    if fit.frequency - f_min < edge or f_max - fit.frequency < edge:
        reasons.append("the period sits at the edge of the searched range")
    period_d = 1.0 / fit.frequency
    if nights == 1 and baseline_d < 2 * period_d:
        reasons.append(f"one night covers {baseline_d / period_d:.1f} cycles of the period, "
                       f"fewer than two")
    untestable = shape.get("choice") == "single-peaked" and "requested" not in shape.get(
        "reason", "")
    if untestable:
        reasons.append("the double-peaked period (twice the adopted one) cannot be tested: "
                       + shape.get("reason", "").split("; ", 1)[-1])
    return reasons


def judge_period(data, fit, *, fap, aliases, methods_summary, shape, f_range, baseline_d,
                 nights, period_err_h, options=VerdictOptions(), window=None):
    """Say what the data allow about the period.

    Parameters
    ----------
    data : tuple of ndarray
        ``(t, y, dy)``: epochs (days), magnitudes and errors searched.
    fit : `~photpipe.rotation.fit.FourierFit`
        The adopted fit.
    fap : float
        False-alarm probability of the adopted fit.
    aliases : `~astropy.table.QTable`
        Window aliases with their Δχ² (columns ``name, period, delta_chi2``).
    methods_summary : dict
        Method -> ``{period_h, relation, ...}``.
    shape : dict
        The single/double-peak evidence (``choice``, ``reason``).
    f_range : (float, float)
        Searched frequency range (1/day).
    baseline_d : float
        Time span of the points (days).
    nights : int
        Number of nights.
    period_err_h : float
        1-σ error of the adopted period (hours).
    options : VerdictOptions, optional
    window : `~astropy.table.QTable`, optional
        Named peaks of the spectral window (`~photpipe.rotation.aliases.window_peaks`): the
        aliases of the second harmonic (``f ± w/2``) are weighed too.

    Returns
    -------
    PeriodVerdict

    Notes
    -----
    Rivals are fitted with the adopted number of harmonics and one more
    (`weighing_orders`), the adopted period too, and Δχ² compares the two at the same number
    (models with the same number of parameters); the least is kept, scaled by the adopted
    fit's reduced χ² when above 1. More harmonics are not tried for a rival whose harmonics
    fall on the adopted curve's (`_Weigher._distinct`).
    Twice the period is always a rival of a single-peaked curve; half the period is not
    weighed against an assumed double-peaked one (it fits equally by construction, and the
    assumption is stated in ``shape``).

    Examples
    --------
    >>> import numpy as np
    >>> from astropy import units as u
    >>> from astropy.table import QTable
    >>> from photpipe.rotation.fit import fit_fourier_series
    >>> rng = np.random.default_rng(1)
    >>> t = np.sort(rng.uniform(0, 8, 300))
    >>> y = 0.2 * np.cos(2 * np.pi * 3.1 * t) + 0.1 * np.cos(4 * np.pi * 3.1 * t)
    >>> dy = np.full(300, 0.02)
    >>> fit = fit_fourier_series(t, y + rng.normal(0, 0.02, 300), dy, 3.1, 2)
    >>> empty = QTable({"name": np.array([], dtype=str), "period": [] * u.h,
    ...                 "delta_chi2": np.array([])})
    >>> v = judge_period((t, y, dy), fit, fap=1e-9, aliases=empty, methods_summary={},
    ...                  shape={"choice": "double-peaked"}, f_range=(1.0, 10.0),
    ...                  baseline_d=8.0, nights=8, period_err_h=0.001)
    >>> v.status
    'period'
    """
    adopted = {"period_h": 24.0 / fit.frequency, "delta_chi2": 0.0, "relation": "adopted"}
    half_width = 1.0 / (2 * baseline_d)
    rivals = _rivals(data, fit, aliases, methods_summary, shape, f_range, half_width, window)
    allowed = [r for r in rivals if r["delta_chi2"] < options.delta_chi2]
    reasons = _coverage_reasons(data[0], fit)
    reasons += _sampling_reasons(fit, shape, f_range, baseline_d, nights)
    if shape.get("choice") == "single-peaked" and reasons and reasons[-1].startswith("the doub"):
        # the curve at 2P with twice the harmonics holds the one at P: Δχ² <= 0, so 0 bounds it
        allowed.append({"period_h": 48.0 / fit.frequency, "delta_chi2": 0.0,
                        "relation": "twice the period (double-peaked, untested; fits at least "
                                    "as well by construction)"})
    if allowed:
        reasons.insert(0, f"{len(allowed)} other period(s) fit within Δχ² "
                          f"{options.delta_chi2:g}")
    allowed = _unique(sorted(allowed, key=lambda r: r["delta_chi2"]), adopted)
    if not fap <= options.fap_limit:
        reasons.insert(0, f"the false-alarm probability {fap:.2g} exceeds "
                          f"{options.fap_limit:g}: the variation may be noise")
        return PeriodVerdict("none", (adopted,), tuple(reasons),
                             f"no rotation period: {reasons[0]}")
    if not reasons:
        return PeriodVerdict("period", (adopted,), (),
                             f"rotation period {adopted['period_h']:.4f} ± {period_err_h:.4f} h "
                             f"(1σ, {shape.get('choice', '')})")
    listed = ", ".join(f"{r['period_h']:.3f} h" for r in allowed[:4])
    headline = (f"rotation period AMBIGUOUS: {listed} allowed ({reasons[0]}"
                + (f"; {reasons[1]}" if len(reasons) > 1 else "")
                + "); no single period is claimed")
    return PeriodVerdict("ambiguous", tuple(allowed), tuple(reasons), headline)


def _unique(rivals, adopted):
    """The adopted period first, then rivals that are not the same period again."""
    out = [adopted]
    for r in rivals:
        if all(abs(r["period_h"] / o["period_h"] - 1) > 1e-3 for o in out):
            out.append(r)
    return out



