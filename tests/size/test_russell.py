import numpy as np
import pytest
from astropy import units as u

from photpipe.size import RUSSELL_CONSTANT, diameter_from_H, radius_russell
from photpipe.size.magnitude import reduce_magnitude


def test_constant_is_au_squared():
    # (1 AU)^2 with 1 AU = 149597870.7 km exactly (IAU 2012 Resolution B2): 2.238e16 km^2 for r
    # in km, i.e. the often quoted 2.24e22 when r is in metres (Russell 1916; Jewitt 1991)
    assert RUSSELL_CONSTANT.to_value(u.km**2) == pytest.approx(149597870.7**2, rel=1e-14)
    assert RUSSELL_CONSTANT.to_value(u.m**2) == pytest.approx(2.24e22, rel=2e-3)


@pytest.mark.parametrize("r_h, delta, alpha, band", [
    pytest.param(1.0, 1.0, 0.0, "V", id="unit-geometry"),
    pytest.param(2.3, 1.6, 21.0, "R", id="typical"),
    pytest.param(5.1, 4.4, 9.5, "V", id="distant"),
])
def test_consistent_with_H_relation(r_h, delta, alpha, band):
    # the Russell equation at any geometry gives half of D(H, p) for the H its magnitude reduces
    # to (Pravec & Harris 2007, Appendix A derive 1329 km from the same reflection law)
    H, p, beta = 15.7, 0.04, 0.035
    m = H + 5 * np.log10(r_h * delta) + beta * alpha
    r = radius_russell(m, r_h * u.au, delta * u.au, alpha * u.deg, albedo=p, band=band,
                       phase_coefficient=beta * u.mag / u.deg)
    assert r.to_value(u.km) == pytest.approx(
        0.5 * diameter_from_H(H, p, band=band).to_value(u.km), rel=1e-12)
    h_back = reduce_magnitude(m, r_h * u.au, delta * u.au, alpha * u.deg,
                              phase_coefficient=beta * u.mag / u.deg)
    assert h_back.to_value(u.mag) == pytest.approx(H, abs=1e-12)


def test_against_direct_flux_ratio():
    # reflected over incident flux ratio of a Lambert-like sphere: F/F_sun = p Φ r^2 / (r_h Δ)^2
    # with r_h in AU (flux at 1 AU is m_sun) and r, Δ in the same length unit (Russell 1916)
    r_km, p, rh, dl, alpha, beta, m_sun = 3.0, 0.05, 1.7, 0.9, 30.0, 0.04, -26.76
    phi = 10 ** (-0.4 * beta * alpha)
    ratio = p * phi * r_km**2 / (rh**2 * (dl * 149597870.7) ** 2)
    m = m_sun - 2.5 * np.log10(ratio)
    r = radius_russell(m, rh * u.au, dl * u.au, alpha * u.deg, albedo=p, m_sun=m_sun,
                       phase_coefficient=beta * u.mag / u.deg)
    assert r.to_value(u.km) == pytest.approx(r_km, rel=1e-12)


def test_array_of_frames():
    m = np.array([20.0, 20.5, 21.0])
    r = radius_russell(m, [1.5, 1.5, 1.5] * u.au, [0.7, 0.7, 0.7] * u.au, [40, 40, 40] * u.deg,
                       albedo=0.04)
    # one magnitude fainter per factor 10^(-0.2) in radius: exact from the equation
    assert np.allclose(r[1:] / r[:-1], 10 ** (-0.1))


def test_bad_geometry():
    with pytest.raises(ValueError, match="'r_h' must be finite and positive"):
        radius_russell(20.0, -1 * u.au, 1 * u.au, 0 * u.deg, albedo=0.04)
    with pytest.raises(TypeError, match="'delta' must be an astropy Quantity"):
        radius_russell(20.0, 1 * u.au, 1.0, 0 * u.deg, albedo=0.04)
    with pytest.raises(ValueError, match="'albedo' must be a geometric albedo"):
        radius_russell(20.0, 1 * u.au, 1 * u.au, 0 * u.deg, albedo=0)
