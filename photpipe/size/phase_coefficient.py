"""The nucleus phase coefficient as an assumption with a range, or fitted where the data allow.

H is the magnitude at 0° phase, but nuclei are observed at 10-30°, so every H leans on the
linear phase coefficient β: an error of 0.01 mag/deg at 26° is 0.26 mag in H. The size stage
therefore never takes β as exact: it draws β across a sourced range in the Monte Carlo, or, when
the campaign spans enough phase angle, fits β from the nightly mean magnitudes and draws it
from that fit.
"""

from dataclasses import dataclass

import numpy as np
from scipy import stats

__all__ = ["PhaseCoefficient", "PHASE_COEFFICIENT_RANGE", "PHASE_COEFFICIENT_SOURCE",
           "phase_coefficient_assumed", "fit_phase_coefficient"]

#: Range of linear phase coefficients (mag/deg) drawn when β is not fitted.
PHASE_COEFFICIENT_RANGE = (0.02, 0.06)
#: Where the range comes from.
PHASE_COEFFICIENT_SOURCE = (
    "linear phase coefficients measured for Jupiter-family nuclei: median 0.046 mag/deg "
    "(Kokotanekova et al. 2017, MNRAS 471, 2974), mean 0.035 (Lamy et al. 2004, Comets II); "
    "the 0.02-0.06 span of the measured values is from memory")


@dataclass(frozen=True)
class PhaseCoefficient:
    """The phase coefficient behind H: the value used in the reduction and how it is drawn.

    Attributes
    ----------
    nominal : float
        β used to reduce the magnitudes (mag/deg).
    lo, hi : float
        Range drawn uniformly when not fitted (mag/deg).
    mean_phase_deg : float
        Mean phase angle of the points behind H: H moves by ``(β_nominal - β) α`` for another β.
    fitted : bool
        True when β was fitted from the campaign (then drawn as normal ``value ± error``).
    value, error : float
        The fitted β and its 1-σ error (NaN when not fitted).
    span_deg : float
        Phase-angle span of the campaign.
    source : str
        Where the range or the value comes from.
    """

    nominal: float
    lo: float
    hi: float
    mean_phase_deg: float
    fitted: bool = False
    value: float = float("nan")
    error: float = float("nan")
    span_deg: float = 0.0
    source: str = PHASE_COEFFICIENT_SOURCE

    def draw(self, rng, n):
        """Return ``n`` draws of β (mag/deg)."""
        if self.fitted:
            return rng.normal(self.value, self.error, n)
        if self.hi > self.lo:
            return rng.uniform(self.lo, self.hi, n)
        return np.full(n, self.lo)

    def h_offsets(self, rng, n):
        """Return ``n`` draws of the change of H for the drawn β (mag)."""
        return (self.nominal - self.draw(rng, n)) * self.mean_phase_deg

    def describe(self):
        """One line saying how β entered H."""
        if self.fitted:
            return (f"phase coefficient fitted from the campaign's nightly means over "
                    f"{self.span_deg:.1f}° of phase: {self.value:.4f} ± {self.error:.4f} mag/deg, "
                    f"drawn as normal in the Monte Carlo (magnitudes reduced with "
                    f"{self.nominal:g}, mean phase {self.mean_phase_deg:.1f}°)")
        return (f"phase coefficient drawn uniformly in {self.lo:g}-{self.hi:g} mag/deg at the "
                f"mean phase {self.mean_phase_deg:.1f}° (magnitudes reduced with "
                f"{self.nominal:g}; {self.source})")

    def to_dict(self):
        """Plain values for ``size.json``."""
        return {"phase_coefficient_nominal": self.nominal,
                "phase_coefficient_range": [self.lo, self.hi],
                "phase_coefficient_fitted": self.fitted,
                "phase_coefficient_fit": (None if not self.fitted else
                                          {"value": self.value, "error": self.error,
                                           "span_deg": self.span_deg}),
                "mean_phase_deg": self.mean_phase_deg}


def phase_coefficient_assumed(nominal, mean_phase_deg, *, value_range=PHASE_COEFFICIENT_RANGE,
                              span_deg=0.0):
    """Return the assumed β with its range.

    Examples
    --------
    >>> pc = phase_coefficient_assumed(0.035, 26.0)
    >>> import numpy as np
    >>> d = pc.h_offsets(np.random.default_rng(1), 200_000)
    >>> round(float(np.std(d)), 2)  # 26° x 0.04 / sqrt(12)
    0.3
    """
    lo, hi = (float(v) for v in value_range)
    if not (np.isfinite(lo) and np.isfinite(hi) and 0 <= lo <= hi):
        msg = f"the phase-coefficient range must be 0 <= lo <= hi, got {value_range!r}"
        raise ValueError(msg)
    return PhaseCoefficient(nominal=float(nominal), lo=lo, hi=hi,
                            mean_phase_deg=float(mean_phase_deg), span_deg=float(span_deg))


def fit_phase_coefficient(mag_unit_distance, mag_err, phase_deg, nights, *, nominal,
                          value_range=PHASE_COEFFICIENT_RANGE, min_span_deg=5.0,
                          max_error=None):
    """Fit β from nightly mean magnitudes when the phase span allows, else assume its range.

    Parameters
    ----------
    mag_unit_distance : ndarray
        Magnitudes reduced to r_h = Δ = 1 AU only (no phase correction).
    mag_err : ndarray
        Their errors.
    phase_deg : ndarray
        Phase angle of each point.
    nights : ndarray
        Night label of each point (rotation averages out within a night's mean only partly,
        so the fit uses the scatter of the nightly means about the line).
    nominal : float
        β the magnitudes were reduced with.
    value_range : (float, float), optional
        Range to draw when the fit is not used.
    min_span_deg : float, optional
        Least phase span (and at least 4 nights) for a fit.
    max_error : float, optional
        The fit is used only when its error is below this; default a quarter of the range's
        width (the fit then narrows the assumption).

    Returns
    -------
    PhaseCoefficient

    Notes
    -----
    Straight line ``m̄_night = H + β ᾱ_night`` by least squares with equal weights; the error of
    β comes from the residual scatter of the nightly means (which holds their rotational
    sampling), ``σ_β = s / sqrt(Σ(ᾱ - <ᾱ>)²)`` (common practice), times Student's t for the
    few degrees of freedom.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(3)
    >>> nights = np.repeat(np.arange(8), 20)
    >>> alpha = np.repeat(np.linspace(5, 25, 8), 20)
    >>> m = 16 + 0.045 * alpha + rng.normal(0, 0.03, alpha.size)
    >>> pc = fit_phase_coefficient(m, np.full(alpha.size, 0.03), alpha, nights, nominal=0.035)
    >>> pc.fitted, bool(abs(pc.value - 0.045) < 3 * pc.error)
    (True, True)
    """
    m = np.asarray(mag_unit_distance, dtype=float)
    alpha = np.asarray(phase_deg, dtype=float)
    labels = np.asarray(nights)
    names = np.unique(labels)
    mean_alpha = float(np.mean(alpha))
    span = float(np.ptp(alpha)) if alpha.size else 0.0
    assumed = phase_coefficient_assumed(nominal, mean_alpha, value_range=value_range,
                                        span_deg=span)
    if span < min_span_deg or names.size < 4:
        return assumed
    a = np.array([alpha[labels == k].mean() for k in names])
    y = np.array([m[labels == k].mean() for k in names])
    design = np.column_stack([np.ones(a.size), a])
    coef, *_ = np.linalg.lstsq(design, y, rcond=None)
    resid = y - design @ coef
    dof = a.size - 2
    s = np.sqrt(np.sum(resid**2) / dof) if dof > 0 else np.inf
    # Student's t for the few nights behind s, so the 1-σ error keeps its 68 % coverage
    err = float(s / np.sqrt(np.sum((a - a.mean()) ** 2)) * stats.t.ppf(0.8413, max(dof, 1)))
    limit = 0.25 * (assumed.hi - assumed.lo) if max_error is None else max_error
    if not (np.isfinite(err) and err < limit):
        return assumed
    return PhaseCoefficient(nominal=float(nominal), lo=assumed.lo, hi=assumed.hi,
                            mean_phase_deg=mean_alpha, fitted=True, value=float(coef[1]),
                            error=err, span_deg=span,
                            source="fitted from the campaign's nightly mean magnitudes")
