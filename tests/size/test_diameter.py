import re

import numpy as np
import pytest
from astropy import units as u

from photpipe.photometry.solar import solar_magnitude
from photpipe.size import diameter_from_H, radius_from_H, size_constant

AU_KM = 149597870.7  # IAU 2012 Resolution B2: the astronomical unit, exact, in km


@pytest.mark.parametrize("H, p, expected_km", [
    # Pravec & Harris 2007 (Icarus 190, 250) relation D = 1329 km / sqrt(p) 10^(-H/5), values
    # as quoted in issue 7: H = 15, p = 0.25 -> about 2.66 km; H = 15, p = 0.04 -> about 6.64 km
    pytest.param(15.0, 0.25, 2.66, id="H15-p0.25"),
    pytest.param(15.0, 0.04, 6.64, id="H15-p0.04"),
])
def test_published_relation(H, p, expected_km):
    # with the constant of Pravec & Harris (m_sun(V) = -26.762, their Appendix A)
    d = diameter_from_H(H, p, m_sun=-26.762)
    assert d.to_value(u.km) == pytest.approx(expected_km, rel=2e-3)
    # with the project's V magnitude of the Sun (Willmer 2018: -26.76) the same within 0.2%
    assert diameter_from_H(H, p, band="V").to_value(u.km) == pytest.approx(expected_km, rel=2e-3)


def test_constant_1329_from_solar_v_magnitude():
    # Pravec & Harris 2007, Appendix A: C = 2 AU 10^(V_sun/5) = 1329 km with V_sun = -26.762
    assert size_constant(m_sun=-26.762).to_value(u.km) == pytest.approx(1329.0, abs=0.5)


@pytest.mark.parametrize("band", ["V", "R", "B", "I", "r", "g"])
def test_constant_rederived_from_band_solar_magnitude(band):
    # C = 2 AU 10^(m_sun/5) (Pravec & Harris 2007, Appendix A), m_sun from the project's table
    # (Willmer 2018, Table 3), AU from IAU 2012 B2
    try:
        m_sun = solar_magnitude(band).to_value(u.mag)
    except ValueError:
        m_sun = solar_magnitude(band, system="AB").to_value(u.mag)
    expected = 2 * AU_KM * 10 ** (m_sun / 5)
    assert size_constant(band=band).to_value(u.km) == pytest.approx(expected, rel=1e-12)


def test_band_changes_size_by_solar_colour():
    # D_R / D_V at the same H and p = 10^((m_sun,R - m_sun,V)/5), from the constant's form
    ratio = (diameter_from_H(15, 0.04, band="R") / diameter_from_H(15, 0.04, band="V")).value
    assert ratio == pytest.approx(10 ** ((-27.15 + 26.76) / 5), rel=1e-12)


def test_scaling_in_albedo_and_H():
    # D ∝ p^(-1/2) 10^(-H/5): exact consequences of the relation
    d = diameter_from_H([15.0, 20.0], [0.04, 0.16], band="V").to_value(u.km)
    assert d[0] / d[1] == pytest.approx(10 ** (5 / 5) * 2.0, rel=1e-12)


def test_radius_is_half_diameter_and_quantity_H_accepted():
    r = radius_from_H(15.0 * u.mag, 0.04, band="V")
    assert r == 0.5 * diameter_from_H(15.0, 0.04, band="V")


@pytest.mark.parametrize("albedo", [
    pytest.param(0.0, id="zero"), pytest.param(-0.04, id="negative"),
    pytest.param(1.5, id="above-one"), pytest.param(np.nan, id="nan"),
])
def test_bad_albedo(albedo):
    match = re.escape("'albedo' must be a geometric albedo in (0, 1]")
    with pytest.raises(ValueError, match=match):
        diameter_from_H(15.0, albedo)


def test_unknown_band_and_bad_H():
    with pytest.raises(ValueError, match="no solar magnitude known for band 'Q7'"):
        diameter_from_H(15.0, 0.04, band="Q7")
    assert diameter_from_H(15.0, 0.04, band="Q7", m_sun=-26.762).to_value(u.km) == \
        pytest.approx(6.645, rel=1e-3)
    with pytest.raises(ValueError, match="'H' must be finite"):
        diameter_from_H(np.nan, 0.04)
    with pytest.raises(ValueError, match="'H' must have units convertible to mag"):
        diameter_from_H(15.0 * u.m, 0.04)
