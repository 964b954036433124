import numpy as np
import pytest

from photpipe.rotation.phase_laws import (
    PHASE_LAWS,
    hg_phase_excess,
    hg_phase_functions,
    linear_phase_excess,
)


def test_linear_law_is_beta_alpha():
    # m(α) = m(0) + β α (definition of the linear phase law; common practice)
    assert linear_phase_excess(12.0, coefficient_mag_per_deg=0.04) == pytest.approx(0.48,
                                                                                     rel=1e-12)


def test_hg_basis_functions_are_one_at_opposition():
    # Φ1(0) = Φ2(0) = 1 (Bowell et al. 1989, Asteroids II, Appendix, eqs. A4-A5)
    phi1, phi2 = hg_phase_functions(0.0)
    assert phi1 == pytest.approx(1.0, abs=1e-12)
    assert phi2 == pytest.approx(1.0, abs=1e-12)


@pytest.mark.parametrize("alpha, g, expected", [
    # Worked by hand from Bowell et al. (1989), Asteroids II, Appendix, eqs. (A1), (A4)-(A5),
    # constants A = (3.332, 1.862), B = (0.631, 1.218) (from memory). At α = 60° the weight
    # W = exp(-90.56 tan²30°) = 7.6e-14, so Φi = exp(-Ai tan^Bi 30°):
    #   tan 30° = 0.577350; tan^0.631 = 0.707079, Φ1 = exp(-3.332 * 0.707079) = 0.094800
    #   tan^1.218 = 0.512192, Φ2 = exp(-1.862 * 0.512192) = 0.385312
    #   G = 0.15: 0.85 * 0.094800 + 0.15 * 0.385312 = 0.138377, -2.5 log10 = 2.1473 mag
    pytest.param(60.0, 0.15, 2.1473, id="alpha60-G0.15"),
    #   G = 0.40: 0.60 * 0.094800 + 0.40 * 0.385312 = 0.211005, -2.5 log10 = 1.6893 mag
    pytest.param(60.0, 0.40, 1.6893, id="alpha60-G0.40"),
])
def test_hg_worked_example(alpha, g, expected):
    assert hg_phase_excess(alpha, slope_g=g) == pytest.approx(expected, abs=2e-4)


def test_hg_smooth_term_matters_near_opposition():
    # Near opposition W ~ 1 and Φi ≈ 1 - Ci sin α / (0.119 + 1.341 sin α - 0.754 sin² α)
    # (Bowell et al. 1989 eq. A4, C1 = 0.986, C2 = 0.238, from memory); at α = 0.5°:
    # sin α = 0.0087265, denominator 0.130645, Φ1S = 0.934139, Φ2S = 0.984103, W = 0.99828
    phi1, phi2 = hg_phase_functions(0.5)
    assert phi1 == pytest.approx(0.99828 * 0.934139 + 0.00172 * np.exp(-3.332 * np.tan(
        np.radians(0.25)) ** 0.631), abs=2e-4)
    assert phi2 == pytest.approx(0.99828 * 0.984103 + 0.00172 * np.exp(-1.862 * np.tan(
        np.radians(0.25)) ** 1.218), abs=2e-4)


def test_hg_is_monotonic_and_table_complete():
    alpha = np.linspace(0, 120, 241)
    excess = hg_phase_excess(alpha)
    assert np.all(np.diff(excess) > 0)
    assert set(PHASE_LAWS) == {"linear", "hg"}
