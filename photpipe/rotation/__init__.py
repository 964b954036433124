"""photpipe.rotation: reduced lightcurve and rotation-period search.

Lightcurve reduction to unit distances and 0° phase (linear law or IAU H,G), three periodograms
side by side (generalised Lomb-Scargle, Fourier series, phase dispersion minimisation), the
single/double-peak choice, period and amplitude errors, aliases, and the minimum axial ratio.
"""

from photpipe.rotation.aliases import (
    describe_relation,
    periodogram_peaks,
    spectral_window,
    window_peaks,
)
from photpipe.rotation.errors import LightcurveError, RotationWarning
from photpipe.rotation.figures import periodogram_figure, phased_figure, residuals_figure
from photpipe.rotation.fit import (
    FourierFit,
    bootstrap_fourier_fit,
    expanded_percentile_interval,
    fit_fourier_series,
    night_blocks,
)
from photpipe.rotation.fourier_model import (
    design_and_derivative,
    design_matrix,
    fourier_series,
    frequency_derivative,
    model_extrema,
    peak_to_peak,
)
from photpipe.rotation.grid import FrequencyGrid, frequency_grid
from photpipe.rotation.harmonic_sums import harmonic_chi2
from photpipe.rotation.lightcurve import SOURCES, ReducedLightcurve, reduce_lightcurve
from photpipe.rotation.methods import (
    METHODS,
    fourier_periodogram,
    lomb_scargle_periodogram,
    pdm_periodogram,
    pdm_theta,
)
from photpipe.rotation.odd_harmonics import (
    odd_harmonics_f_test,
    repeat_f_test,
    zero_points_f_test,
)
from photpipe.rotation.periodogram import Periodogram, fap_from_power, fap_from_theta
from photpipe.rotation.phase_laws import (
    PHASE_LAWS,
    hg_phase_excess,
    hg_phase_functions,
    linear_phase_excess,
)
from photpipe.rotation.result import STATUSES, RotationResult
from photpipe.rotation.search import MethodOptions, count_nights, search_rotation
from photpipe.rotation.shape import (
    amplitude_at_zero_phase,
    minimum_axial_ratio,
    undilute_amplitude,
)
from photpipe.rotation.synthetic import DEMO_SITES, SyntheticRotation, synthetic_lightcurve
from photpipe.rotation.trigsums import direct_trig_sums, trig_sums
from photpipe.rotation.verdict import PeriodVerdict, VerdictOptions, judge_period

__all__ = [
    "reduce_lightcurve", "ReducedLightcurve", "SOURCES",
    "search_rotation", "RotationResult", "count_nights", "MethodOptions", "STATUSES",
    "judge_period", "PeriodVerdict", "VerdictOptions", "repeat_f_test",
    "LightcurveError", "RotationWarning",
    "METHODS", "lomb_scargle_periodogram", "fourier_periodogram", "pdm_periodogram",
    "pdm_theta", "Periodogram", "fap_from_power", "fap_from_theta",
    "FrequencyGrid", "frequency_grid", "harmonic_chi2", "trig_sums", "direct_trig_sums",
    "spectral_window", "window_peaks", "describe_relation", "periodogram_peaks",
    "FourierFit", "fit_fourier_series", "bootstrap_fourier_fit", "night_blocks",
    "expanded_percentile_interval", "odd_harmonics_f_test", "zero_points_f_test",
    "design_matrix", "design_and_derivative", "fourier_series", "frequency_derivative",
    "model_extrema", "peak_to_peak",
    "PHASE_LAWS", "linear_phase_excess", "hg_phase_excess", "hg_phase_functions",
    "amplitude_at_zero_phase", "minimum_axial_ratio", "undilute_amplitude",
    "synthetic_lightcurve", "SyntheticRotation", "DEMO_SITES",
    "periodogram_figure", "phased_figure", "residuals_figure",
]
