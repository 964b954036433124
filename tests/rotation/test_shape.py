import numpy as np
import pytest

from photpipe.rotation.shape import (
    amplitude_at_zero_phase,
    minimum_axial_ratio,
    undilute_amplitude,
)


def test_zappala_correction():
    # Zappalà et al. (1990, A&A 231, 548): A(0) = A(α)/(1 + m α); 0.6 mag at 25° with
    # m = 0.030 (S types, from memory) -> 0.6 / 1.75 = 0.342857
    assert amplitude_at_zero_phase(0.6, 25.0, slope_per_deg=0.030) == pytest.approx(
        0.342857, abs=1e-6)


def test_axial_ratio_bound():
    # a/b >= 10^(0.4 A): A = 0.75 mag -> 10^0.3 = 1.995262 (Binzel et al. 1989; from memory)
    assert minimum_axial_ratio(0.75) == pytest.approx(1.995262, abs=1e-6)


def test_coma_dilution_flux_additivity():
    # nucleus flux 1 ± 0.25 plus a constant coma of 1: observed 2.25/1.75, nucleus 1.25/0.75
    # (flux additivity, common practice) -> A_n = 2.5 log10(5/3) = 0.554622
    phase = np.arange(4000) / 4000
    nucleus = 1 + 0.25 * np.cos(2 * np.pi * phase)
    total = nucleus + 1.0
    model_mag = -2.5 * np.log10(total)
    assert undilute_amplitude(model_mag, 0.5) == pytest.approx(0.554622, abs=1e-5)


def test_coma_fraction_too_large():
    m = -2.5 * np.log10(1 + 0.5 * np.cos(np.linspace(0, 2 * np.pi, 100)))
    with pytest.raises(ValueError, match="leaves no nucleus flux"):
        undilute_amplitude(m, 0.6)
