import numpy as np
import pytest

from photpipe.orbit import nongrav_acceleration
from photpipe.orbit.limits import acceleration_verdict
from photpipe.orbit.nongrav import WATER_CONSTANTS, inverse_square_g, water_g


def test_water_law_is_normalised_at_one_au():
    # Marsden, Sekanina & Yeomans (1973, AJ 78, 211, Eq. 2): α = 0.111262 makes g(1 AU) = 1
    # to the five digits it is given with.
    assert water_g(1.0) == pytest.approx(1.0, abs=5e-6)
    c = WATER_CONSTANTS
    assert (c["alpha"], c["r0"], c["m"], c["n"], c["k"]) == (0.111262, 2.808, 2.15, 5.093,
                                                              4.6142)


def test_water_law_falls_steeply_beyond_the_scale_distance():
    # Beyond r0 = 2.808 AU the law falls as r^-(m + n k) = r^-25.65 (same Eq. 2, its limit)
    r = np.array([8.0, 16.0])
    slope = np.log(water_g(r[1]) / water_g(r[0])) / np.log(2.0)
    assert slope == pytest.approx(-(2.15 + 5.093 * 4.6142), rel=0.01)
    assert inverse_square_g(3.0) == pytest.approx(1.0 / 9.0)


def test_transverse_points_along_the_motion_and_normal_along_the_angular_momentum():
    # Marsden et al. (1973), Eq. 1: r̂, t̂ = n̂ × r̂, n̂ ∥ r × v
    r = np.array([0.0, 2.0, 0.0])
    v = np.array([-0.01, 0.0, 0.001])
    _, basis = nongrav_acceleration(r, v, (1.0, 0.0, 0.0))
    g = water_g(2.0)
    np.testing.assert_allclose(basis[0], [0, g, 0], atol=1e-15)
    assert basis[1] @ v > 0
    np.testing.assert_allclose(np.cross(r, v) @ basis[2],
                               np.linalg.norm(np.cross(r, v)) * g, rtol=1e-12)


def test_limit_for_zero_mean_is_the_chi_quantile():
    # For Â = 0 and Γ = σ² I in k = 3 dimensions the 95 % quantile of |A| is σ √χ²₃(0.95)
    # = 2.7955 σ (chi-square table, e.g. Abramowitz & Stegun 1964, Table 26.8: 7.8147).
    v = acceleration_verdict(np.zeros(3), np.eye(3) * 1e-18, 0.0, g_at_reference=1.0)
    assert v["limit_au_d2"] == pytest.approx(np.sqrt(7.8147) * 1e-9, rel=0.02)
    assert not v["detected"]
