import numpy as np
import pytest

from photpipe.activity.powerlaw import brightening_mag, log_afrho_power_law


@pytest.mark.parametrize(
    ("r_h", "log_norm", "k", "expected"),
    [
        # Afρ ∝ r_h^k (A'Hearn et al. 1995, Icarus 118, 223): halving r_h with k = -2 gives 4x.
        pytest.param(2.0, 3.0, -2.0, 3.0 - 2.0 * np.log10(2.0), id="k-2-at-2au"),
        # At r_h = 1 au the power law equals its normalisation whatever k is (same source).
        pytest.param(1.0, 2.5, -4.7, 2.5, id="normalisation-at-1au"),
        pytest.param(0.5, 2.0, 3.0, 2.0 + 3.0 * np.log10(0.5), id="positive-k"),
    ],
)
def test_log_power_law_values(r_h, log_norm, k, expected):
    assert log_afrho_power_law(np.log10(r_h), log_norm, k) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    ("ratio", "expected"),
    [
        # Pogson's scale: a factor 100 in flux is exactly 5 magnitudes (Pogson 1856, MNRAS 17, 12).
        pytest.param(100.0, -5.0, id="factor-100"),
        pytest.param(1.0, 0.0, id="no-change"),
        pytest.param(0.01, 5.0, id="fainter"),
    ],
)
def test_brightening_mag_pogson(ratio, expected):
    assert brightening_mag(ratio * 250.0, 250.0) == pytest.approx(expected, abs=1e-12)


def test_brightening_mag_array():
    out = brightening_mag(np.array([10.0, 1.0]), np.array([1.0, 1.0]))
    # -2.5 log10(10) = -2.5 exactly (Pogson 1856 definition of the magnitude scale).
    np.testing.assert_allclose(out, [-2.5, 0.0], atol=1e-12)
