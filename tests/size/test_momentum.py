import pytest
from astropy import units as u

from photpipe.size import compare_with_bound, momentum_mass_bound, radius_from_H, radius_from_mass

G_CM3 = u.g / u.cm**3
Q, V = 150 * u.kg / u.s, 440 * u.m / u.s


def test_issue_example():
    # Issue 7 (common practice, no source): Q = 150 kg/s, v = 440 m/s, a = 15 m/day^2 give
    # M >= about 3.3e13 kg; by hand 150 × 440 / (15 / 86400^2) = 3.2846e13 kg
    m = momentum_mass_bound(Q, V, 15 * u.m / u.day**2)
    assert m.to_value(u.kg) == pytest.approx(150 * 440 / (15 / 86400**2), rel=1e-12)
    assert m.to_value(u.kg) == pytest.approx(3.3e13, rel=0.01)
    # ... and at 0.5 g/cm^3 a diameter of about 5 km (issue 7, common practice)
    d = 2 * radius_from_mass(m, 0.5 * G_CM3)
    assert d.to_value(u.km) == pytest.approx(5.0, rel=0.01)


@pytest.mark.parametrize("a", [
    pytest.param(15 * u.m / u.day**2, id="m/day2"),
    pytest.param(15 / 86400**2 * u.m / u.s**2, id="m/s2"),
    pytest.param(15 / 149597870700 * u.au / u.day**2, id="AU/day2"),  # IAU 2012 B2 au in m
])
def test_acceleration_units(a):
    assert momentum_mass_bound(Q, V, a).to_value(u.kg) == pytest.approx(3.28458e13, rel=1e-5)


def test_efficiency_scales_linearly():
    full = momentum_mass_bound(Q, V, 15 * u.m / u.day**2)
    half = momentum_mass_bound(Q, V, 15 * u.m / u.day**2, efficiency=0.5)
    assert half.to_value(u.kg) == pytest.approx(0.5 * full.to_value(u.kg), rel=1e-15)


@pytest.mark.parametrize("args, match", [
    pytest.param((Q, V, 0 * u.m / u.day**2), "'a_limit' must be finite and positive", id="a0"),
    pytest.param((Q, V, -1 * u.m / u.s**2), "'a_limit' must be finite and positive", id="a-"),
    pytest.param((Q, V, 1 * u.m / u.s), "'a_limit' must have units convertible", id="a-unit"),
    pytest.param((-Q, V, 1 * u.m / u.s**2), "'Q' must be finite and positive", id="Q-"),
    pytest.param((Q, 0 * V, 1 * u.m / u.s**2), "'v' must be finite and positive", id="v0"),
])
def test_bad_input(args, match):
    with pytest.raises(ValueError, match=match):
        momentum_mass_bound(*args)


def test_bad_efficiency():
    with pytest.raises(ValueError, match="'efficiency' must be in"):
        momentum_mass_bound(Q, V, 15 * u.m / u.day**2, efficiency=1.5)


def test_comparison_consistent():
    m = momentum_mass_bound(Q, V, 15 * u.m / u.day**2)
    c = compare_with_bound(3.0 * u.km, m, albedo=0.04, density_range=[0.3, 1.0] * G_CM3)
    assert c.consistent
    # the photometric radius needs ρ >= M / V (exact)
    assert c.density_min.to_value(u.kg / u.m**3) == pytest.approx(
        m.to_value(u.kg) / (4 / 3 * 3.14159265358979 * 3000.0**3), rel=1e-12)
    assert "meets the momentum bound" in c.statement()


def test_comparison_inconsistent_implies_albedo_bound():
    m = momentum_mass_bound(Q, V, 1 * u.m / u.day**2)  # a tight limit: a heavy nucleus
    H = 16.0
    r_phot = radius_from_H(H, 0.04, band="R")
    c = compare_with_bound(r_phot, m, albedo=0.04, density_range=[0.3, 1.0] * G_CM3)
    assert not c.consistent
    # at albedo_max the photometric radius (Pravec & Harris 2007 relation) reaches the bound
    # radius at the highest density: closes the loop through diameter_from_H
    assert radius_from_H(H, c.albedo_max, band="R").value == pytest.approx(
        c.radius_bound.to_value(u.km), rel=1e-12)
    assert "either the density" in c.statement()
    assert c.to_dict()["bound_consistent"] is False
