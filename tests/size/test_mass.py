import re

import numpy as np
import pytest
from astropy import units as u

from photpipe.size import DEFAULT_DENSITY_RANGE, mass_range, radius_from_mass, sphere_mass

G_CM3 = u.g / u.cm**3


def test_sphere_mass_exact():
    # 4/3 π (1000 m)^3 × 1000 kg/m^3 (exact)
    assert sphere_mass(1 * u.km, 1 * G_CM3).to_value(u.kg) == pytest.approx(
        4 / 3 * np.pi * 1e12, rel=1e-14)


def test_default_density_range():
    # 0.3-1.0 g/cm^3 (Groussin et al. 2019, Space Sci. Rev. 215, 29; from memory)
    assert DEFAULT_DENSITY_RANGE.to_value(G_CM3) == pytest.approx([0.3, 1.0])


def test_mass_range_over_radius_interval_and_densities():
    m = mass_range([2.0, 3.0] * u.km, [0.3, 1.0] * G_CM3)
    assert m.lo.to_value(u.kg) == pytest.approx(4 / 3 * np.pi * 2000.0**3 * 300.0, rel=1e-14)
    assert m.hi.to_value(u.kg) == pytest.approx(4 / 3 * np.pi * 3000.0**3 * 1000.0, rel=1e-14)
    d = m.to_dict()
    assert d["radius_lo_km"] == 2.0 and d["density_hi_g_cm3"] == pytest.approx(1.0)


def test_67p_mass_and_density_give_its_size():
    # 67P: M = 9.982e12 kg, ρ = 533 kg/m^3 (Pätzold et al. 2016, Nature 530, 63; from memory);
    # its volume 18.7 km^3 (Jorda et al. 2016, Icarus 277, 257; from memory) -> R = 1.65 km
    r = radius_from_mass(9.982e12 * u.kg, 533 * u.kg / u.m**3)
    assert r.to_value(u.km) == pytest.approx((3 * 18.7 / (4 * np.pi)) ** (1 / 3), rel=5e-3)


def test_round_trip():
    r = radius_from_mass(sphere_mass(2.7 * u.km, 0.45 * G_CM3), 0.45 * G_CM3)
    assert r.to_value(u.km) == pytest.approx(2.7, rel=1e-13)


@pytest.mark.parametrize("density, match", [
    pytest.param([0.0, 1.0] * G_CM3, "'density_range' must be one positive value", id="zero"),
    pytest.param([-0.3, 1.0] * G_CM3, "'density_range' must be one positive value", id="neg"),
    pytest.param([1.0, 0.3] * G_CM3, "'density_range' must be (lo, hi) with lo <= hi", id="rev"),
])
def test_bad_density(density, match):
    with pytest.raises(ValueError, match=re.escape(match)):
        mass_range(2 * u.km, density)


def test_bad_units_and_values():
    with pytest.raises(ValueError, match="'density' must be finite and positive"):
        radius_from_mass(1e13 * u.kg, 0 * G_CM3)
    with pytest.raises(ValueError, match="'radius' must have units convertible to m"):
        mass_range(2 * u.kg)
    with pytest.raises(TypeError, match="'mass' must be an astropy Quantity"):
        radius_from_mass(1e13, 0.5 * G_CM3)
